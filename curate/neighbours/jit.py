"""Compiling curate's kernels with numba, cached where a writable cache folder exists.

numba keeps compiled kernels next to the source (``__pycache__``) or in the
user's cache folder (``~/.cache/numba``, or ``NUMBA_CACHE_DIR``). When none of
them can be written (an installed package, a read-only home folder), asking for
a cache fails at import with "no locator available", which would stop every
command that loads a kernel. Here the kernels then compile uncached, each
process compiling again, and one warning says so and how to get the cache back.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from typing import Any, TypeVar

import numba

from curate.errors import CurateWarning

__all__ = ["CACHING", "compiled"]

F = TypeVar("F", bound=Callable[..., Any])

_NO_CACHE = ("no writable cache folder for curate's compiled kernels (numba found none next to "
             "the package or in the home folder); compiling them without a cache, which makes "
             "each start slower. To cache them, set NUMBA_CACHE_DIR to a writable folder")


def _probe() -> None:
    """A kernel-sized stand-in, only ever decorated, to ask numba whether it can cache."""


def _can_cache() -> bool:
    try:
        numba.njit(cache=True)(_probe)
    except RuntimeError:  # numba: "cannot cache function ...: no locator available"
        return False
    return True


# Decided once, when the first kernel module is imported; warned about once.
CACHING = _can_cache()
if not CACHING:
    warnings.warn(_NO_CACHE, CurateWarning, stacklevel=2)


def compiled(**options: Any) -> Callable[[F], F]:
    """``numba.njit(**options)``, cached on disk when a cache folder can be written.

    Examples
    --------
    >>> @compiled(nogil=True)
    ... def twice(x):
    ...     return 2 * x
    >>> twice(21)
    42
    """

    def wrap(func: F) -> F:
        if CACHING:
            try:
                return numba.njit(cache=True, **options)(func)  # type: ignore[no-any-return]
            except RuntimeError:
                # No source file (a doctest) or a folder numba cannot write, unlike the probe's:
                # this kernel alone compiles uncached, which says nothing about the others.
                pass
        return numba.njit(**options)(func)  # type: ignore[no-any-return]

    return wrap
