"""Running a scan: prefilter, per-project analysis, executors, the results store."""
