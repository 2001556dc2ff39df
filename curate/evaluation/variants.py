"""Which cleaning helps this table? Several pipelines, or one with variants, on the same folds.

``curate evaluate a.toml b.toml`` or ``curate evaluate a.toml --vary
mislabels.method=enn,committee`` evaluates every variant with
:func:`curate.evaluation.crossval.evaluate_prepared` on the same outer folds
(same seed, same rows), so every comparison is paired: each variant against no
curation (the uncurated records, identical for all variants) and against the
best variant, with the corrected resampled t-test. The variants are ranked by
the mean accuracy of one classifier (``--model`` when given, else k-NN with the
smallest k asked for), on a regression table by the mean RMSE of one regressor
(lowest first), and a plain sentence says what that means for the table.
"""

from __future__ import annotations

import itertools
import json
from collections.abc import Callable, Sequence
from dataclasses import replace
from typing import Any

import numpy as np

from curate.errors import UsageError
from curate.evaluation.crossval import evaluate_prepared
from curate.evaluation.stats import KNN, corrected_resampled_ttest
from curate.methods import METHODS, REGRESSION_METHODS
from curate.pipeline.records import Prepared
from curate.spec import spec_from_dict

__all__ = ["NONE", "evaluate_variants", "parse_vary", "ranking", "recommendation", "vary"]

NONE = "no curation"
STAGE_LEVEL = ("name", "method", "max_removed_share", "classes", "seed")


def parse_vary(text: str) -> tuple[str, str, list[Any]]:
    """Read one ``--vary STAGE.KEY=V1,V2``: (stage name or number, key, values).

    Values are read as JSON where they parse (numbers, true/false), else as text.

    Examples
    --------
    >>> parse_vary("mislabels.method=enn,committee")
    ('mislabels', 'method', ['enn', 'committee'])
    >>> parse_vary("2.k=3,5")
    ('2', 'k', [3, 5])
    """
    target, sep, values = text.partition("=")
    stage, dot, key = target.rpartition(".")
    if not sep or not dot or not stage or not key or not values.strip():
        raise UsageError(f"--vary {text!r} is not STAGE.KEY=VALUE,VALUE",
                         hint="write --vary mislabels.method=enn,committee (a stage's name or "
                              "number, one of its keys, and the values to try)")

    def value(item: str) -> Any:
        try:
            return json.loads(item)
        except json.JSONDecodeError:
            return item

    return stage.strip(), key.strip(), [value(v.strip()) for v in values.split(",") if v.strip()]


def _stage_index(prep: Prepared, stage: str) -> int:
    names = [s.name for s in prep.spec.stages]
    if stage in names:
        return names.index(stage)
    if stage.isdigit() and 1 <= int(stage) <= len(names):
        return int(stage) - 1
    raise UsageError(f"--vary: the pipeline has no stage {stage!r}",
                     hint=f"name a stage ({', '.join(map(repr, names))}) or give its number "
                          f"from 1 to {len(names)}")


def _stage_body(prep: Prepared, index: int) -> dict[str, Any]:
    st = prep.spec.stages[index]
    body: dict[str, Any] = {"name": st.name, "method": st.method,
                            "max_removed_share": st.max_removed_share,
                            "classes": st.classes if isinstance(st.classes, str)
                            else list(st.classes), **dict(st.params)}
    if st.seed is not None:
        body["seed"] = st.seed
    return body


def _changed(body: dict[str, Any], key: str, value: Any, task: str) -> dict[str, Any]:
    if key != "method":
        return body | {key: value}
    table = REGRESSION_METHODS if task == "regression" else METHODS
    if value not in table:
        raise UsageError(f"--vary: {value!r} is not a method for this table's task ({task})",
                         hint=f"use method keys: {', '.join(sorted(table))}")
    # Parameters the new method does not declare are dropped; its own defaults apply.
    declared = {p.name for p in table[value].params}
    return {k: v for k, v in body.items() if k in STAGE_LEVEL or k in declared} | \
        {"method": value}


def vary(prep: Prepared, texts: Sequence[str]) -> list[tuple[str, Prepared]]:
    """The variants that ``--vary`` texts ask for (every combination), named and checked.

    Examples
    --------
    >>> import polars as pl, tempfile
    >>> from pathlib import Path
    >>> from curate.pipeline.prepare import prepare
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.2], "y": list("aaabbb")}).write_csv(
    ...     folder / "t.csv")
    >>> prep = prepare(spec_from_dict({"input": {"path": "t.csv", "label": "y"},
    ...     "stages": [{"name": "mislabels", "method": "enn", "k": 1}]}, base=folder))
    >>> [(name, p.spec.stages[0].method) for name, p in vary(prep, ["mislabels.k=1,2"])]
    [('mislabels.k=1', 'enn'), ('mislabels.k=2', 'enn')]
    """
    axes = []
    for text in texts:
        stage, key, values = parse_vary(text)
        axes.append([(_stage_index(prep, stage), stage, key, v) for v in values])
    out = []
    for combo in itertools.product(*axes):
        bodies = [_stage_body(prep, i) for i in range(len(prep.spec.stages))]
        for index, _, key, value in combo:
            bodies[index] = _changed(bodies[index], key, value, prep.task.task)
        name = ", ".join(f"{stage}.{key}={value}" for _, stage, key, value in combo)
        checked = spec_from_dict({"input": {"path": "-", "label": "-", "task": prep.task.task},
                                  "stages": bodies}, source=f"--vary {name}")
        out.append((name, replace(prep, spec=replace(prep.spec, stages=checked.stages))))
    return out


def _same_rows(variants: Sequence[tuple[str, Prepared]]) -> None:
    first_name, first = variants[0]
    for name, prep in variants[1:]:
        if not np.array_equal(prep.space_labels, first.space_labels) or \
                prep.spec.input.label != first.spec.input.label:
            raise UsageError(f"pipelines {first_name!r} and {name!r} evaluate different rows "
                             "or labels, so their folds cannot be the same",
                             hint="compare pipelines that read the same input with the same "
                                  "label and schema; vary only their stages")


def _key(result: dict[str, Any]) -> tuple[str, int | None]:
    """The classifier the variants are ranked by: --model if given, else k-NN at the first k."""
    if result["model"] is not None:
        return result["model"], None
    return KNN, min(result["ks"])


def _record(result: dict[str, Any], key: tuple[str, int | None], curated: bool) -> dict[str, Any]:
    return next(r for r in result["results"]
                if (r["model"], r["k"], r["curated"]) == (*key, curated))


def scores_of(task: str) -> tuple[str, str, int]:
    """The score a ranking sorts by, the second score it shows, and +1 when higher is better.

    Examples
    --------
    >>> scores_of("classification"), scores_of("regression")
    (('accuracy', 'balanced_accuracy', 1), ('rmse', 'mae', -1))
    """
    return ("rmse", "mae", -1) if task == "regression" else ("accuracy", "balanced_accuracy", 1)


def ranking(results: dict[str, dict[str, Any]], ratio: float) -> list[dict[str, Any]]:
    """Variants (and no curation) ranked by mean accuracy (regression: mean RMSE, lowest
    first), with the paired tests.

    ``results`` maps variant name to its evaluation; ``ratio`` is n_test / n_train.
    """
    first = next(iter(results.values()))
    metric, second, sign = scores_of(first.get("task", "classification"))
    key = _key(first)
    plain = _record(first, key, False)
    rows = [{"variant": NONE, metric: plain[metric], second: plain[second], "kept_share": 1.0,
             "folds": plain[f"fold_{metric}"]}]
    for name, result in results.items():
        r = _record(result, key, True)
        rows.append({"variant": name, metric: r[metric], second: r[second],
                     "kept_share": r["kept_share"], "folds": r[f"fold_{metric}"]})
    rows.sort(key=lambda r: -sign * r[metric])
    best = next(r for r in rows if r["variant"] != NONE)
    for r in rows:
        for other, tag in ((rows[[x["variant"] for x in rows].index(NONE)], "none"),
                           (best, "best")):
            same = r["variant"] == other["variant"]
            _, p = (0.0, 1.0) if same else corrected_resampled_ttest(
                r["folds"], other["folds"], ratio)
            r[f"difference_to_{tag}"] = r[metric] - other[metric]
            r[f"p_value_to_{tag}"] = p
    for rank, r in enumerate(rows, start=1):
        r.update(rank=rank, model=key[0], k=key[1])
        del r["folds"]
    return rows


def _points(value: float) -> str:
    return f"{abs(value) * 100:.1f}"


def recommendation(rows: Sequence[dict[str, Any]], alpha: float = 0.05) -> str:
    """The ranking in one plain sentence: which cleaning to use on this table, if any.

    A gain counts when its paired test against no cleaning has p < ``alpha``;
    every variant that loses accuracy is named with its p-value.

    Examples
    --------
    >>> rows = [{"variant": "committee", "difference_to_none": 0.021, "p_value_to_none": 0.01,
    ...          "model": "knn", "k": 1},
    ...         {"variant": "no curation", "difference_to_none": 0.0, "p_value_to_none": 1.0,
    ...          "model": "knn", "k": 1},
    ...         {"variant": "enn", "difference_to_none": -0.043, "p_value_to_none": 0.02,
    ...          "model": "knn", "k": 1}]
    >>> recommendation(rows)
    'on this table, `committee` gains 2.1 points of 1-NN accuracy over no cleaning (p = 0.01); \
`enn` loses 4.3 (p = 0.02)'
    >>> recommendation([{"variant": "committee", "rmse": 60.9, "difference_to_none": -3.21,
    ...                  "p_value_to_none": 0.01, "model": "knn", "k": 5}])
    'on this table, `committee` lowers 5-NN RMSE by 3.21 over no cleaning (p = 0.01)'
    """
    model = f"{rows[0]['k']}-NN" if rows[0]["k"] is not None else \
        str(rows[0]["model"]).rsplit(".", 1)[-1]
    cleaned = [r for r in rows if r["variant"] != NONE]
    if "rmse" in rows[0]:  # lower is better; differences in target units
        sign, side, hurt = -1, "above", f"raises {model} RMSE"

        def gains(g: float) -> str:
            return f"lowers {model} RMSE by {g:.3g}"

        def loses(g: float, best: bool) -> str:
            return f"raises it by {g:.3g}"
    else:
        sign, side, hurt = 1, "below", f"lowers {model} accuracy"

        def gains(g: float) -> str:
            return f"gains {_points(g)} points of {model} accuracy"

        def loses(g: float, best: bool) -> str:
            return f"loses {_points(g)}" + (" points" if best else "")
    best = cleaned[0]
    gain, p = sign * best["difference_to_none"], best["p_value_to_none"]
    if gain > 0 and p < alpha:
        text = f"on this table, `{best['variant']}` {gains(gain)} over no cleaning (p = {p:.2g})"
    elif gain > 0:
        text = (f"on this table, no cleaning tried clearly helps: the best, "
                f"`{best['variant']}`, {gains(gain)} (p = {p:.2g}, not significant)")
    else:
        text = (f"on this table, cleaning {hurt}: every variant scores at or {side} no "
                f"cleaning, the best, `{best['variant']}`, "
                + (f"{loses(-gain, True)} (p = {p:.2g})" if gain < 0 else "ties")
                + "; keep every row")
    text += "".join(f"; `{r['variant']}` {loses(-sign * r['difference_to_none'], False)} "
                    f"(p = {r['p_value_to_none']:.2g})"
                    for r in cleaned[1:] if sign * r["difference_to_none"] < 0)
    return text


def evaluate_variants(variants: Sequence[tuple[str, Prepared]], *, folds: int = 10,
                      repeats: int = 1, progress: Callable[[str], None] | None = None,
                      **options: Any) -> dict[str, Any]:
    """Evaluate each named variant on the same folds; rank them and recommend one.

    ``options`` are those of :func:`evaluate_prepared`. The result has the keys
    of a single evaluation, those of the best-ranked variant, except that
    ``results`` holds every variant's curated records (``variant`` names each)
    and the uncurated ones once (``variant`` = ``"no curation"``); ``variants``
    holds each variant's own evaluation facts, ``ranking`` the ranked list and
    ``recommendation`` the sentence.
    """
    if len({name for name, _ in variants}) != len(variants):
        raise UsageError("two variants have the same name",
                         hint="give pipeline files different names")
    _same_rows(variants)
    say = progress or (lambda _message: None)
    results: dict[str, dict[str, Any]] = {}
    for name, prep in variants:
        say(f"variant {name}")
        results[name] = evaluate_prepared(prep, folds=folds, repeats=repeats, progress=say,
                                          **options)
    ratio = 1.0 / (folds - 1)  # n_test / n_train of the mean fold, as each evaluation uses
    rows = ranking(results, ratio)
    best = next(r["variant"] for r in rows if r["variant"] != NONE)
    merged = dict(results[best])
    first = next(iter(results.values()))
    merged["results"] = [r | {"variant": NONE} for r in first["results"] if not r["curated"]] + \
        [r | {"variant": name} for name, res in results.items()
         for r in res["results"] if r["curated"]]
    merged["variants"] = [{"variant": name, "pipeline": res["pipeline"],
                           **{k: res[k] for k in ("kept_share", "lookup", "best_k", "noise",
                                                  "truth", "over_limit", "seconds")}}
                          for name, res in results.items()]
    merged["ranking"] = rows
    merged["recommendation"] = recommendation(rows)
    merged["variant"] = best
    return merged
