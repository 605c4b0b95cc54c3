"""Reports built from the results store: aggregation first, then one renderer per format."""
