"""Open data that scikit-learn ships inside the package (no download), each set read once.

Every test that uses iris, wine, breast cancer or digits gets it from here,
through the session fixtures of ``tests/conftest.py`` or, in helpers that are
plain functions, through :func:`load` and :func:`bunch`. The first call reads
the set from scikit-learn's files; later calls in the same process get fresh
copies of the same arrays, so no test can change another's data.
"""

from __future__ import annotations

import functools
from typing import Any

import numpy as np
from sklearn.datasets import load_breast_cancer, load_digits, load_iris, load_wine
from sklearn.utils import Bunch

LOADERS = {"iris": load_iris, "wine": load_wine, "breast_cancer": load_breast_cancer,
           "digits": load_digits}


@functools.cache
def _read(name: str) -> Any:
    return LOADERS[name]()


def load(name: str) -> tuple[np.ndarray, np.ndarray]:
    """``(X, y)`` of a bundled set, as ``load_<name>(return_X_y=True)`` gives them (copies)."""
    data = _read(name)
    return data.data.copy(), data.target.copy()


def bunch(name: str) -> Bunch:
    """The bundled set with its feature names, as ``load_<name>()`` gives it (copies)."""
    data = _read(name)
    return Bunch(data=data.data.copy(), target=data.target.copy(),
                 feature_names=list(data.feature_names), target_names=data.target_names.copy())
