"""Target noise: find likely wrong numeric targets with models that never saw the row.

The regression form of the ``committee`` filter (Brodley and Friedl 1999,
carried over from classes to numbers): rows are split into ``folds`` seeded
folds stratified by the target's quantile bins; every member of a committee of
different regressors is fitted on the other folds and predicts the held-out
fold. A member disagrees with a row when its prediction lies more than
``threshold`` standard deviations of the whole target away from the row's
target; the row is flagged when all members (``consensus``) or more than half
of them (``majority``) disagree and the committee's mean prediction is that
far away too.

Every row gets a **doubt** score, the regression form of the classification
committee's: the absolute residual of its target against the committee's mean
out-of-fold prediction, in standard deviations of the whole target (0 when the
committee predicts the target exactly; 3 when it is three standard deviations
off). ``action`` = ``remove``, ``relabel`` (keep the row and suggest the
committee's mean prediction in ``suggested_label``) or ``report``.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from curate.errors import UsageError, counted
from curate.methods._flags import ACTIONS, Flags
from curate.methods._members import DEFAULT_MODELS, Member, estimator, parse_models
from curate.methods._members import describe_models as _describe
from curate.methods._members import models_problem as _problem
from curate.methods._oof import coordinates, knn_out_of_fold, sample_rows
from curate.methods._targets import (
    check_targets,
    quantile_bins,
    regression_folds,
    scaled_residuals,
    target_spread,
    value_writer,
)
from curate.methods.base import MethodInfo, Selection
from curate.settings import Param
from curate.space.points import Space

__all__ = ["REG_COMMITTEE", "out_of_fold_predictions", "reg_committee"]

FIT_ROWS = 20_000  # as the classification committee: models other than knn see a sample
_BINS = 10  # quantile bins of the target that stratify the folds and the fit sample


def _fold_of(targets: np.ndarray, folds: int, seed: int) -> np.ndarray:
    fold = np.empty(len(targets), dtype=np.int64)
    for number, (_, test) in enumerate(regression_folds(targets, folds, seed)):
        fold[test] = number
    return fold


def out_of_fold_predictions(space: Space, targets: np.ndarray, members: tuple[Member, ...],
                            fold: np.ndarray, seed: int, fit_rows: int = 0
                            ) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
    """Every member's out-of-fold prediction of every row: ``(predictions, dist, nbr)``.

    ``predictions[m, i]`` comes from member ``m`` fitted on the folds other than
    row ``i``'s, as scikit-learn's ``cross_val_predict`` with the same folds;
    the k-NN member predicts the mean target of the row's k nearest rows among
    the other folds (scikit-learn's ``KNeighborsRegressor``, uniform weights),
    whose positions and distances are returned (None without that member).

    Examples
    --------
    >>> s = Space.from_matrix([[0.0], [1.0], [2.0], [3.0]])
    >>> members = parse_models([{"model": "knn", "params": {"k": 1}}], regression=True)
    >>> out_of_fold_predictions(s, np.array([1.0, 2.0, 3.0, 4.0]), members,
    ...                         np.array([0, 1, 0, 1]), seed=0)[0].tolist()
    [[2.0, 1.0, 2.0, 3.0]]
    """
    y = np.asarray(targets, dtype=np.float64)
    X = coordinates(space)
    bins = quantile_bins(y, _BINS)[0]
    predictions = np.zeros((len(members), len(y)))
    dist = nbr = None
    everyone = np.arange(len(y))
    for m, member in enumerate(members):
        if member.is_knn:
            dist, nbr = knn_out_of_fold(space, int(member.params["k"]), fold)
            predictions[m] = y[nbr].mean(axis=1)
            continue
        for f in range(int(fold.max()) + 1):
            test = everyone[fold == f]
            train = sample_rows(everyone[fold != f], bins, fit_rows, seed, f)
            model = estimator(member, seed=seed, where=f"models[{m + 1}]")
            model.fit(X[train], y[train])
            predictions[m, test] = np.asarray(model.predict(X[test]), dtype=np.float64)
    return predictions, dist, nbr


def reg_committee(space: Space, targets: np.ndarray, *, removable: np.ndarray, seed: int = 0,
                  models: Any = DEFAULT_MODELS, folds: int = 5, vote: str = "majority",
                  threshold: float = 2.0, fit_rows: int = FIT_ROWS, action: str = "remove",
                  unit: str = "") -> Selection:
    """Flag rows whose target a committee of regressors, fitted without them, does not expect.

    A member disagrees with a row when ``|y - its prediction| > threshold *
    sd(y)``; the row is flagged when every member (``consensus``) or more than
    half of them (``majority``) disagree and the committee's mean prediction is
    also more than ``threshold`` standard deviations away. Every row gets a
    doubt score ``|y - mean prediction| / sd(y)``.

    Why the defaults (majority, ``threshold = 2``): with 5% of targets moved by 3 to
    5 standard deviations on scikit-learn's diabetes table and palmerpenguins' body
    mass (seeds 0 to 4, ``benchmarks/regression_outliers.py``), they flagged with
    precision 0.98 and 1.00 and found 93% and 100% of the moved rows (consensus:
    precision 1.00, recall 0.88 and 0.96); a threshold of 3 found under half (the
    moves themselves inflate the standard deviation), and RegENN's defaults found 65%
    and 82% at precision 0.7.

    When not to use it: where the target has genuine extreme values that the
    features do not explain (a rare, real event looks the same as a typing
    slip); start with ``action = "report"`` and read the doubt's spread.

    Examples
    --------
    Targets twice the position, one of them typed as 300:

    >>> s = Space.from_matrix([[float(v)] for v in range(40)])
    >>> y = 2.0 * np.arange(40.0)
    >>> y[7] = 300.0
    >>> sel = reg_committee(s, y, removable=np.ones(40, bool), folds=4, threshold=2.0,
    ...                     models=["knn", "linear"], unit="h")
    >>> sel.removed.tolist(), round(float(sel.scores["doubt"][7]), 1)
    ([7], 6.1)
    >>> sel.detail[0]
    "its target 300.0 h is 6.1 standard deviations of the target (46.6 h) from the \
committee's out-of-fold prediction 13.8 h; 2 of 2 models predict it more than 2 standard \
deviations away (knn 13.6 h, linear 14.0 h)"
    """
    y = check_targets(targets, where="committee")
    members = parse_models(models, regression=True)
    if space.n == 0:
        return Flags(0, np.zeros(0)).selection(action, {"folds": folds, "vote": vote},
                                               {"doubt": np.zeros(0)})
    if space.n < folds:
        raise UsageError(f"committee: folds = {folds}, but the stage has only "
                         f"{counted(space.n, 'row')}",
                         hint=f"lower folds to {space.n}" if space.n >= 2 else
                         "a committee cannot judge fewer than two rows")
    fold = _fold_of(y, folds, seed % 2**32)
    predictions, dist, nbr = out_of_fold_predictions(space, y, members, fold, seed % 2**32,
                                                     fit_rows)
    spread = target_spread(y)
    mean = predictions.mean(axis=0)
    scores = scaled_residuals(y, mean, spread)
    off = (np.abs(predictions - y) > threshold * spread).sum(axis=0)
    count = len(members)
    flagged = (off > count / 2 if vote == "majority" else off == count) & (scores > threshold)
    write = value_writer(y, unit)
    out = Flags(space.n, np.zeros(0))
    for i in np.flatnonzero(flagged & removable):
        said = ", ".join(f"{m.name} {write(p)}" for m, p in zip(members, predictions[:, i],
                                                                 strict=True))
        out.add_value(int(i), float(mean[i]), "committee-disagrees",
                      f"its target {write(y[i])} is {scores[i]:.1f} standard deviations of the "
                      f"target ({write(spread)}) from the committee's out-of-fold prediction "
                      f"{write(mean[i])}; {off[i]} of {count} models predict it more than "
                      f"{threshold:g} standard deviations away ({said})",
                      **({} if nbr is None or dist is None else
                         {"neighbours": nbr[i], "distances": dist[i]}))
    info = {"models": _describe(members), "folds": folds, "vote": vote, "threshold": threshold,
            "spread": spread, "mean_doubt": float(scores.mean()) if len(scores) else 0.0}
    return out.selection(action, info, {"doubt": scores})


REG_COMMITTEE = MethodInfo(
    key="committee", name="ensemble filter for numeric targets (out-of-fold residuals)",
    family="label noise", reference="Brodley and Friedl 1999, carried over to regression",
    purpose="flag likely wrong targets: rows whose target a committee of different regressors, "
            "each fitted without them, predicts more than threshold standard deviations away; "
            "score every row's doubt",
    func=reg_committee, catches=("outlier",),
    params=(Param("models", (list, tuple), DEFAULT_MODELS,
                  "the committee: 'knn' (mean target of the k nearest rows in curate's space), "
                  "'trees' (random forest), 'linear' (ridge regression), 'tree' (one regression "
                  "tree), an import path of a regressor, or { model = ..., params = { ... } }",
                  check=lambda v: _problem(v, regression=True) is None,
                  explain=lambda v: _problem(v, regression=True),
                  check_says="each a built-in name, an importable regressor, or a table with "
                             "model and params"),
            Param("folds", int, 5, "folds stratified by target quantiles; each member is "
                  "fitted on all but one", low=2),
            Param("vote", str, "majority", "majority: flagged when more than half of the "
                  "models predict the target more than threshold away; consensus: when all do",
                  choices=("majority", "consensus")),
            Param("threshold", float, 2.0, "how many standard deviations of the whole target "
                  "a prediction may be off", check=lambda v: v > 0, check_says="greater than 0"),
            Param("fit_rows", int, FIT_ROWS, "models other than knn learn from a seeded sample "
                  "of at most this many of their training rows, stratified by target "
                  "quantiles (0: all)", low=0),
            Param("action", str, "remove", "remove the flagged rows; relabel: keep them and "
                  "suggest the committee's mean prediction in a new column suggested_label; "
                  "report: keep them and only record them", choices=ACTIONS),
            Param("unit", str, "", "unit of the target, written after its values in the audit "
                  "(such as \"h\")")),
    reasons={"committee-disagrees": "every (or most) of the committee's regressors, fitted "
                                    "without the row, predict its target more than threshold "
                                    "standard deviations away"},
)
