"""The method library: one table of every method curate can run, by pipeline key.

A method lives in the module of its family (:mod:`.duplicates`, :mod:`.editing`
and :mod:`.cleaning`, :mod:`.condensing` and :mod:`.one_sided`, :mod:`.hybrid`,
:mod:`.scores`, :mod:`.noise`); what families share is in :mod:`.base` and in the
private helper modules (``_votes``, ``_neighbourhood``, ``_store``; the label-noise
family's ``_members``, ``_oof``, ``_confident``, ``_flags``), never in another
family. Adding a method means declaring it in its family module and listing its
declaration in the :func:`register` call below.

Examples
--------
>>> {'enn', 'renn', 'all-knn', 'tomek-links', 'ncr'} <= set(METHODS)
True
"""

from __future__ import annotations

from curate.methods.base import MethodInfo, Selection
from curate.methods.cleaning import NCR, TOMEK_LINKS
from curate.methods.condensing import CNN, FCNN, RNN
from curate.methods.duplicates import CONFLICTING, EXACT, NEAR
from curate.methods.editing import ALL_KNN, ENN, RENN
from curate.methods.hybrid import DROP3, ICF
from curate.methods.noise import CLASS_THRESHOLDS, COMMITTEE, IPF
from curate.methods.one_sided import OSS
from curate.methods.scores import HARDNESS
from curate.settings import FAULT_KINDS

__all__ = ["METHODS", "MethodInfo", "Selection", "register"]


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
