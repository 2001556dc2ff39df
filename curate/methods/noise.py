"""Label noise: find likely mislabels with models that never saw the row they judge.

Editing methods (ENN and its relatives) let a row's neighbours vote; where
classes overlap, most of the rows they remove carry correct labels. The
methods here ask a committee of different classifiers, each fitted without
the row (out of fold), and act only where the committee agrees:

* ``committee``: the majority or consensus filter of Brodley and Friedl (1999);
* ``ipf``: the iterative partitioning filter of Khoshgoftaar and Rebours (2007);
* ``class-thresholds``: per-class thresholds on out-of-fold probabilities, as
  in the confident learning of Northcutt, Jiang and Chuang (2021).

Every one scores each row with its **doubt**: one minus the out-of-fold
probability of its own label, averaged over the committee
(``Selection.scores["doubt"]``), and takes ``action`` = ``remove``,
``relabel`` or ``report`` (see :mod:`curate.methods._flags`).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from curate.methods._confident import confident_joint, threshold_flags
from curate.methods._flags import ACTIONS, Flags, describe_vote, share
from curate.methods._members import DEFAULT_MODELS, describe_models, models_problem, parse_models
from curate.methods._oof import (
    OutOfFold,
    coordinates,
    doubt,
    make_folds,
    member_proba,
    out_of_fold,
    sample_rows,
)
from curate.methods.base import MethodInfo, Selection, encode
from curate.settings import Param
from curate.space.points import Space

__all__ = ["CLASS_THRESHOLDS", "COMMITTEE", "IPF", "class_thresholds", "committee",
           "confident_joint", "ipf", "threshold_flags"]  # the last two from _confident


# IPF fits every member on every part in every round: cheap members (see ipf's docstring).
IPF_MODELS = ("knn", "linear")
# Models other than the k-NN vote learn from at most this many rows per fold: a forest of
# 100 trees grown on 800,000 rows takes most of an hour on 2 cores, and a few dozen
# parameters are estimated as well from 20,000 (see benchmarks/bench_noise.py --rows).
FIT_ROWS = 20_000


def _seed(seed: int) -> int:
    """A seed scikit-learn accepts (0 to 2**32 - 1); the same for the same stage seed."""
    return seed % 2**32


def _committee_oof(space: Space, codes: np.ndarray, names: np.ndarray, models: Any,
                   folds: int, seed: int, method: str, fit_rows: int) -> OutOfFold:
    members = parse_models(models)
    fold = make_folds(codes, folds, _seed(seed), names, method)
    return out_of_fold(space, codes, len(names), members, fold, _seed(seed), fit_rows)


def _evidence(oof: OutOfFold, i: int) -> dict[str, Any]:
    if oof.neighbours is None or oof.distances is None:
        return {}
    return {"neighbours": oof.neighbours[i], "distances": oof.distances[i]}


def _info(models: Any, folds: int, scores: np.ndarray, **more: Any) -> dict[str, Any]:
    return {"models": describe_models(parse_models(models)), "folds": folds,
            "mean_doubt": float(scores.mean()) if len(scores) else 0.0, **more}


def _one_class(n: int, names: np.ndarray, action: str, info: dict[str, Any]) -> Selection:
    """One class only: no other label to suggest, nothing to doubt."""
    return Flags(n, names).selection(action, info, {"doubt": np.zeros(n)})


def committee(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
              models: Any = DEFAULT_MODELS, folds: int = 5, vote: str = "consensus",
              min_doubt: float = 0.75, fit_rows: int = FIT_ROWS,
              action: str = "remove") -> Selection:
    """Brodley and Friedl's ensemble filter: flag rows the out-of-fold committee gets wrong.

    Each member is fitted on the other folds and predicts the rows of the
    held-out fold (its most probable class; ties go to the first class in
    sorted order). A row is flagged when more than half of the members
    (``vote = "majority"``) or all of them (``"consensus"``) predict another
    label than its own, and its doubt is at least ``min_doubt`` (the
    committee's mean probability of its label at most ``1 - min_doubt``);
    ``min_doubt = 0`` is Brodley and Friedl's filter as published. The
    suggested label is the one most members vote for (ties: the higher mean
    probability). Every row gets a doubt score.

    Why the defaults (consensus, ``min_doubt = 0.75``): where classes overlap,
    correct rows near the border are often outvoted, but rarely with the
    whole committee sure of it; on the open tables of
    ``benchmarks/bench_noise.py`` they lift mean precision from 0.60 (recall 0.95) to 0.81
    at recall 0.84 (10% flipped labels).

    When not to use it: on tables with few rows per class (every class needs
    ``folds`` rows and each member must learn from the rest), or where
    classes overlap by nature and the "wrong" rows are real cases; use
    ``action = "report"`` first and read the doubt distribution.

    Examples
    --------
    >>> x = [[0.0], [0.1], [0.2], [0.3], [0.4], [5.0], [5.1], [5.2], [5.3], [5.4]]
    >>> y = np.array(["a", "a", "b", "a", "a", "b", "b", "b", "b", "b"])
    >>> sel = committee(Space.from_matrix(x), y, removable=np.ones(10, bool),
    ...                 models=[{"model": "knn", "params": {"k": 3}}], folds=2, min_doubt=0.5)
    >>> sel.removed.tolist(), sel.suggested[2], sel.detail[0]
    ([2], 'a', "out-of-fold probability of its label 'b' 0.33; the committee votes 1 of 1 for 'a'")
    """
    names, codes = encode(labels)
    if len(names) < 2:
        return _one_class(space.n, names, action, {"folds": folds, "vote": vote})
    oof = _committee_oof(space, codes, names, models, folds, seed, "committee", fit_rows)
    mean = oof.mean()
    scores = doubt(mean, codes)
    predicted = oof.predicted()
    members = predicted.shape[0]
    wrong = (predicted != codes).sum(axis=0)
    flagged = wrong > members / 2 if vote == "majority" else wrong == members
    flagged &= scores >= min_doubt
    out = Flags(space.n, names)
    for i in np.flatnonzero(flagged & removable):
        votes = np.bincount(predicted[:, i], minlength=len(names))
        others = [c for c in range(len(names)) if c != codes[i]]
        pick = max(others, key=lambda c: (votes[c], mean[i, c], -c))
        out.add(int(i), pick, "committee-disagrees",
                f"out-of-fold probability of its label {str(names[codes[i]])!r} "
                f"{share(mean[i, codes[i]])}; "
                + describe_vote(votes, names, int(codes[i]), members, "the committee votes"),
                **_evidence(oof, int(i)))
    return out.selection(action, _info(models, folds, scores, vote=vote, min_doubt=min_doubt),
                         {"doubt": scores})


def class_thresholds(space: Space, labels: np.ndarray, *, removable: np.ndarray,
                     seed: int = 0, models: Any = DEFAULT_MODELS, folds: int = 5,
                     fit_rows: int = FIT_ROWS, action: str = "remove") -> Selection:
    """Per-class thresholds on out-of-fold probabilities (Northcutt, Jiang and Chuang 2021).

    The committee's mean out-of-fold probabilities give each class a
    threshold, its mean self-confidence; the rows flagged in each class number
    the confident joint's estimate of its mislabelled rows (see
    :func:`threshold_flags` for which rows, and :func:`confident_joint`).

    When not to use it: with a committee whose probabilities are poor (few
    rows, one weak model): the thresholds and the estimate are only as good
    as those probabilities.

    Examples
    --------
    >>> x = [[v / 10] for v in range(10)] + [[5 + v / 10] for v in range(10)]
    >>> y = np.array(["a"] * 10 + ["b"] * 10)
    >>> y[3] = "b"
    >>> sel = class_thresholds(Space.from_matrix(x), y, removable=np.ones(20, bool),
    ...                        models=[{"model": "knn", "params": {"k": 3}}], folds=2)
    >>> sel.removed.tolist(), sel.suggested[3], sel.info["confident_joint"]
    ([3], 'a', [[7, 0], [1, 10]])
    """
    names, codes = encode(labels)
    if len(names) < 2:
        return _one_class(space.n, names, action, {"folds": folds})
    oof = _committee_oof(space, codes, names, models, folds, seed, "class-thresholds",
                         fit_rows)
    proba = oof.mean()
    scores = doubt(proba, codes)
    t, joint, _ = confident_joint(proba, codes, len(names))
    positions, suggested, candidate, estimated = threshold_flags(proba, codes, removable)
    out = Flags(space.n, names)
    for i, j in sorted(zip(positions.tolist(), suggested.tolist(), strict=True)):
        c = int(codes[i])
        own = (f"out-of-fold probability of its label {str(names[c])!r} {share(proba[i, c])}"
               f", below that class's mean {share(t[c])}")
        said = (f"{own}; {str(names[j])!r} reaches {share(proba[i, j])} (its mean "
                f"{share(t[j])})" if candidate[i] else
                f"{own}, among the lowest of its class; no other class reaches its mean")
        out.add(i, j, "below-class-threshold" if candidate[i] else "low-self-confidence",
                f"{said}; about {estimated[c]} of the {int(np.sum(codes == c))} rows labelled "
                f"{str(names[c])!r} are estimated mislabelled", **_evidence(oof, i))
    info = _info(models, folds, scores, thresholds={str(n): float(v) for n, v in
                                                    zip(names, t, strict=True)},
                 estimated_mislabelled=int(estimated.sum()), confident_joint=joint.tolist())
    return out.selection(action, info, {"doubt": scores})


def _ipf_round(space: Space, X: np.ndarray, codes: np.ndarray, n_classes: int,
               members: Any, active: np.ndarray, part: np.ndarray, seed: int, fit_rows: int
               ) -> tuple[np.ndarray, np.ndarray]:
    """Votes per class of every partition model on every active row, and the mean
    probability per class from the models that were not fitted on the row."""
    votes = np.zeros((len(active), n_classes), dtype=np.int64)
    outside = np.zeros((len(active), n_classes))
    rows = np.arange(len(active))
    for p in range(int(part.max()) + 1):
        for m, member in enumerate(members):
            train = active[part == p] if member.is_knn else \
                sample_rows(active[part == p], codes, fit_rows, seed, p)
            proba = member_proba(member, space, X, codes, n_classes, train, active, seed,
                                 f"models[{m + 1}]")
            np.add.at(votes, (rows, proba.argmax(axis=1)), 1)
            outside[part != p] += proba[part != p]
    return votes, outside / ((int(part.max())) * len(members))


def ipf(space: Space, labels: np.ndarray, *, removable: np.ndarray, seed: int = 0,
        models: Any = IPF_MODELS, folds: int = 5, vote: str = "majority",
        stop_share: float = 0.01, quiet_rounds: int = 3, max_rounds: int = 50,
        fit_rows: int = FIT_ROWS, action: str = "remove") -> Selection:
    """The iterative partitioning filter (Khoshgoftaar and Rebours 2007).

    Each round splits the rows still in play into ``folds`` stratified parts,
    fits every member on each part alone, and lets all ``folds x members``
    models classify every row in play. Rows that more than half of them
    (``majority``) or all of them (``consensus``) misclassify are flagged and
    leave play (whatever the action), with ``step`` = the round. The filter
    stops after ``quiet_rounds`` rounds in a row each flag fewer than
    ``stop_share`` of the stage's rows, after ``max_rounds``, or when a class
    in play has fewer rows than ``folds``. A row's doubt comes from the first
    round, from the models not fitted on its part.

    The paper's learner was one decision tree (``models = ["tree"]``, grown
    C4.5-style); the default is a k-NN vote and a logistic regression, which
    on the open tables of ``benchmarks/bench_noise.py`` (10% flipped labels,
    two seeds) flagged with precision 0.57 against the single tree's 0.35, at
    the same recall (0.93); adding the forest changed little (0.56) and took
    twenty times as long, as IPF fits every model on every part in every round.

    When not to use it: on small tables, where a part is too small to learn
    from; its models see one part each, so it needs more rows than
    ``committee``.

    Examples
    --------
    >>> x = [[v / 10] for v in range(10)] + [[5 + v / 10] for v in range(10)]
    >>> y = np.array(["a"] * 10 + ["b"] * 10)
    >>> y[3] = "b"
    >>> sel = ipf(Space.from_matrix(x), y, removable=np.ones(20, bool),
    ...           models=[{"model": "knn", "params": {"k": 3}}], folds=2)
    >>> sel.removed.tolist(), sel.step.tolist(), sel.info["stopped"]
    ([3], [1], 'quiet rounds')
    """
    names, codes = encode(labels)
    info: dict[str, Any] = {"folds": folds, "vote": vote}
    if len(names) < 2:
        return _one_class(space.n, names, action, info)
    members = parse_models(models)
    X = coordinates(space)
    active = np.arange(space.n)
    out = Flags(space.n, names)
    scores = np.zeros(space.n)
    quiet = rounds = 0
    stopped = "max_rounds"
    while rounds < max_rounds:
        if rounds and np.bincount(codes[active], minlength=len(names)).min() < folds:
            stopped = "a class has fewer rows than folds"
            break
        rounds += 1
        part = make_folds(codes[active], folds, _seed(seed + rounds - 1), names, "ipf")
        votes, outside = _ipf_round(space, X, codes, len(names), members, active, part,
                                    _seed(seed), fit_rows)
        own = codes[active]
        wrong = votes.sum(axis=1) - votes[np.arange(len(active)), own]
        total = folds * len(members)
        if rounds == 1:
            scores = doubt(outside, own)
        going = np.flatnonzero((wrong > total / 2 if vote == "majority" else wrong == total)
                               & removable[active])
        for g in going:
            i, v = int(active[g]), votes[g].copy()
            v[own[g]] = -1
            pick = int(max(range(len(names)), key=lambda c: (v[c], outside[g, c], -c)))
            out.add(i, pick, "partitions-disagree",
                    f"in round {rounds}, out-of-part probability of its label "
                    f"{str(names[own[g]])!r} {share(outside[g, own[g]])}; "
                    + describe_vote(votes[g], names, int(own[g]), total,
                                    f"{total} partition models vote"), step=rounds)
        active = np.delete(active, going)
        quiet = quiet + 1 if len(going) < stop_share * space.n else 0
        if quiet >= quiet_rounds:
            stopped = "quiet rounds"
            break
    return out.selection(action, _info(models, folds, scores, vote=vote, rounds=rounds,
                                       stopped=stopped), {"doubt": scores})


_MODELS = Param("models", (list, tuple), DEFAULT_MODELS,
                "the committee: 'knn' (k-NN in curate's space), 'trees' (random forest), "
                "'linear' (logistic regression), 'tree' (one decision tree), an import path "
                "of a classifier with predict_proba, or { model = ..., params = { ... } }",
                check=lambda v: models_problem(v) is None, explain=models_problem,
                check_says="each a built-in name, an importable classifier with "
                           "predict_proba, or a table with model and params")
_FOLDS = Param("folds", int, 5, "stratified folds; each member is fitted on all but one",
               low=2)
_ACTION = Param("action", str, "remove", "remove the flagged rows; relabel: keep them and "
                "suggest the committee's label in a new column suggested_label; report: "
                "keep them and only record them", choices=ACTIONS)
_VOTE = Param("vote", str, "majority", "majority: flagged when more than half of the "
              "models predict another label; consensus: when all of them do",
              choices=("majority", "consensus"))
_FIT_ROWS = Param("fit_rows", int, FIT_ROWS, "models other than knn learn from a seeded, "
                  "stratified sample of at most this many of their training rows (0: all); "
                  "the knn vote always sees every row", low=0)
_MIN_DOUBT = Param("min_doubt", float, 0.75, "flag only rows whose doubt (1 - the committee's "
                   "mean out-of-fold probability of the row's label) is at least this; 0 "
                   "flags on the vote alone", low=0.0, high=1.0)

COMMITTEE = MethodInfo(
    key="committee", name="majority / consensus ensemble filter", family="label noise",
    reference="Brodley and Friedl 1999",
    purpose="flag likely mislabels: rows that a committee of different classifiers, each "
            "fitted without them, predicts as another label; score every row's doubt",
    func=committee, catches=("label-flip",),
    params=(_MODELS, _FOLDS, Param("vote", str, "consensus", _VOTE.doc, choices=_VOTE.choices),
            _MIN_DOUBT, _FIT_ROWS, _ACTION),
    reasons={"committee-disagrees": "the majority (or all) of the committee's models, "
                                    "fitted without the row, predict another label"},
)

IPF = MethodInfo(
    key="ipf", name="iterative partitioning filter (IPF)", family="label noise",
    reference="Khoshgoftaar and Rebours 2007",
    purpose="flag likely mislabels in rounds: models fitted on one part each vote on every "
            "row, until rounds stop finding many",
    func=ipf, catches=("label-flip",),
    params=(Param("models", (list, tuple), IPF_MODELS, _MODELS.doc, check=_MODELS.check,
                  check_says=_MODELS.check_says, explain=models_problem),
            Param("folds", int, 5, "parts per round; each model is fitted on one part", low=2),
            _VOTE,
            Param("stop_share", float, 0.01, "a round is quiet when it flags fewer than this "
                  "share of the stage's rows", low=0.0, high=1.0),
            Param("quiet_rounds", int, 3, "stop after this many quiet rounds in a row", low=1),
            Param("max_rounds", int, 50, "stop after this many rounds in any case", low=1),
            _FIT_ROWS, _ACTION),
    reasons={"partitions-disagree": "in a round, the majority (or all) of the models fitted "
                                    "on single parts predict another label"},
)

CLASS_THRESHOLDS = MethodInfo(
    key="class-thresholds", name="per-class thresholds (confident learning)",
    family="label noise", reference="Northcutt, Jiang and Chuang 2021",
    purpose="flag as many rows per class as the confident joint estimates are mislabelled, "
            "first those whose own label's probability is below its class's threshold while "
            "another class's reaches its own",
    func=class_thresholds, catches=("label-flip",), params=(_MODELS, _FOLDS, _FIT_ROWS, _ACTION),
    reasons={"below-class-threshold": "its own label's out-of-fold probability is below that "
                                      "class's mean self-confidence while another class's "
                                      "reaches its own",
             "low-self-confidence": "among its class's rows with the lowest probability of "
                                    "their own label, within the estimated count of "
                                    "mislabelled rows"},
)
