"""The CI gate: a policy checked against a scan's results, with SARIF, JUnit and Markdown verdicts."""
