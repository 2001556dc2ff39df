"""HVDM end to end on open mixed data with nominal columns and missing values.

Data: the Palmer penguins table (344 rows; island and sex nominal, four
measurements numeric; 2 rows miss every measurement, sex is missing in 10
more cells), as shipped inside the installed scikit-learn wheel among its
OpenML test files (data set 42585), read offline with scipy.io.arff.
Reference: the paper's definition in tests/mixed_definitions.py.
"""

from __future__ import annotations

import gzip
from importlib.resources import files

import numpy as np
import polars as pl
from mixed_definitions import hvdm, hvdm_table
from scipy.io import arff

from curate.neighbours import kneighbors
from curate.space import SpaceSettings, build_space

FEATURES = ["island", "culmen_length_mm", "culmen_depth_mm", "flipper_length_mm",
            "body_mass_g", "sex"]


def _penguins() -> tuple[pl.DataFrame, np.ndarray]:
    folder = files("sklearn.datasets.tests.data.openml.id_42585")
    with gzip.open(str(folder / "data-v1-dl-21854866.arff.gz"), "rt") as handle:
        data, _ = arff.loadarff(handle)
    cols: dict[str, list] = {}
    for name in FEATURES:
        raw = data[name]
        if raw.dtype.kind == "S":  # nominal; ARFF writes a missing value as '?'
            cols[name] = [None if v == b"?" else v.decode() for v in raw]
        else:
            cols[name] = [None if np.isnan(v) else float(v) for v in raw]
    schema = {n: pl.String if n in ("island", "sex") else pl.Float64 for n in FEATURES}
    return pl.DataFrame(cols, schema=schema), np.array([v.decode() for v in data["species"]])


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
