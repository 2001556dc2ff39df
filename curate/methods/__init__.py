"""The method library: one table of every method curate can run, by pipeline key.

Examples
--------
>>> {'enn', 'renn', 'all-knn', 'tomek-links', 'ncr'} <= set(METHODS)
True
"""

from __future__ import annotations

from curate.methods.base import MethodInfo, Param, Selection
from curate.methods.cleaning import NCR, TOMEK_LINKS
from curate.methods.condensing import CNN, FCNN, RNN
from curate.methods.duplicates import CONFLICTING, EXACT
from curate.methods.editing import ALL_KNN, ENN, RENN
from curate.methods.hybrid import DROP3, ICF
from curate.methods.near import HARDNESS, NEAR
from curate.methods.one_sided import OSS

__all__ = ["METHODS", "MethodInfo", "Param", "Selection"]

METHODS: dict[str, MethodInfo] = {info.key: info for info in (
    EXACT, CONFLICTING, ENN, RENN, ALL_KNN, TOMEK_LINKS, NCR, DROP3, ICF, NEAR, HARDNESS,
    CNN, FCNN, RNN, OSS)}
