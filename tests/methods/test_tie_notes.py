"""Evidence with ties: when rows outside a vote sit at the k-th neighbour's distance, say so.

Outside references: the Palmer penguins table as shipped in the `palmerpenguins`
package (two rows miss every measurement, so under HEOM with missing = "far"
they are at distance sqrt(5) from every row of their island), HEOM written out
from Wilson and Martinez 1997 in tests/mixed_definitions.py, and scipy's
``cdist`` on a grid of points (many exact ties) for the editing and score
methods. The count of tied rows is counted from those distances directly.
"""

from __future__ import annotations

import re
from importlib.resources import files

import numpy as np
import polars as pl
from mixed_definitions import heom, heom_table
from scipy.spatial.distance import cdist

from curate.api import run
from curate.io.explain import explain
from curate.io.review import review_table
from curate.methods.editing import all_knn, enn
from curate.methods.scores import hardness
from curate.space.points import Space

FEATURES = ["island", "bill_length_mm", "bill_depth_mm", "flipper_length_mm", "body_mass_g",
            "sex"]
NOTE = re.compile(r"tied with (\d+) other rows? at distance ([0-9.e+-]+); the first by input "
                  r"position (was|were) used")


def _expected_ties(distances: np.ndarray, k: int) -> tuple[int, float]:
    """Rows outside the k nearest at the k-th distance, and that distance (self excluded)."""
    ordered = np.sort(distances)
    kth = ordered[k - 1]
    return int(np.sum(np.isclose(distances, kth, rtol=1e-12, atol=0) | (distances < kth))) - k, kth


def _check(detail: str, distances: np.ndarray, k: int) -> bool:
    others, kth = _expected_ties(distances, k)
    found = NOTE.search(detail)
    if others == 0:
        assert found is None, detail
        return False
    assert found is not None, detail
    assert int(found.group(1)) == others, detail
    assert float(found.group(2)) == float(f"{kth:.4g}"), detail
    return True


def test_penguins_with_missing_measurements_say_how_many_rows_tie(tmp_path):
    path = files("palmerpenguins") / "data" / "penguins.csv"
    table = pl.read_csv(str(path), null_values="NA")
    frame = table.select([pl.col(n).cast(pl.String if n in ("island", "sex") else pl.Float64)
                          for n in FEATURES])
    species = table["species"].to_numpy()
    frame.with_columns(pl.Series("species", species)).write_csv(tmp_path / "penguins.csv")
    result = run({"input": {"path": "penguins.csv", "label": "species"},
                  "space": {"distance": "heom", "missing": "far"},
                  "stages": [{"method": "enn", "k": 3}]}, base=tmp_path, out=tmp_path / "run")
    rows = [list(r) for r in frame.iter_rows()]
    nominal = [n in ("island", "sex") for n in FEATURES]
    ranges = heom_table(rows, nominal)
    tied = []
    for record in result.audit.iter_rows(named=True):
        i = record["row_id"]
        d = np.array([heom(rows[i], y, nominal, ranges) for j, y in enumerate(rows) if j != i])
        if _check(record["detail"], d, 3):
            tied.append(i)
    # The rows that miss every measurement are among them, at distance sqrt(5) = 2.236.
    assert tied and any("at distance 2.236" in d for d in result.audit["detail"].to_list())
    # `curate why` and the review table repeat the audit's sentence.
    assert "tied with" in explain(tmp_path / "run", str(tied[0]))
    review = review_table(tmp_path / "run")
    assert review.filter(pl.col("row_id") == tied[0])["detail"].str.contains("tied with").all()


def test_editing_and_scores_on_a_grid_agree_with_scipy():
    grid = np.array([[x, y] for x in range(6) for y in range(6)], dtype=float)
    labels = np.array(["a" if x + y < 5 else "b" for x, y in grid.astype(int)])
    labels[[3, 14, 27]] = ["b", "b", "a"]  # three mislabels inside the other class
    space = Space.from_matrix(grid)
    everything = np.ones(len(grid), dtype=bool)
    pairs = cdist(grid, grid)
    np.fill_diagonal(pairs, np.inf)
    checked = 0
    for k in (1, 3, 4):
        sel = enn(space, labels, removable=everything, k=k)
        for pos, detail in zip(sel.removed, sel.detail, strict=True):
            checked += _check(detail, pairs[pos][np.isfinite(pairs[pos])], k)
    sel = all_knn(space, labels, removable=everything, k=4)
    for pos, detail, j in zip(sel.removed, sel.detail, sel.step, strict=True):
        checked += _check(detail, pairs[pos][np.isfinite(pairs[pos])], int(j))
    sel = hardness(space, labels, removable=everything, k=4, threshold=0.5)
    for pos, detail in zip(sel.removed, sel.detail, strict=True):
        checked += _check(detail, pairs[pos][np.isfinite(pairs[pos])], 4)
    assert checked > 5  # a grid is full of ties: the checks above had plenty to bite on
