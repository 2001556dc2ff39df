"""The method library: one table of every method curate can run, by pipeline key.

A method lives in the module of its family (:mod:`.duplicates`, :mod:`.editing`
and :mod:`.cleaning`, :mod:`.condensing` and :mod:`.one_sided`, :mod:`.hybrid`,
:mod:`.scores`, :mod:`.noise`); what families share is in :mod:`.base` and in the
private helper modules (``_votes``, ``_neighbourhood``, ``_store``; the label-noise
family's ``_members``, ``_oof``, ``_confident``, ``_flags``), never in another
family. Adding a method means declaring it in its family module and listing its
declaration in the :func:`register` call below.

Regression tables have their own table, :data:`REGRESSION_METHODS`: keys shared
with classification (``exact-duplicates``, ``conflicting-duplicates``,
``hardness``, ``committee``) name the regression form of the same job there; ``reg-enn``,
``reg-cnn`` and ``discretized`` exist for regression only. :func:`method_for`
picks a stage's method by task and names the alternatives when there is none.

Examples
--------
>>> {'enn', 'renn', 'all-knn', 'tomek-links', 'ncr'} <= set(METHODS)
True
>>> sorted(REGRESSION_METHODS)
['committee', 'conflicting-duplicates', 'discretized', 'exact-duplicates', 'hardness', 'reg-cnn', \
'reg-enn']
"""

from __future__ import annotations

from curate.errors import UsageError
from curate.methods.base import MethodInfo, Selection
from curate.methods.cleaning import NCR, TOMEK_LINKS
from curate.methods.condensing import CNN, FCNN, RNN
from curate.methods.discretized import make_discretized
from curate.methods.duplicates import CONFLICTING, EXACT, NEAR
from curate.methods.editing import ALL_KNN, ENN, RENN
from curate.methods.hybrid import DROP3, ICF
from curate.methods.noise import CLASS_THRESHOLDS, COMMITTEE, IPF
from curate.methods.one_sided import OSS
from curate.methods.reg_duplicates import REG_CONFLICTING
from curate.methods.reg_noise import REG_COMMITTEE
from curate.methods.regression import REG_CNN, REG_ENN, REG_HARDNESS
from curate.methods.scores import HARDNESS
from curate.settings import FAULT_KINDS

__all__ = ["METHODS", "REGRESSION_METHODS", "MethodInfo", "Selection", "method_for", "register"]


def register(*infos: MethodInfo) -> dict[str, MethodInfo]:
    """Check method declarations and return them as a table by key.

    Each key must be new, each parameter's default allowed (or None where the
    parameter has no default), and each method must name the reasons it may give.

    Examples
    --------
    >>> sorted(register(ENN, RENN))
    ['enn', 'renn']
    >>> register(ENN, ENN)
    Traceback (most recent call last):
    ...
    ValueError: method key 'enn' is declared twice
    """
    table: dict[str, MethodInfo] = {}
    for info in infos:
        if info.key in table:
            raise ValueError(f"method key {info.key!r} is declared twice")
        if not info.reasons:
            raise ValueError(f"method {info.key!r} declares no reason codes")
        unknown = sorted(set(info.catches) - set(FAULT_KINDS))
        if unknown:
            raise ValueError(f"method {info.key!r} is meant to catch unknown fault kinds {unknown}")
        for param in info.params:
            if param.default is not None and param.problem(param.default) is not None:
                raise ValueError(f"method {info.key!r}: the default of {param.name!r} is not "
                                 f"allowed: {param.problem(param.default)}")
        table[info.key] = info
    return table


# Built once at import and never changed by curate (tests may add a method for a test).
METHODS: dict[str, MethodInfo] = register(
    EXACT, CONFLICTING, ENN, RENN, ALL_KNN, TOMEK_LINKS, NCR, DROP3, ICF, NEAR, HARDNESS,
    CNN, FCNN, RNN, OSS, COMMITTEE, IPF, CLASS_THRESHOLDS)

# The classification methods that can run on target bins (they compare classes).
_ON_BINS = {key: info for key, info in METHODS.items() if info.compares_classes}
REGRESSION_METHODS: dict[str, MethodInfo] = register(
    EXACT, REG_CONFLICTING, REG_ENN, REG_CNN, make_discretized(_ON_BINS), REG_HARDNESS,
    REG_COMMITTEE)
_INSTEAD = {"editing": "reg-enn", "condensing": "reg-cnn", "label noise": "committee"}


def _regression_alternatives(key: str) -> str:
    info = METHODS[key]
    offers = [f"method = \"{_INSTEAD[info.family]}\""] if info.family in _INSTEAD else []
    if key in _ON_BINS:
        offers.append(f"method = \"discretized\" with method = \"{key}\" inside it (the target "
                      "cut into bins)")
    lead = f"use {' or '.join(offers)}; " if offers else ""
    return (f"{lead}the methods for regression are: {', '.join(sorted(REGRESSION_METHODS))}; or "
            "set [input] task = \"classification\" if the target holds classes")


def method_for(key: str, task: str, where: str = "") -> MethodInfo:
    """The method a stage runs for ``task`` ("classification" or "regression").

    A method of the other task only is a UsageError (exit code 2) that names
    the methods doing its job for this task.

    Examples
    --------
    >>> method_for("hardness", "regression").name.startswith("instance hardness for regression")
    True
    >>> method_for("enn", "regression", "stage 'mislabels'")
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: stage 'mislabels': method 'enn' compares classes, and this table's \
target is a number (regression)
      hint: use method = "reg-enn" or method = "discretized" with method = "enn" inside it (the \
target cut into bins); the methods for regression are: committee, conflicting-duplicates, \
discretized, exact-duplicates, hardness, reg-cnn, reg-enn; or set [input] task = "classification" if the \
target holds classes
    """
    prefix = f"{where}: " if where else ""
    table = REGRESSION_METHODS if task == "regression" else METHODS
    if key in table:
        return table[key]
    if task == "regression" and key in METHODS:
        raise UsageError(f"{prefix}method {key!r} compares classes, and this table's target is a "
                         "number (regression)", hint=_regression_alternatives(key))
    if key in REGRESSION_METHODS:
        raise UsageError(f"{prefix}method {key!r} is for a numeric target (regression), and this "
                         "table's target holds classes",
                         hint="use a classification method, or set [input] task = "
                              "\"regression\" if the target is a quantity")
    raise UsageError(f"{prefix}unknown method {key!r}",
                     hint=f"use one of: {', '.join(sorted(set(METHODS) | set(REGRESSION_METHODS)))}")
