"""VDM part of HVDM against imbalanced-learn's ValueDifferenceMetric.

imblearn computes, per feature f, the Minkowski-k distance between the vectors
P(. | x_f) and P(. | y_f), raised to the power r, and sums over features (read
from its docstring and source). With k = 2 and r = 2 that is sum_f N2_f^2, the
square of HVDM on nominal-only data.
"""

from __future__ import annotations

import numpy as np
import polars as pl
from imblearn.metrics.pairwise import ValueDifferenceMetric
from sklearn.preprocessing import OrdinalEncoder

from curate.settings import SpaceSettings
from curate.space import build_space


def _docstring_example() -> tuple[np.ndarray, np.ndarray]:
    x = np.array(["green"] * 10 + ["red"] * 10 + ["blue"] * 10)
    y = np.array([1] * 8 + [0] * 5 + [1] * 7 + [0] * 9 + [1])
    return x, y


def test_vdm_matches_the_imblearn_docstring_example():
    """imblearn's docstring prints, for k=1, r=2, green/red 0.04, green/blue 1.96,
    red/blue 1.44. With two classes sum_c |dP| = 2|dP| while N2^2 = 2 dP^2, so
    those values are 2 * HVDM^2 (from the imblearn docstring; algebra above)."""
    x, y = _docstring_example()
    space = build_space(pl.DataFrame({"colour": x}), {"colour": "category"},
                        SpaceSettings(distance="hvdm"), list(range(30)), labels=y)
    firsts = [0, 10, 20]  # green, red, blue
    got = 2 * space.distances(firsts, firsts) ** 2
    printed = np.array([[0.0, 0.04, 1.96], [0.04, 0.0, 1.44], [1.96, 1.44, 0.0]])
    np.testing.assert_allclose(got, printed, atol=1e-12)
    encoded = OrdinalEncoder(dtype=np.int32).fit_transform(x.reshape(-1, 1))
    vdm = ValueDifferenceMetric(k=2, r=2).fit(encoded, y)
    np.testing.assert_allclose(space.distances(firsts, firsts) ** 2,
                               vdm.pairwise(encoded[firsts]), atol=1e-12)


def test_vdm_equals_imblearn_with_k2_r2_on_random_data():
    rng = np.random.default_rng(4)
    n = 80
    x = np.column_stack([rng.choice(list("abc"), n), rng.choice(list("pqrst"), n),
                         rng.choice(list("uv"), n)])
    x[0, 1] = "z"  # a value seen in one row only
    y = rng.choice([0, 1, 2], n, p=[0.5, 0.3, 0.2])
    frame = pl.DataFrame({f"f{j}": x[:, j] for j in range(3)})
    space = build_space(frame, {f"f{j}": "category" for j in range(3)},
                        SpaceSettings(distance="hvdm"), list(range(n)), labels=y)
    encoded = OrdinalEncoder(dtype=np.int32).fit_transform(x)
    vdm = ValueDifferenceMetric(k=2, r=2).fit(encoded, y)
    np.testing.assert_allclose(space.distances(np.arange(n), np.arange(n)) ** 2,
                               vdm.pairwise(encoded), atol=1e-12)
