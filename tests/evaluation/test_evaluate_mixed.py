"""Evaluation under mixed distances: the space is fitted on each training part only.

Outside references: Wilson and Martinez (1997), HEOM with the rule that an
attribute missing in either row is at distance 1, written out formula by formula
in tests/mixed_definitions.py (nothing shared with curate), with ranges taken
from the training part; scikit-learn's ``StratifiedKFold`` and
``cross_val_score``; and the fact that when labels are independent of the
features no classifier beats the majority rate beyond sampling error (common
practice, no source). Data: scikit-learn's bundled iris set (Fisher, UCI) with
seeded gaps, and seeded random tables.
"""

from __future__ import annotations

import math

import numpy as np
import polars as pl
from evaluate_fixtures import spec_for
from mixed_definitions import heom, heom_table
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier

from curate.evaluation.crossval import evaluate
from curate.settings import SpaceSettings
from curate.space import build_space

FOLDS, SEED = 5, 1


def test_heom_with_gaps_matches_the_published_formula_fold_by_fold(tmp_path, iris) -> None:
    x, y = iris
    x = x.copy()
    x[np.random.default_rng(0).random(x.shape) < 0.1] = np.nan
    pl.DataFrame(x, schema=[f"f{j}" for j in range(4)], orient="row").fill_nan(None).with_columns(
        pl.Series("y", y)).write_csv(tmp_path / "iris.csv")
    spec = spec_for(tmp_path / "iris.csv", "y", space={"distance": "heom", "missing": "far"})
    out = evaluate(spec, folds=FOLDS, ks=[1], seed=SEED)

    rows = [[None if math.isnan(v) else float(v) for v in r] for r in x]
    nominal = [False] * 4
    expected = []
    for train, test in StratifiedKFold(FOLDS, shuffle=True, random_state=SEED).split(x, y):
        ranges = heom_table([rows[i] for i in train], nominal)
        hits = 0
        for t in test:
            d = [heom(rows[t], rows[i], nominal, ranges) for i in train]
            hits += y[train[int(np.argmin(d))]] == y[t]  # ties: the earlier row, as curate
        expected.append(hits / len(test))
    (plain,) = [r for r in out["results"] if not r["curated"]]
    np.testing.assert_allclose(plain["fold_accuracy"], expected, rtol=0, atol=1e-12)


def test_hvdm_tables_never_see_test_labels(tmp_path) -> None:
    """A nominal column with one value per row carries its row's label through VDM if the
    tables are built on all rows (near-perfect, leaky scores); fitted on the training part
    only, test values are unseen and the labels, drawn independently, stay unpredictable."""
    rng = np.random.default_rng(3)
    n = 400
    labels = rng.integers(0, 2, size=n)
    frame = pl.DataFrame({"noise": rng.normal(size=n), "tag": [f"t{i}" for i in range(n)],
                          "y": labels})
    frame.write_csv(tmp_path / "tags.csv")
    # one tag per row is id-like: declared a category on purpose, or curate refuses it
    out = evaluate(spec_for(tmp_path / "tags.csv", "y", space={"distance": "hvdm"},
                            input={"columns": {"tag": {"type": "category"}}}),
                   folds=FOLDS, ks=[1], seed=SEED)
    majority = max(labels.mean(), 1 - labels.mean())
    (plain,) = [r for r in out["results"] if not r["curated"]]
    assert plain["accuracy"] <= majority + 3 * math.sqrt(0.25 / n)

    leaky = build_space(frame, {"noise": "float", "tag": "category"},
                        SpaceSettings(distance="hvdm"), list(range(n)), labels=labels)
    cheat = cross_val_score(KNeighborsClassifier(n_neighbors=1), leaky.matrix, labels,
                            cv=StratifiedKFold(FOLDS, shuffle=True, random_state=SEED)).mean()
    assert cheat > 0.9
