"""HVDM in curate.space against Wilson and Martinez (1997), computed by the definition.

Reference: tests/mixed_definitions.py, the paper's formulas as loops (equations 11
to 15, distance 1 for a missing value, erratum of March 2000 for N2).
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest
from mixed_definitions import hvdm, hvdm_table
from scipy.spatial.distance import cdist

from curate.errors import UsageError
from curate.neighbours import kneighbors
from curate.settings import SpaceSettings
from curate.space import build_space

KINDS = {"temp": "float", "count": "int", "colour": "category", "shape": "string"}
NOMINAL = [False, False, True, True]


def _mixed(seed: int, n: int = 40, gap_share: float = 0.15) -> tuple[pl.DataFrame, np.ndarray]:
    rng = np.random.default_rng(seed)
    cols = {
        "temp": rng.normal(20, 5, n).tolist(),
        "count": rng.integers(0, 9, n).tolist(),
        "colour": rng.choice(["red", "green", "blue"], n).tolist(),
        "shape": rng.choice(["disc", "cube", "cone", "ring"], n).tolist(),
    }
    for name in cols:
        for i in np.flatnonzero(rng.random(n) < gap_share):
            cols[name][i] = None
    cols["shape"][0] = "star"  # a value seen in one row only still gets P(c | value)
    labels = rng.choice(["a", "b", "c"], n)
    return pl.DataFrame(cols, schema={"temp": pl.Float64, "count": pl.Int64,
                                      "colour": pl.String, "shape": pl.String}), labels


def _rows(frame: pl.DataFrame) -> list[list]:
    return [list(r) for r in frame.iter_rows()]


def test_hvdm_with_missing_values_equals_the_definition_for_every_pair():
    frame, labels = _mixed(seed=3)
    space = build_space(frame, KINDS, SpaceSettings(distance="hvdm", missing="far"),
                        list(range(frame.height)), labels=labels)
    rows = _rows(frame)
    table = hvdm_table(rows, list(labels), NOMINAL)
    expected = np.array([[hvdm(x, y, NOMINAL, table) for y in rows] for x in rows])
    got = space.distances(np.arange(frame.height), np.arange(frame.height))
    assert space.metric == "hvdm-missing"
    # Pairs where one, or both, rows miss the same attribute must be in the sample.
    gaps = np.array([[v is None for v in r] for r in rows])
    both = (gaps[:, None, :] & gaps[None, :, :]).any(axis=2)
    one = (gaps[:, None, :] ^ gaps[None, :, :]).any(axis=2)
    assert both[~np.eye(len(rows), dtype=bool)].any() and one.any()
    np.testing.assert_allclose(got, expected, rtol=1e-12, atol=1e-12)


def test_hvdm_neighbours_match_the_definition():
    frame, labels = _mixed(seed=11, n=30)
    space = build_space(frame, KINDS, SpaceSettings(distance="hvdm", missing="far"),
                        list(range(frame.height)), labels=labels)
    rows = _rows(frame)
    table = hvdm_table(rows, list(labels), NOMINAL)
    dist, pos = kneighbors(space, 3)
    for q, x in enumerate(rows):
        by_def = np.array([hvdm(x, y, NOMINAL, table) if i != q else np.inf
                           for i, y in enumerate(rows)])
        np.testing.assert_allclose(dist[q], np.sort(by_def)[:3], rtol=1e-12)
        np.testing.assert_allclose(by_def[pos[q]], dist[q], rtol=1e-12)


def test_hvdm_without_missing_values_is_plain_euclidean_distance():
    """Where nothing is missing the embedded space serves HVDM by Euclidean distance."""
    frame, labels = _mixed(seed=5, gap_share=0.0)
    space = build_space(frame, KINDS, SpaceSettings(distance="hvdm", missing="far"),
                        list(range(frame.height)), labels=labels)
    rows = _rows(frame)
    table = hvdm_table(rows, list(labels), NOMINAL)
    expected = np.array([[hvdm(x, y, NOMINAL, table) for y in rows] for x in rows])
    assert space.metric == "euclidean" and space.gaps is None
    np.testing.assert_allclose(cdist(space.matrix, space.matrix), expected, atol=1e-12)


def test_subset_without_gaps_returns_to_the_fast_metric():
    frame, labels = _mixed(seed=3)
    space = build_space(frame, KINDS, SpaceSettings(distance="hvdm", missing="far"),
                        list(range(frame.height)), labels=labels)
    assert space.gaps is not None
    clean = np.flatnonzero(~space.gaps.any(axis=1))
    part = space.subset(clean)
    assert part.metric == "euclidean"
    np.testing.assert_allclose(part.distances(np.arange(part.n), np.arange(part.n)),
                               space.distances(clean, clean), atol=1e-12)


def test_hvdm_needs_labels():
    frame, _ = _mixed(seed=1)
    with pytest.raises(UsageError, match="needs the labels"):
        build_space(frame, KINDS, SpaceSettings(distance="hvdm", missing="far"),
                    list(range(frame.height)))
