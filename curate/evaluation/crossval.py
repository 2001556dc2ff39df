"""Leakage-free evaluation: does the curated training set classify untouched test folds as well?

Stratified k-fold cross-validation, repeated with seeds ``seed, seed + 1, ...``.
In every fold the space (scaling, and for HVDM the class-conditional tables) is
fitted on the training rows only, the pipeline's stages run on the training
rows only, and the test fold is never curated. Each model is scored twice on
the same folds, trained on all training rows and on the curated ones, so the
comparison is paired; the difference is tested with the corrected resampled
t-test of Nadeau and Bengio (2003).

The k-nearest-neighbour classifier votes among neighbours found by
:func:`curate.neighbours.kneighbors`, the engine the stages use: one search with
the largest k serves every k, serves every distance curate offers (missing
values included) and is the search that is timed. Its votes follow
scikit-learn's ``KNeighborsClassifier`` (uniform weights, ties to the smallest
class); the tests check its fold scores against ``cross_val_score``. Any other
scikit-learn classifier, named by import path, is fitted on the embedded matrix.

A stage that removes more of a class than its ``max_removed_share`` stops a
run; in an evaluation it is counted (``over_limit``) and the fold goes on, since
nothing is written and the point is to measure what the stages do.
"""

from __future__ import annotations

import json
import time
import warnings
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import polars as pl

from curate.errors import InputError, UsageError
from curate.evaluation import stats
from curate.evaluation.detection import detection_by_stage, recall_by_fault
from curate.evaluation.models import estimator, fit_predict, knn_votes, metrics, stack
from curate.evaluation.stats import KNN, FoldOutcome, Key
from curate.io.output_checks import spec_inputs
from curate.io.outputs import OutputFile, claim_output
from curate.io.read import read_input
from curate.methods import METHODS
from curate.pipeline.loop import execute
from curate.pipeline.prepare import prepare
from curate.pipeline.records import Prepared
from curate.pipeline.stage import run_step
from curate.report.html import render_run
from curate.settings import K_GRID, Spec
from curate.space.build import fit_space
from curate.space.points import Space
from curate.spec import load_spec

__all__ = ["evaluate", "evaluate_prepared", "evaluation_files", "read_faults", "write_evaluation"]

TEST_NAME = ("corrected resampled t-test (Nadeau and Bengio 2003), two-sided, on per-fold "
             "accuracy, curated minus uncurated")


@dataclass(frozen=True)
class _Setup:
    """Everything every fold needs, fixed before the first fold."""

    prep: Prepared
    frame: pl.DataFrame
    ids: list[Any]
    ks: tuple[int, ...]
    model: tuple[str, dict[str, Any]] | None
    noise: float
    towards: Any
    faults: np.ndarray | None
    seed: int


def _fold_spaces(setup: _Setup, train: np.ndarray, test: np.ndarray,
                 train_labels: np.ndarray) -> tuple[Space, Space]:
    """Fit the space on the training rows (and their labels) only; embed both parts with it."""
    spec = setup.prep.spec
    part_train, part_test = setup.frame[train], setup.frame[test]
    ids_train, ids_test = [setup.ids[i] for i in train], [setup.ids[i] for i in test]
    fitted = fit_space(part_train, setup.prep.kinds, spec.space, ids_train, spec.run.engine,
                       labels=train_labels)
    return fitted.space, fitted.transform(part_test, ids_test)


def _curate(setup: _Setup, space: Space, labels: np.ndarray, ids: list[Any],
            protected: np.ndarray) -> tuple[np.ndarray, list[np.ndarray], list[str]]:
    """Run the stages on one fold's training rows, as a run would.

    Returns the kept rows, each stage's removals and the stages that went over
    their ``max_removed_share``. A run stops there; an evaluation only
    measures, so it goes on and reports the breach.
    """
    spec = setup.prep.spec
    active = np.arange(space.n)
    removed: list[np.ndarray] = []
    over: list[str] = []
    for stage in spec.stages:
        stage_labels = labels[active]
        step = run_step(stage, space.subset(active), stage_labels,
                        np.flatnonzero(np.isin(active, protected)), spec.run.seed,
                        [ids[a] for a in active])
        if step.over_limit is not None:
            over.append(stage.name)
        sel = step.selection
        removed.append(active[sel.removed])
        active = active[sel.kept]
    return np.sort(active), removed, over


def _fold(setup: _Setup, repeat: int, number: int, train: np.ndarray,
          test: np.ndarray) -> FoldOutcome:
    """Curate one fold's training part and score every model on its untouched test part."""
    labels = setup.prep.space_labels
    classes = np.unique(labels)
    y_train, y_test, flipped = labels[train], labels[test], None
    if setup.noise > 0:
        y_train, flipped = stats.flip_labels(y_train, setup.noise, [setup.seed, repeat, number],
                                             setup.towards)
    space_train, space_test = _fold_spaces(setup, train, test, y_train)
    kept, removed, over = _curate(setup, space_train, y_train, [setup.ids[i] for i in train],
                                  np.flatnonzero(np.isin(train, setup.prep.protected)))
    stacked = stack(space_train, space_test)
    scores: dict[Key, dict[str, float]] = {}
    clipped: set[Key] = set()
    lookup: dict[bool, float] = {}
    for curated, reference in ((False, np.arange(len(train))), (True, kept)):
        votes, lookup[curated], short = knn_votes(setup.ks, stacked, len(train), reference,
                                             np.searchsorted(classes, y_train), len(classes))
        for k, predicted in votes.items():
            scores[(KNN, k, curated)] = metrics(y_test, classes[predicted])
        clipped |= {(KNN, k, curated) for k in short}
        if setup.model is not None:
            predicted = fit_predict(*setup.model, setup.seed, space_train.matrix[reference],
                                    y_train[reference], space_test.matrix)
            scores[(setup.model[0], None, curated)] = metrics(y_test, predicted)
    faults = None if setup.faults is None else setup.faults[train]
    return FoldOutcome(len(train), len(test), len(kept),
                       stats.majority_accuracy(labels[train], y_test), scores, clipped, lookup,
                       removed, flipped, faults, tuple(over))


def _summarise(setup: _Setup, folds: list[FoldOutcome], n_folds: int, repeats: int,
               truth: str | Path | None, seconds: float) -> dict[str, Any]:
    """Everything the folds measured, as one JSON-safe dictionary."""
    prep = setup.prep
    ratio = float(np.mean([f.n_test for f in folds]) / np.mean([f.n_train for f in folds]))
    keys = [(KNN, k) for k in setup.ks] + ([(setup.model[0], None)] if setup.model else [])
    records = [stats.fold_record(folds, (name, k, c), ratio)
               for name, k in keys for c in (False, True)]
    names = [stage.name for stage in prep.spec.stages]
    result: dict[str, Any] = {
        "pipeline": prep.spec.source, "input": str(prep.spec.input.path),
        "folds": n_folds, "repeats": repeats, "seed": setup.seed, "rows": len(setup.ids),
        "rows_quarantined": int((~prep.valid).sum()), "ks": list(setup.ks),
        "model": setup.model[0] if setup.model else None,
        "model_params": setup.model[1] if setup.model else {}, "test": TEST_NAME,
        "baseline_accuracy": float(np.mean([f.baseline for f in folds])),
        "kept_share": float(np.mean([f.kept / f.n_train for f in folds])),
        "lookup": {"k": max(setup.ks),
                   "full_ms_per_1000": float(np.mean([f.lookup_ms[False] for f in folds])),
                   "curated_ms_per_1000": float(np.mean([f.lookup_ms[True] for f in folds]))},
        "best_k": stats.best_k(records), "results": records, "noise": None, "truth": None,
        "over_limit": {name: sum(name in f.over_limit for f in folds) for name in names
                       if any(name in f.over_limit for f in folds)},
    }
    meant = [METHODS[stage.method].catches for stage in prep.spec.stages]
    if setup.noise > 0:
        result["noise"] = {"rate": setup.noise, "towards": setup.towards,
                           "flipped": int(sum(int(f.flipped_rows().sum()) for f in folds)),
                           **detection_by_stage(folds, FoldOutcome.flip_kinds, names, meant)}
    if setup.faults is not None:
        kinds, counts = np.unique(setup.faults[setup.faults != ""], return_counts=True)
        result["truth"] = {"file": str(truth), "faults": dict(zip(kinds.tolist(), counts.tolist(),
                                                                   strict=True)),
                           **detection_by_stage(folds, FoldOutcome.fault_kinds, names, meant),
                           "by_fault": recall_by_fault(folds)}
    result["seconds"] = round(seconds, 3)
    return stats.json_safe(result)


def read_faults(path: str | Path, prep: Prepared) -> np.ndarray:
    """Fault kind of each row that passed the schema, from a ground-truth table ("" if none).

    The table (CSV or Parquet) needs the input's id column (``row_id`` when the
    input has none) and a ``fault`` column; one row per faulty input row.
    """
    if not Path(path).exists():
        raise UsageError(f"truth file {path} (--truth) does not exist",
                         hint="give the table of known faulty rows: CSV or Parquet with the "
                              "input's id column and 'fault'")
    table = read_input(Path(path))
    id_column = prep.spec.input.id or "row_id"
    missing = [c for c in (id_column, "fault") if c not in table.columns]
    if missing:
        raise InputError(f"truth file {path} has no column {', '.join(map(repr, missing))}",
                         hint=f"give one row per faulty row, with columns {id_column!r} and 'fault'")
    marks = table.select(pl.col(id_column).cast(pl.String).alias("key"),
                         pl.col("fault").cast(pl.String)).unique("key", keep="first",
                                                                 maintain_order=True)
    ids = prep.ids.gather(prep.valid_positions).cast(pl.String).alias("key")
    joined = ids.to_frame().join(marks, on="key", how="left", maintain_order="left")
    return joined["fault"].fill_null("").to_numpy().astype(str)


def _check_request(prep: Prepared, folds: int, repeats: int, ks: Sequence[int], noise: float,
                   towards: Any) -> None:
    if folds < 2 or repeats < 1:
        raise UsageError(f"--folds {folds} --repeats {repeats}: need 2 or more folds and 1 or "
                         "more repeats", hint="use --folds 10 --repeats 1 (the defaults)")
    if not ks or min(ks) < 1:
        raise UsageError(f"k values {list(ks)} must be integers >= 1", hint="use --k 1,3,5")
    if not 0.0 <= noise < 1.0:
        raise UsageError(f"--inject-noise {noise} is not a share from 0 to below 1",
                         hint="give a share such as 0.1 (10% of training labels flipped)")
    values = np.unique(prep.space_labels.astype(str))
    if folds > len(prep.space_labels):
        raise UsageError(f"--folds {folds}: the input has only {len(prep.space_labels)} rows "
                         "that passed its schema, fewer than the folds",
                         hint=f"use --folds {max(2, min(10, len(prep.space_labels)))} or fewer")
    if towards is not None and str(towards) not in values.tolist():
        raise UsageError(f"--noise-towards {towards!r} is not a class of the input",
                         hint=f"use one of: {', '.join(values.tolist()[:10])}")


def _check_ks(rows: int, folds: int, ks: Sequence[int]) -> None:
    """Refuse a k larger than every training part, before any fold runs.

    Up to the largest part a k is served: where a part is smaller, all its rows vote.
    """
    train = rows - rows // folds  # stratified test folds hold at least floor(rows / folds) rows
    if ks and max(ks) > train:
        raise UsageError(f"--k {max(ks)} asks for more neighbours than the {train} training rows "
                         f"a fold has at most ({rows} rows, {folds} folds)",
                         hint=f"use k values up to {train}, such as --k 1,3,5")


def _valid_frame(prep: Prepared) -> pl.DataFrame:
    """The rows that passed the schema, as the schema returned them (the frame the space saw)."""
    return prep.checked


def evaluate_prepared(prep: Prepared, *, folds: int = 10, repeats: int = 1,
                      ks: Sequence[int] = K_GRID, model: str | None = None,
                      model_params: Mapping[str, Any] | None = None, inject_noise: float = 0.0,
                      noise_towards: Any = None, truth: str | Path | None = None, seed: int = 0,
                      progress: Callable[[str], None] | None = None) -> dict[str, Any]:
    """Evaluate an already prepared pipeline; see :func:`evaluate` for the parameters."""
    _check_request(prep, folds, repeats, ks, inject_noise, noise_towards)
    _check_ks(len(prep.space_labels), folds, ks)
    params = dict(model_params or {})
    if model is not None:
        estimator(model, params, seed)  # a bad name or parameter fails before any fold runs
    setup = _Setup(prep, _valid_frame(prep), prep.ids.gather(prep.valid_positions).to_list(),
                   tuple(sorted(set(ks))), (model, params) if model else None, inject_noise,
                   noise_towards, None if truth is None else read_faults(truth, prep), seed)
    say = progress or (lambda _message: None)
    started = time.perf_counter()
    labels = prep.space_labels
    outcomes: list[FoldOutcome] = []
    tests: list[np.ndarray] = []
    for repeat in range(repeats):
        for number, (train, test) in enumerate(_splits(labels, folds, seed + repeat)):
            say(f"repeat {repeat + 1}/{repeats}, fold {number + 1}/{folds}: "
                f"{len(train)} training rows, {len(test)} test rows")
            outcomes.append(_fold(setup, repeat, number, train, test))
            tests.append(test)
    result = _summarise(setup, outcomes, folds, repeats, truth, time.perf_counter() - started)
    result["warnings"] = _missing_classes(labels, tests, folds)
    return result


def _splits(labels: np.ndarray, folds: int, seed: int) -> list[tuple[np.ndarray, np.ndarray]]:
    """scikit-learn's shuffled StratifiedKFold; its warning about a class with fewer rows than
    folds is replaced by the evaluation's own ``warnings`` (see :func:`_missing_classes`)."""
    from sklearn.model_selection import StratifiedKFold

    split = StratifiedKFold(n_splits=folds, shuffle=True, random_state=seed)
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="The least populated class")
        return list(split.split(np.zeros((len(labels), 1)), labels))


def _missing_classes(labels: np.ndarray, tests: list[np.ndarray], folds: int) -> list[str]:
    """One sentence per class that some test folds hold no row of.

    Examples
    --------
    >>> _missing_classes(np.array(["a"] * 4 + ["b"]), [np.array([0, 4]), np.array([1, 2, 3])], 2)
    ["class 'b' has 1 row, fewer than the 2 folds: 1 of the 2 test folds holds none of its rows"]
    """
    text = labels.astype(str)
    values, counts = np.unique(text, return_counts=True)
    notes = []
    for value, count in zip(values.tolist(), counts.tolist(), strict=True):
        lacking = sum(not np.any(text[test] == value) for test in tests)
        if lacking:
            notes.append(f"class {value!r} has {count} row{'' if count == 1 else 's'}, fewer "
                         f"than the {folds} folds: {lacking} of the {len(tests)} test folds "
                         f"hold{'s' if lacking == 1 else ''} none of its rows")
    return notes


def evaluate(spec: Spec | str | Path, *, folds: int = 10, repeats: int = 1,
             ks: Sequence[int] = K_GRID, model: str | None = None,
             model_params: Mapping[str, Any] | None = None, inject_noise: float = 0.0,
             noise_towards: Any = None, truth: str | Path | None = None, seed: int = 0,
             progress: Callable[[str], None] | None = None,
             trust_code: Iterable[str | Path] = ()) -> dict[str, Any]:
    """Measure, without leakage, what the pipeline's curation does to classification.

    Parameters
    ----------
    spec : Spec or path of a pipeline file
    folds, repeats : int
        Stratified ``folds``-fold cross-validation, repeated with seeds
        ``seed``, ``seed + 1``, ... (scikit-learn's ``StratifiedKFold`` with
        shuffling).
    ks : sequence of int
        k values of the nearest-neighbour classifier (default 1, 3, ..., 25).
    model, model_params : str and mapping, optional
        A classifier to score besides kNN, by import path (for example
        ``"sklearn.ensemble.RandomForestClassifier"``), built with these
        parameters and seeded with ``seed`` when it takes ``random_state``.
    inject_noise : float
        Share of each fold's training labels flipped (seeded) before curation;
        ``noise_towards`` names the class they flip to (default: any other).
    truth : path, optional
        A table of known faulty rows (id column and ``fault``), scored like the
        flipped rows.
    seed : int
        Seed of the folds and of the label flips.
    trust_code : folders and module names, optional
        Where the pipeline file's schema module may load from besides the
        pipeline file's folder (as ``--trust-code``; see :mod:`curate.io.trust`).

    Returns
    -------
    dict with ``folds``, ``repeats``, ``baseline_accuracy``, ``results`` (one
    record per model, k and curated or not), ``best_k``, ``lookup``,
    ``over_limit`` (stage name: folds over its limit), ``noise`` and ``truth``
    (None unless asked) and ``warnings`` (sentences, such as a class with
    fewer rows than folds that some test folds lack), all JSON-safe.

    Examples
    --------
    >>> import tempfile
    >>> from sklearn.datasets import load_iris
    >>> from curate.spec import spec_from_dict
    >>> folder = Path(tempfile.mkdtemp())
    >>> load_iris(as_frame=True).frame.to_csv(folder / "iris.csv", index=False)
    >>> spec = spec_from_dict({"input": {"path": "iris.csv", "label": "target"},
    ...                        "stages": [{"method": "enn", "k": 3}]}, base=folder)
    >>> out = evaluate(spec, folds=5, ks=[1, 5])
    >>> [(r["k"], r["curated"]) for r in out["results"]]
    [(1, False), (1, True), (5, False), (5, True)]
    >>> round(out["baseline_accuracy"], 3)
    0.333
    """
    if not isinstance(spec, Spec):
        spec = load_spec(spec, trust_code=trust_code)
    return evaluate_prepared(prepare(spec), folds=folds, repeats=repeats, ks=ks, model=model,
                             model_params=model_params, inject_noise=inject_noise,
                             noise_towards=noise_towards, truth=truth, seed=seed,
                             progress=progress)


def write_evaluation(folder: str | Path, result: dict[str, Any], prep: Prepared,
                     overwrite: bool = False) -> None:
    """Write ``evaluation.json`` and ``report.html`` (the full run's report plus the evaluation).

    The folder appears complete or not at all, and replaces with ``overwrite``
    only a folder curate wrote (see :mod:`curate.io.outputs`).
    """
    with claim_output(folder, overwrite=overwrite, inputs=spec_inputs(prep.spec)) as claim:
        claim.write_folder(evaluation_files(result, prep), kind="evaluation")


def evaluation_files(result: dict[str, Any], prep: Prepared) -> list[OutputFile]:
    """The files of an evaluation folder; the run on all rows is executed here, for the
    report's pictures of what the pipeline removes."""
    texts = {"evaluation.json": json.dumps(result, indent=2) + "\n",
             "report.html": render_run(execute(prep), evaluation=result)}
    return [OutputFile.text(name, text) for name, text in texts.items()]
