"""Fixtures of the evaluation tests (curate/evaluation): scikit-learn's cross_val_score
and KNeighborsClassifier on the same folds are the oracle; data helpers are in
tests/evaluate_fixtures.py (shared with the command-line tests)."""
