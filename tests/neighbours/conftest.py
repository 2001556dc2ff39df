"""Fixtures of the neighbour-engine tests (curate/neighbours): every backend is compared
with scipy's cdist on data full of exact ties (neighbour_fixtures.py)."""
