"""The invented pump-fleet demo: reproducible, faults as announced, truth that matches the data.

Outside references: pandera (the schema check), polars (duplicate detection),
scikit-learn (a k-nearest-neighbour classifier for separability). The shares
checked below are the generator's own specification (curate.demo.data.FAULT_SHARES,
from the project brief), not results produced by curate's cleaning code.
"""

from __future__ import annotations

import importlib.util
from pathlib import Path
from types import ModuleType

import numpy as np
import pandera.errors
import polars as pl
import pytest
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier

from curate.demo import data as demo_data
from curate.errors import UsageError

ROWS = 2000
FEATURES = list(demo_data.FEATURES)
SENSORS = list(demo_data.RANGES)


@pytest.fixture(scope="module")
def demo() -> tuple[pl.DataFrame, pl.DataFrame]:
    return demo_data.generate(rows=ROWS, seed=11)


@pytest.fixture(scope="module")
def schema_module() -> ModuleType:
    path = Path(__file__).resolve().parents[2] / "schemas" / "readings.py"
    spec = importlib.util.spec_from_file_location("pump_readings_schema", path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _faulty(truth: pl.DataFrame, kind: str) -> pl.DataFrame:
    return truth.filter(pl.col("fault") == kind)


def test_same_seed_same_frames_and_other_seed_other_frames() -> None:
    first = demo_data.generate(rows=300, seed=5)
    second = demo_data.generate(rows=300, seed=5)
    other = demo_data.generate(rows=300, seed=6)
    assert first[0].equals(second[0]) and first[1].equals(second[1])
    assert not first[0].equals(other[0])


def test_injected_shares_near_the_specified_targets(demo) -> None:
    readings, truth = demo
    assert readings.height == ROWS
    counts = dict(truth["fault"].value_counts().iter_rows())
    for kind, share in demo_data.FAULT_SHARES.items():
        # Counts are round(share * rows); allow one row of rounding either way.
        assert abs(counts.get(kind, 0) - share * ROWS) <= 1, kind
    assert truth["reading_id"].n_unique() == truth.height  # one fault per faulty row


def test_labels_unbalanced_with_a_rare_class(demo) -> None:
    shares = dict(demo[0]["condition"].value_counts(normalize=True).iter_rows())
    assert len(shares) >= 4
    assert 0.6 <= shares["healthy"] <= 0.8
    assert 0.01 <= shares["impeller-damage"] <= 0.06


def test_ids_unique_and_not_positions(demo) -> None:
    ids = demo[0]["reading_id"]
    assert ids.n_unique() == ROWS and ids.min() >= 100000
    assert not ids.is_sorted()


def test_no_missing_values_anywhere(demo) -> None:
    readings, _ = demo
    assert readings.null_count().sum_horizontal().item() == 0


def test_resent_rows_equal_their_source_and_come_later(demo) -> None:
    readings, truth = demo
    at = readings.with_row_index("pos")
    resent = _faulty(truth, "re-sent")
    copies = at.join(resent.select("reading_id", "source_id"), on="reading_id")
    sources = at.join(copies.select(pl.col("source_id").alias("reading_id"), "pos"),
                      on="reading_id", suffix="_copy")
    pairs = copies.sort("source_id").select(FEATURES + ["note", "condition"])
    originals = sources.sort("reading_id").select(FEATURES + ["note", "condition"])
    assert pairs.height == resent.height and pairs.equals(originals)
    assert (sources["pos"] < sources["pos_copy"]).all()


def test_conflicting_copies_share_sensors_but_not_label(demo) -> None:
    readings, truth = demo
    conflict = _faulty(truth, "conflict")
    copies = readings.join(conflict.select("reading_id", "source_id"), on="reading_id")
    sources = readings.join(copies.select(pl.col("source_id").alias("reading_id")),
                            on="reading_id")
    left = copies.sort("source_id")
    right = sources.sort("reading_id")
    assert left.select(FEATURES).equals(right.select(FEATURES))
    assert (left["condition"] != right["condition"]).all()
    assert (right["condition"] == conflict.sort("source_id")["original_label"]).all()


def test_duplicates_found_by_polars_are_exactly_the_copies(demo) -> None:
    """Polars' own duplicate detection must see the injected copies and nothing else."""
    readings, truth = demo
    copies = truth.filter(pl.col("fault").is_in(["re-sent", "conflict"]))
    involved = set(copies["reading_id"]) | set(copies["source_id"])
    dup = readings.filter(readings.select(FEATURES).is_duplicated())
    assert set(dup["reading_id"]) == involved
    same_label = readings.filter(readings.select(FEATURES + ["condition"]).is_duplicated())
    resent = _faulty(truth, "re-sent")
    assert set(same_label["reading_id"]) == set(resent["reading_id"]) | set(resent["source_id"])


def test_label_flips_recorded_as_given(demo) -> None:
    readings, truth = demo
    flips = _faulty(truth, "label-flip")
    assert (flips["given_label"] != flips["original_label"]).all()
    given = readings.join(flips, on="reading_id")
    assert (given["condition"] == given["given_label"]).all()
    others = truth.filter(pl.col("fault").is_in(["schema", "re-sent"]))
    assert (others["given_label"] == others["original_label"]).all()


def test_pandera_flags_exactly_the_schema_rows(demo, schema_module, tmp_path) -> None:
    """pandera's lazy validation (polars backend) is the outside judge of the broken rows."""
    paths = demo_data.write(tmp_path, rows=ROWS, seed=11)
    readings = pl.read_csv(paths["readings"])
    assert readings.equals(demo[0])  # the CSV round trip loses nothing
    clean_ids = _faulty(demo[1], "schema")["reading_id"]
    clean = readings.filter(~pl.col("reading_id").is_in(clean_ids.implode()))
    schema_module.Readings.validate(clean, lazy=True)
    with pytest.raises(pandera.errors.SchemaErrors) as caught:
        schema_module.Readings.validate(readings, lazy=True)
    rows = caught.value.failure_cases["index"].drop_nulls().unique().to_list()
    assert set(readings[rows]["reading_id"]) == set(clean_ids)


def test_only_invented_names(demo, schema_module) -> None:
    readings, _ = demo
    assert set(readings["site"]) <= set(demo_data.SITES) == set(schema_module.SITES)
    assert set(readings["pump_model"]) <= set(demo_data.MODELS) == set(schema_module.MODELS)
    assert set(readings["condition"]) == set(schema_module.CONDITIONS)


def test_sensor_signatures_point_the_expected_way(demo) -> None:
    """Physics sketch from the brief: each fault moves its sensors in its own direction."""
    clean = demo[0].join(demo[1].select("reading_id"), on="reading_id", how="anti")
    med = clean.group_by("condition").agg(pl.col(SENSORS).median())
    val = {row["condition"]: row for row in med.iter_rows(named=True)}
    assert val["bearing-wear"]["vibration_mm_s"] > val["healthy"]["vibration_mm_s"]
    assert val["bearing-wear"]["bearing_temp_c"] > val["healthy"]["bearing_temp_c"]
    assert val["cavitation"]["suction_kpa"] < val["healthy"]["suction_kpa"]
    ratio = clean.with_columns(r=pl.col("flow_m3_h") / pl.col("motor_current_a"))
    per = dict(ratio.group_by("condition").agg(pl.col("r").median()).iter_rows())
    assert per["seal-leak"] < per["healthy"] and per["impeller-damage"] < per["healthy"]


def test_classes_separable_with_overlap(demo) -> None:
    """A 5-NN classifier (scikit-learn) beats the majority baseline yet stays imperfect.

    Fact of the trade (common practice, no source): informative features beat the
    majority-class baseline; overlapping classes keep accuracy below 1.
    """
    clean = demo[0].join(demo[1].select("reading_id"), on="reading_id", how="anti")
    x = clean.select(SENSORS).to_numpy()
    x = (x - x.min(axis=0)) / np.ptp(x, axis=0)
    y = clean["condition"].to_numpy()
    folds = StratifiedKFold(5, shuffle=True, random_state=0)
    acc = cross_val_score(KNeighborsClassifier(5), x, y, cv=folds).mean()
    baseline = clean["condition"].value_counts(normalize=True)["proportion"].max()
    assert baseline + 0.1 < acc < 1.0


@pytest.mark.parametrize("rows", [99, 0, 2.5, True])
def test_too_few_rows_is_a_usage_error(rows) -> None:
    with pytest.raises(UsageError, match="at least 100 rows"):
        demo_data.generate(rows=rows)


def test_unknown_format_is_a_usage_error(tmp_path) -> None:
    with pytest.raises(UsageError, match="'csv' or 'parquet'"):
        demo_data.write(tmp_path, rows=200, fmt="xlsx")
