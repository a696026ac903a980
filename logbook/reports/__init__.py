"""Acceptance reports: the data a report shows, its HTML and PDF forms, the CSV
export of its metric table, and reading a report back to verify it."""
