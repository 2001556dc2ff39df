"""Fitting the space on some rows and applying it to others, for evaluation without leakage.

References: scikit-learn's MinMaxScaler, StandardScaler, RobustScaler, SimpleImputer
and OrdinalEncoder fitted on the training rows and applied to the test rows, with
scipy's cdist; imbalanced-learn's ValueDifferenceMetric fitted on the training rows;
Wilson and Martinez (1997) VDM probabilities P(c | x) = N_axc / N_ax counted by
hand; the overlap metric (0 equal, 1 different) as scipy's Hamming distance; the
wine data shipped with scikit-learn.
"""

from __future__ import annotations

import numpy as np
import open_data
import polars as pl
import pytest
from imblearn.metrics.pairwise import ValueDifferenceMetric
from scipy.spatial.distance import cdist
from sklearn.impute import SimpleImputer
from sklearn.preprocessing import MinMaxScaler, OneHotEncoder, OrdinalEncoder, RobustScaler, StandardScaler

from curate.errors import ConstantColumnWarning, InputError, UsageError
from curate.settings import SpaceSettings
from curate.space import Space, build_space, fit_space
from curate.space.columns import unseen_overlap

KINDS = {"a": "float", "b": "int", "c": "category", "d": "string"}


def _mixed(n: int, seed: int) -> tuple[pl.DataFrame, np.ndarray]:
    """A mixed table with gaps in every column, and labels that depend on it."""
    rng = np.random.default_rng(seed)
    a = rng.normal(size=n)
    b = rng.integers(0, 9, size=n)
    c = rng.choice(list("xyz"), size=n)
    d = rng.choice(["low", "mid", "high", "top"], size=n)
    labels = np.where(a + (c == "x") > 0.5, "pass", "fail")
    gap = rng.random((n, 4)) < 0.1
    frame = pl.DataFrame({name: [None if g else v for v, g in zip(col.tolist(), gap[:, j],
                                                                  strict=True)]
                          for j, (name, col) in enumerate(zip("abcd", (a, b, c, d),
                                                              strict=True))})
    return frame, labels


def _assert_same(got: Space, want: Space) -> None:
    np.testing.assert_array_equal(got.matrix, want.matrix)
    assert (got.metric, got.columns, got.attributes, got.weights) == \
        (want.metric, want.columns, want.attributes, want.weights)
    np.testing.assert_array_equal(got.groups, want.groups)
    np.testing.assert_array_equal(got.identity_codes(), want.identity_codes())
    assert (got.gaps is None) == (want.gaps is None)
    if want.gaps is not None:
        np.testing.assert_array_equal(got.gaps, want.gaps)


SETTINGS = [SpaceSettings(missing="impute"),
            SpaceSettings(distance="manhattan", scale="robust", missing="far"),
            SpaceSettings(distance="heom", missing="far", weights={"a": 2.0}),
            SpaceSettings(distance="hvdm", missing="impute", weights="mutual-information"),
            SpaceSettings(scale="zscore", missing="far", weights="mutual-information")]


@pytest.mark.parametrize("settings", SETTINGS, ids=lambda s: f"{s.distance}-{s.missing}")
def test_fitting_on_every_row_is_build_space(settings):
    """The unfitted build_space (checked elsewhere against the paper and sklearn) is the
    reference: fit rows = all rows, as a mask or as positions, must change nothing."""
    frame, labels = _mixed(40, seed=1)
    ids = list(range(40))
    want = build_space(frame, KINDS, settings, ids, labels=labels)
    for rows in (np.ones(40, dtype=bool), np.arange(40)):
        _assert_same(build_space(frame, KINDS, settings, ids, labels=labels, fit_rows=rows), want)
    model = fit_space(frame, KINDS, settings, ids, labels=labels)
    _assert_same(model.space, want)
    _assert_same(model.transform(frame, ids), want)


def _wine_split() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    data = open_data.bunch("wine")
    train = np.random.default_rng(7).random(len(data.target)) < 0.7
    return data.data, data.target, train


@pytest.mark.parametrize(("settings", "scaler", "factor"), [
    (SpaceSettings(), MinMaxScaler(), 1.0),
    (SpaceSettings(scale="zscore"), StandardScaler(), 1.0),
    (SpaceSettings(scale="robust"), RobustScaler(), 1.0),
    (SpaceSettings(distance="hvdm"), StandardScaler(), 0.25),  # HVDM: |x - y| / (4 sigma)
], ids=["range", "zscore", "robust", "hvdm"])
def test_numeric_scaling_fitted_on_train_equals_sklearn(settings, scaler, factor):
    """sklearn scaler fit on train, applied to all rows, then scipy cdist (test x train)."""
    x, y, train = _wine_split()
    frame = pl.DataFrame(x, schema=[f"f{j}" for j in range(x.shape[1])], orient="row")
    kinds = {name: "float" for name in frame.columns}
    ids = list(range(len(y)))
    scaled = scaler.fit(x[train]).transform(x) * factor
    test = np.flatnonzero(~train)
    labels = y.astype(object)
    labels[~train] = None  # test labels absent: they must not be needed
    space = build_space(frame, kinds, settings, ids, labels=labels, fit_rows=train)
    np.testing.assert_allclose(space.distances(test, np.flatnonzero(train)),
                               cdist(scaled[test], scaled[train]), atol=1e-12)
    model = fit_space(frame.filter(pl.Series(train)), kinds, settings,
                      list(np.flatnonzero(train)), labels=y[train])
    moved = model.transform(frame.filter(pl.Series(~train)), list(test))
    assert moved.columns == model.space.columns
    np.testing.assert_allclose(cdist(moved.matrix, model.space.matrix),
                               cdist(scaled[test], scaled[train]), atol=1e-12)


def test_vdm_probabilities_come_from_train_rows_only():
    """Counted by hand from the four-line table (Wilson and Martinez 1997, P = N_axc / N_ax;
    an unseen value has N_ax = 0 and P = 0, as imbalanced-learn also gives)."""
    colour = ["a", "a", "b", "b", "b", "c", "a", "c", "d"]
    labels = np.array(["no", "yes", "yes", "yes", "no", "no", None, None, None], dtype=object)
    train = np.array([True] * 6 + [False] * 3)
    space = build_space(pl.DataFrame({"colour": colour}), {"colour": "category"},
                        SpaceSettings(distance="hvdm"), list(range(9)), labels=labels,
                        fit_rows=train)
    # Train rows: a -> (no, yes) = 1, 1; b -> 1, 2; c -> 1, 0.
    hand = {"a": [1 / 2, 1 / 2], "b": [1 / 3, 2 / 3], "c": [1.0, 0.0], "d": [0.0, 0.0]}
    assert space.columns == ("colour|no", "colour|yes")
    np.testing.assert_allclose(space.matrix, [hand[v] for v in colour], atol=1e-15)


def test_vdm_with_unseen_values_equals_imblearn_fitted_on_train():
    rng = np.random.default_rng(3)
    n = 90
    x = np.column_stack([rng.choice(list("abcde"), n), rng.choice(list("pqr"), n)])
    y = rng.choice([0, 1, 2], n)
    train = rng.random(n) < 0.6
    x[~train & (rng.random(n) < 0.3), 0] = "f"  # a value only test rows have
    x[np.flatnonzero(~train)[:2], 1] = ["s", "t"]  # two different unseen values
    frame = pl.DataFrame({"u": x[:, 0], "v": x[:, 1]})
    space = build_space(frame, {"u": "category", "v": "category"},
                        SpaceSettings(distance="hvdm"), list(range(n)), labels=y,
                        fit_rows=train)
    encoded = OrdinalEncoder(dtype=np.int32).fit_transform(x)
    # n_categories over all values: those absent from train get an all-zero row (imblearn).
    vdm = ValueDifferenceMetric(n_categories=encoded.max(axis=0) + 1, k=2, r=2)
    vdm.fit(encoded[train], y[train])
    rows = np.arange(n)
    np.testing.assert_allclose(space.distances(rows, rows) ** 2, vdm.pairwise(encoded),
                               atol=1e-12)


@pytest.mark.parametrize("distance", ["euclidean", "heom", "manhattan"])
def test_unseen_nominal_values_are_at_overlap_distance_one_from_train(distance):
    """Overlap metric as scipy's Hamming distance times the number of attributes:
    HEOM = sqrt(count of differing attributes), Manhattan = the count."""
    rng = np.random.default_rng(5)
    n = 60
    x = np.column_stack([rng.choice(list("pqr"), n), rng.choice(list("uv"), n),
                         rng.choice(["k"], n)])
    train = rng.random(n) < 0.5
    test = np.flatnonzero(~train)
    x[test[:10], 0] = "z"
    x[test[5:15], 1] = "w"
    x[test[10:20], 2] = "m"  # column constant on the train rows
    frame = pl.DataFrame({"g": x[:, 0], "h": x[:, 1], "i": x[:, 2]})
    with pytest.warns(ConstantColumnWarning, match="'i' is constant in the fit rows"):
        space = build_space(frame, {"g": "category", "h": "category", "i": "category"},
                            SpaceSettings(distance=distance), list(range(n)), fit_rows=train)
    codes = OrdinalEncoder().fit_transform(x)
    count = cdist(codes[test], codes[train], "hamming") * 3
    want = count if distance == "manhattan" else np.sqrt(count)
    np.testing.assert_allclose(space.distances(test, np.flatnonzero(train)), want, atol=1e-12)


@pytest.mark.parametrize("levels", [1, 2, 3, 7])
def test_unseen_point_is_at_distance_one_from_every_level(levels):
    """Overlap embedding: level k at e_k / sqrt(2) (L2) or e_k / 2 (L1)."""
    known = np.eye(levels)
    assert np.allclose(np.linalg.norm(known / np.sqrt(2) - unseen_overlap(levels), axis=1), 1.0)
    assert np.allclose(np.abs(known / 2 - unseen_overlap(levels, manhattan=True)).sum(axis=1),
                       1.0)


def test_two_different_unseen_values_share_one_point():
    """Documented limitation (curate.space.columns): the embedding's size is fixed by the fit
    rows, so two values neither of them seen are at overlap distance 0."""
    frame = pl.DataFrame({"g": ["p", "q", "r", "s"]})
    space = build_space(frame, {"g": "category"}, SpaceSettings(), [0, 1, 2, 3],
                        fit_rows=[0, 1])
    assert space.distances([2], [3]).item() == 0.0
    np.testing.assert_allclose(space.distances([2, 3], [0, 1]), 1.0, atol=1e-12)


@pytest.mark.parametrize("settings", SETTINGS[2:], ids=lambda s: f"{s.distance}-{s.weights}")
def test_labels_outside_the_fit_rows_change_nothing(settings):
    """No leakage, by definition: nothing may depend on the labels of non-fit rows."""
    frame, labels = _mixed(50, seed=2)
    train = np.random.default_rng(9).random(50) < 0.6
    ids = list(range(50))
    want = build_space(frame, KINDS, settings, ids, labels=labels, fit_rows=train)
    flipped = labels.copy()
    flipped[~train] = np.where(labels[~train] == "pass", "fail", "pass")
    absent = labels.astype(object)
    absent[~train] = None
    strange = labels.astype(object)
    strange[~train] = 3.5  # not even a class of the fit rows
    for other in (flipped, absent, strange):
        _assert_same(build_space(frame, KINDS, settings, ids, labels=other, fit_rows=train),
                     want)


def test_impute_fitted_on_train_equals_sklearn_simple_imputer():
    """SimpleImputer (median, most_frequent) and MinMaxScaler fit on the train rows, then
    applied to all rows; nominal one-hot scaled by 1/sqrt(2); scipy cdist."""
    frame, _ = _mixed(60, seed=4)
    frame = frame.drop("d")
    train = np.random.default_rng(11).random(60) < 0.5
    space = build_space(frame, {"a": "float", "b": "int", "c": "category"},
                        SpaceSettings(missing="impute"), list(range(60)), fit_rows=train)
    numbers = frame.select("a", "b").cast(pl.Float64).to_numpy()
    numbers = SimpleImputer(strategy="median").fit(numbers[train]).transform(numbers)
    numbers = MinMaxScaler().fit(numbers[train]).transform(numbers)
    text = np.array(frame["c"].to_list(), dtype=object).reshape(-1, 1)
    text = SimpleImputer(strategy="most_frequent", missing_values=None).fit(text[train]) \
        .transform(text)
    onehot = OneHotEncoder(sparse_output=False).fit(text[train]).transform(text) / np.sqrt(2)
    embedded = np.hstack([numbers, onehot])
    rows = np.arange(60)
    assert space.gaps is None
    np.testing.assert_allclose(space.distances(rows, rows), cdist(embedded, embedded),
                               atol=1e-12)


def test_bad_fit_rows_and_unfillable_columns_are_clear_errors():
    frame = pl.DataFrame({"a": [None, None, 1.0, 2.0]})
    kinds, settings = {"a": "float"}, SpaceSettings(missing="impute")
    for rows, text in (([True, False], "mask of 2 values for 4 rows"),
                       ([0, 4], "positions from 0 to 3"),
                       (np.zeros(4, dtype=bool), "selects no row")):
        with pytest.raises(UsageError, match=text):
            build_space(frame, kinds, settings, [0, 1, 2, 3], fit_rows=rows)
    with pytest.raises(InputError, match="every fit row is missing"):
        build_space(frame, kinds, settings, [0, 1, 2, 3], fit_rows=[0, 1])
    model = fit_space(frame, kinds, settings, [0, 1, 2, 3])
    with pytest.raises(InputError, match="lack feature columns: 'a'"):
        model.transform(pl.DataFrame({"b": [1.0]}), [9])
