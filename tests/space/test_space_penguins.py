"""HVDM end to end on open mixed data with nominal columns and missing values.

Data: the Palmer penguins table (344 rows; island and sex nominal, four
measurements numeric; 2 rows miss every measurement, sex is missing in 9
more cells), as shipped in the `palmerpenguins` package (its data/penguins.csv,
"NA" for a missing value), read offline with polars.
Reference: the paper's definition in tests/mixed_definitions.py.
"""

from __future__ import annotations

from importlib.resources import files

import numpy as np
import polars as pl
from mixed_definitions import hvdm, hvdm_table

from curate.neighbours import kneighbors
from curate.settings import SpaceSettings
from curate.space import build_space

FEATURES = ["island", "bill_length_mm", "bill_depth_mm", "flipper_length_mm",
            "body_mass_g", "sex"]


def _penguins() -> tuple[pl.DataFrame, np.ndarray]:
    path = files("palmerpenguins") / "data" / "penguins.csv"
    table = pl.read_csv(str(path), null_values="NA")
    schema = {n: pl.String if n in ("island", "sex") else pl.Float64 for n in FEATURES}
    frame = table.select([pl.col(n).cast(t) for n, t in schema.items()])
    return frame, table["species"].to_numpy()


def test_penguins_hvdm_neighbours_match_the_definition():
    frame, species = _penguins()
    kinds = {n: "category" if n in ("island", "sex") else "float" for n in FEATURES}
    space = build_space(frame, kinds, SpaceSettings(distance="hvdm", missing="far"),
                        list(range(frame.height)), labels=species)
    rows = [list(r) for r in frame.iter_rows()]
    missing_cells = sum(v is None for r in rows for v in r)
    assert space.metric == "hvdm-missing" and space.gaps is not None
    assert int(space.gaps.sum()) == missing_cells > 0
    nominal = [kinds[n] == "category" for n in FEATURES]
    table = hvdm_table(rows, list(species), nominal)
    gappy = [i for i, r in enumerate(rows) if any(v is None for v in r)]
    queries = np.array(gappy[:3] + [0, 150, 300])
    dist, pos = kneighbors(space, 5, queries=queries)
    for q, i in enumerate(queries):
        by_def = np.array([hvdm(rows[i], y, nominal, table) if j != i else np.inf
                           for j, y in enumerate(rows)])
        np.testing.assert_allclose(dist[q], np.sort(by_def)[:5], rtol=1e-12)
        np.testing.assert_allclose(by_def[pos[q]], dist[q], rtol=1e-12)


def test_penguins_run_end_to_end_with_hvdm(tmp_path):
    """`curate run` with HVDM and missing = "far": ENN removes exactly the rows that a k-NN vote
    over the paper's HVDM (written out in the test) misclassifies (Wilson 1972's rule)."""
    from curate.api import run

    frame, species = _penguins()
    frame.with_columns(pl.Series("species", species)).write_csv(tmp_path / "penguins.csv")
    result = run({"input": {"path": "penguins.csv", "label": "species"},
                  "space": {"distance": "hvdm", "missing": "far"},
                  "stages": [{"method": "enn", "k": 3}]}, base=tmp_path)
    rows = [list(r) for r in frame.iter_rows()]
    nominal = [n in ("island", "sex") for n in FEATURES]
    table = hvdm_table(rows, list(species), nominal)
    expected = set()
    for i, x in enumerate(rows):
        d = np.array([hvdm(x, y, nominal, table) if j != i else np.inf for j, y in enumerate(rows)])
        nearest = np.lexsort((np.arange(len(rows)), d))[:3]
        votes = {s: int((species[nearest] == s).sum()) for s in set(species[nearest])}
        if max(votes.values()) > votes.get(species[i], 0):
            expected.add(i)
    assert set(result.audit["row_id"].to_list()) == expected
    assert result.summary["rows_kept"] + len(expected) == frame.height
