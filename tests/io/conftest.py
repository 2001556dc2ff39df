"""Fixtures of the file tests (curate/io): review CSVs, protected ids, run diffs.

Runs over scikit-learn's bundled wine set are made by review_runs.py.
"""
