"""The methods a regression table can run, by pipeline key, and the error for the others.

Keys shared with classification (``exact-duplicates``, ``conflicting-duplicates``,
``hardness``) name the regression form of the same job here; ``reg-enn``,
``reg-cnn`` and ``discretized`` exist for regression only. A classification
method asked for on a regression table gets an error that names the
regression methods doing its job.

Examples
--------
>>> sorted(REGRESSION_METHODS)
['conflicting-duplicates', 'discretized', 'exact-duplicates', 'hardness', 'reg-cnn', 'reg-enn']
"""

from __future__ import annotations

from curate.errors import UsageError
from curate.methods import METHODS
from curate.methods.base import MethodInfo
from curate.methods.discretized import make_discretized
from curate.methods.duplicates import EXACT
from curate.methods.reg_duplicates import REG_CONFLICTING
from curate.methods.regression import REG_CNN, REG_ENN, REG_HARDNESS

__all__ = ["BIN_METHODS", "DISCRETIZED", "REGRESSION_METHODS", "REGRESSION_ONLY",
           "regression_method"]

BIN_METHODS: dict[str, MethodInfo] = {
    key: info for key, info in METHODS.items() if info.family in ("editing", "condensing", "hybrid")}
DISCRETIZED = make_discretized(BIN_METHODS)
REGRESSION_METHODS: dict[str, MethodInfo] = {info.key: info for info in (
    EXACT, REG_CONFLICTING, REG_ENN, REG_CNN, DISCRETIZED, REG_HARDNESS)}
REGRESSION_ONLY = ("reg-enn", "reg-cnn", "discretized")

_INSTEAD = {"editing": "reg-enn", "condensing": "reg-cnn"}


def _alternatives(key: str) -> str:
    info = METHODS.get(key)
    family = info.family if info is not None else ""
    offers = []
    if family in _INSTEAD:
        offers.append(f"method = \"{_INSTEAD[family]}\"")
    if key in BIN_METHODS:
        offers.append(f"method = \"discretized\" with method = \"{key}\" inside it "
                      "(the target cut into bins)")
    listed = ", ".join(sorted(REGRESSION_METHODS))
    lead = f"use {' or '.join(offers)}; " if offers else ""
    return (f"{lead}the methods for regression are: {listed}; or set [input] task = "
            "\"classification\" if the target holds classes")


def regression_method(key: str, where: str) -> MethodInfo:
    """The regression form of method ``key``, or a UsageError naming the alternatives (exit 2).

    Examples
    --------
    >>> regression_method("reg-enn", "stage 'x'").key
    'reg-enn'
    >>> regression_method("enn", "stage 'mislabels'")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: stage 'mislabels': method 'enn' compares classes, and this table's \
target is a number (regression)
      hint: use method = "reg-enn" or method = "discretized" with method = "enn" inside it (the \
target cut into bins); the methods for regression are: conflicting-duplicates, discretized, \
exact-duplicates, hardness, reg-cnn, reg-enn; or set [input] task = "classification" if the \
target holds classes
    """
    if key in REGRESSION_METHODS:
        return REGRESSION_METHODS[key]
    raise UsageError(f"{where}: method {key!r} compares classes, and this table's target is a "
                     "number (regression)", hint=_alternatives(key))
