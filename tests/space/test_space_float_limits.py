"""Values near the float limits neither overflow the scaling nor pass as input.

The largest float64 is about 1.797e308 (IEEE 754 binary64), so 1e308 - (-1e308)
overflows to infinity; a range computed that way made the column look constant.
Expected embeddings below are worked by hand from the definitions of range
scaling ((x - min) / (max - min)) and the z-score ((x - mean) / population sd).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import polars as pl
import pytest

from curate.cli import main
from curate.errors import ConstantColumnWarning
from curate.space.columns import Column, encode_numeric


def column(values: list[float]) -> Column:
    v = np.array(values)
    return Column("pressure", False, v, np.zeros(len(v), dtype=bool))


@pytest.mark.parametrize(("scale", "expected"), [
    ("range", [0.0, 0.5, 1.0, 0.75]),
    ("zscore", None),  # worked in the test, in units of 1e307 where nothing overflows
])
def test_the_scaling_does_not_overflow_at_the_float_limits(scale, expected):
    values = [-1e308, 0.0, 1e308, 5e307]
    with warnings.catch_warnings():
        warnings.simplefilter("error", ConstantColumnWarning)
        out = encode_numeric(column(values), scale).ravel()
    assert np.all(np.isfinite(out))
    if expected is None:
        units = np.array(values) / 1e307
        mean = units.mean()
        sd = math.sqrt(sum((u - mean) ** 2 for u in units) / len(units))
        expected = [(u - mean) / sd for u in units]
    np.testing.assert_allclose(out, expected, rtol=1e-12)


def test_plain_values_scale_exactly_as_before():
    """The overflow guard changes nothing for ordinary values: bit for bit the plain formula."""
    values = [0.1, 0.7, 0.3, 2.9]
    out = encode_numeric(column(values), "range").ravel()
    assert out.tolist() == [(v - 0.1) / (2.9 - 0.1) for v in values]


def test_values_near_the_float_limit_are_out_of_range_input(make_pipeline, capsys):
    frame = pl.DataFrame({"pressure": [1.0, 2.0, 1e308, 3.0, -1e308, 2.5],
                          "y": ["a", "a", "b", "b", "a", "b"]})
    path = make_pipeline(frame, [{"method": "exact-duplicates"}])
    with warnings.catch_warnings():
        warnings.simplefilter("error", ConstantColumnWarning)
        code = main(["run", str(path), "--quiet"])
    err = capsys.readouterr().err
    assert code == 3, err
    for words in ("'pressure'", "out of range", "2 rows (first: 2, 4)", "1e+308", "hint:"):
        assert words in err, err
    assert "constant" not in err
    assert not (path.parent / "run").exists()
