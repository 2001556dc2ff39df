"""The safety limit: defaults that fit each family, hints that fit each method, and the Sampler.

Outside references: Hart 1968 (a condensed set keeps a row of every class, and
on well separated classes it keeps a small share of each), imbalanced-learn's
EditedNearestNeighbours (``kind_sel="all"``, the same rule as curate's unanimous
ENN) on scikit-learn's MinMaxScaler output for the rows and counts the Sampler's
limit names, and scikit-learn's bundled iris, wine and diabetes sets. The limit's
rules themselves are common practice, no source.
"""

from __future__ import annotations

import json
import re
from collections.abc import Iterator

import numpy as np
import open_data
import polars as pl
import pytest
from imblearn.under_sampling import EditedNearestNeighbours
from sklearn.datasets import load_diabetes
from sklearn.preprocessing import MinMaxScaler
from threadpoolctl import threadpool_limits

from curate import Sampler
from curate.api import run
from curate.cli import main
from curate.errors import SafetyLimitError, UsageError
from curate.pipeline.stage import safety_breach
from curate.settings import StageSettings
from curate.spec import spec_from_dict


@pytest.fixture(autouse=True)
def one_thread() -> Iterator[None]:
    """Reference libraries on one thread: the test machine is shared (2 cores)."""
    with threadpool_limits(1):
        yield


def _stages(*bodies: dict) -> tuple[StageSettings, ...]:
    return spec_from_dict({"input": {"path": "x.csv", "label": "y"},
                           "stages": list(bodies)}).stages


def test_defaults_fit_the_family_and_curate_methods_shows_them(capsys):
    fcnn, enn, copies, drop3, set_by_hand = _stages(
        {"method": "fcnn"}, {"method": "enn"}, {"method": "exact-duplicates"},
        {"method": "drop3"}, {"method": "cnn", "max_removed_share": 0.9})
    assert (fcnn.max_removed_share, fcnn.keep_every_class) == (1.0, True)
    assert (drop3.max_removed_share, drop3.keep_every_class) == (1.0, True)
    assert (enn.max_removed_share, enn.keep_every_class) == (0.5, False)
    assert (copies.max_removed_share, copies.keep_every_class) == (0.5, False)
    assert (set_by_hand.max_removed_share, set_by_hand.keep_every_class) == (0.9, False)
    assert main(["methods", "--json"]) == 0
    table = {m["key"]: m for m in json.loads(capsys.readouterr().out)}
    assert table["fcnn"]["default_keep_every_class"] and table["enn"]["default_max_removed_share"] == 0.5
    assert main(["methods"]) == 0
    assert "every class keeps at least one row" in capsys.readouterr().out


def test_a_first_condensing_stage_runs_with_the_default_limit(tmp_path):
    """Hart's CNN on iris keeps a small share of each class (far below half) and so removes
    far more than half of every class; the family default lets it, and no class vanishes."""
    X, y = open_data.load("iris")
    frame = pl.DataFrame(X, schema=[f"x{j}" for j in range(4)], orient="row")
    frame.with_columns(pl.Series("y", y.astype(str))).write_csv(tmp_path / "iris.csv")
    result = run({"input": {"path": "iris.csv", "label": "y"}, "stages": [{"method": "cnn"}]},
                 base=tmp_path)
    stage = result.summary["stages"][0]
    assert stage["keep_every_class"] is True
    assert all(stage["by_class_removed"][c] > 0.5 * n for c, n in stage["by_class_in"].items())
    assert set(result.summary["classes_kept"]) == {"0", "1", "2"}


def test_a_class_may_not_vanish_under_the_family_default():
    stage = _stages({"name": "shrink", "method": "drop3"})[0]
    labels = np.array(["a"] * 5 + ["b"] * 3)
    assert safety_breach(stage, labels, np.array([0, 1, 2, 3]), list(range(8))) is None
    err = safety_breach(stage, labels, np.array([0, 5, 6, 7]), list(range(8)))
    assert isinstance(err, SafetyLimitError)
    assert "would remove 3 of 3 rows of class 'b'" in err.message and "vanish" in err.message


@pytest.mark.parametrize("body, fits, misfits", [
    ({"method": "exact-duplicates"}, ["exact", "classes"], [r"\bk\b", "radius"]),
    ({"method": "near-duplicates", "radius": 0.1}, ["radius"], [r"\bk\b"]),
    ({"method": "enn", "k": 3}, ["another k"], ["radius"]),
    ({"method": "conflicting-duplicates"}, ["policy"], [r"\bk\b", "radius"]),
])
def test_hints_fit_the_method(body, fits, misfits):
    stage = _stages({"name": "s", "max_removed_share": 0.1, **body})[0]
    err = safety_breach(stage, np.array(["a"] * 4 + ["b"] * 4), np.array([0, 1]), list(range(8)))
    assert err is not None and err.hint is not None
    for word in fits:
        assert word in err.hint, err.hint
    for pattern in misfits:
        assert re.search(pattern, err.hint) is None, err.hint


def test_sampler_limit_is_off_by_default_and_raises_a_value_error_naming_class_and_counts():
    X, y = open_data.load("wine")
    theirs = EditedNearestNeighbours(sampling_strategy="all", n_neighbors=5, kind_sel="all")
    theirs.fit_resample(MinMaxScaler().fit_transform(X), y)
    gone = np.setdiff1d(np.arange(len(y)), theirs.sample_indices_)
    removed, sizes = np.bincount(y[gone], minlength=3), np.bincount(y)
    Sampler(method="enn", k=5, vote="unanimous").fit_resample(X, y)  # no limit: no error
    worst = int(np.argmax(removed / sizes))
    share = float(removed[worst] / sizes[worst])
    with pytest.raises(ValueError) as caught:
        Sampler(method="enn", k=5, vote="unanimous",
                max_removed_share=share - 0.01).fit_resample(X, y)
    assert isinstance(caught.value, SafetyLimitError)
    text = str(caught.value)
    stopped = re.search(r"would remove (\d+) of (\d+) rows of class '(\d+)'", text)
    assert stopped is not None, text
    cls = int(stopped.group(3))
    assert (int(stopped.group(1)), int(stopped.group(2))) == (removed[cls], sizes[cls])
    Sampler(method="enn", k=5, vote="unanimous", max_removed_share=share).fit_resample(X, y)
    with pytest.raises(UsageError, match="max_removed_share"):
        Sampler(method="enn", max_removed_share=1.5).fit_resample(X, y)


def test_unknown_parameter_of_a_method_without_parameters_names_the_keys_that_exist():
    with pytest.raises(UsageError) as caught:
        _stages({"method": "fcnn", "k": 3})
    assert "fcnn has no parameters of its own" in str(caught.value.hint)
    assert "max_removed_share" in str(caught.value.hint)
    with pytest.raises(UsageError) as caught:
        Sampler(method="fcnn", k=3).fit_resample(*open_data.load("iris"))
    assert "max_removed_share" in str(caught.value.hint) and "scale" in str(caught.value.hint)


def test_a_continuous_label_is_named_and_no_impossible_hint_is_given(make_pipeline, tmp_path,
                                                                      capsys):
    """scikit-learn's diabetes target: a disease-progression score with 214 distinct values."""
    X, target = load_diabetes(return_X_y=True)
    frame = pl.DataFrame(X, schema=[f"x{j}" for j in range(X.shape[1])], orient="row")
    path = make_pipeline(frame.with_columns(pl.Series("y", target)), [{"method": "enn", "k": 3}])
    assert main(["run", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "looks continuous" in err and "task = \"regression\"" in err
    assert "lower k below 1" not in err
    # A class of one row among whole-number classes: no "lower k below 1" either.
    tiny = pl.DataFrame({"x": [0.0, 0.1, 0.2, 0.3, 5.0, 5.1, 5.2, 9.0],
                         "y": ["a", "a", "a", "a", "b", "b", "b", "c"]})
    path = make_pipeline(tiny, [{"method": "enn", "k": 1}])
    assert main(["run", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "class 'c' (1 row)" in err and "lower k below 1" not in err and "hint:" in err
