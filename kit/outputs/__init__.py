"""Hand-over stage: tidy tables, the summary, the export folder and the lot report."""
