"""The method library: one table of every method curate can run, by pipeline key.

Examples
--------
>>> sorted(METHODS)[:3]
['conflicting-duplicates', 'enn', 'exact-duplicates']
"""

from __future__ import annotations

from curate.methods.base import MethodInfo, Param, Selection
from curate.methods.duplicates import CONFLICTING, EXACT
from curate.methods.editing import ENN

__all__ = ["METHODS", "MethodInfo", "Param", "Selection"]

METHODS: dict[str, MethodInfo] = {info.key: info for info in (EXACT, CONFLICTING, ENN)}
