"""Fixtures of the report tests (curate/report): pages are parsed with Python's
html.parser and compared with summary.json (tests/report_fixtures.py, shared with the
command-line tests)."""
