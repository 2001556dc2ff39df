"""Leakage-free evaluation of a pipeline: cross-validation that curates training folds only.

* :mod:`~curate.evaluation.crossval`: :func:`evaluate`, folds, curation per fold;
* :mod:`~curate.evaluation.models`: the kNN vote and scikit-learn classifiers it scores;
* :mod:`~curate.evaluation.stats`: paired tests, label flips, detection rates.

Nothing here prints; the command line's text is in :mod:`curate.cli.render`.
"""
