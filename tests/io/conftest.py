"""Fixtures of the file tests (curate/io): review CSVs, protected ids, run diffs, and the
safety of every output (test_outputs_*.py).

Runs over scikit-learn's bundled wine set are made by review_runs.py; real curate
processes for the output tests are started by output_fixtures.py.
"""
