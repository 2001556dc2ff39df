"""`curate demo`: build the invented pump-fleet data, run its pipeline, score the catch."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import Any

import polars as pl

from curate.api import run
from curate.demo import data as demo_data
from curate.io.output_checks import check_output
from curate.io.outputs import write_marker
from curate.methods import METHODS

__all__ = ["demo_pipeline_text", "fault_catch", "run_demo"]

CLEANING_FAMILIES = ("schema", "duplicates", "editing")


def demo_pipeline_text() -> str:
    """The demo's pipeline file, with its column rules written inline.

    Examples
    --------
    >>> import tomllib
    >>> [s["method"] for s in tomllib.loads(demo_pipeline_text())["stages"]]
    ['exact-duplicates', 'conflicting-duplicates', 'enn', 'fcnn']
    """
    rules = [
        '[input.columns.reading_id]\ntype = "int"\nunique = true\n',
        *(f'[input.columns.{name}]\ntype = "category"\nallowed = {list(values)!r}\n'.replace("'", '"')
          for name, values in (("site", demo_data.SITES), ("pump_model", demo_data.MODELS),
                               ("shift", demo_data.SHIFTS), ("condition", demo_data.CONDITIONS))),
        *(f"[input.columns.{name}]\ntype = \"float\"\nmin = {low}\nmax = {high}\n"
          for name, (low, high) in demo_data.RANGES.items()),
    ]
    return "\n".join([
        "# The pump-fleet demo (invented data). Paths are relative to this file.",
        '[input]\npath = "data/readings.csv"\nlabel = "condition"\nid = "reading_id"',
        'ignore = ["note"]\non_invalid = "quarantine"\n',
        *rules,
        '[space]\nscale = "range"\ndistance = "euclidean"\nmissing = "stop"\n',
        '[[stages]]\nname = "re-sent rows"\nmethod = "exact-duplicates"\n',
        '[[stages]]\nname = "conflicting copies"\nmethod = "conflicting-duplicates"\n'
        'policy = "drop-all"\n',
        '[[stages]]\nname = "mislabels"\nmethod = "enn"\nk = 3\nvote = "majority"\n'
        "max_removed_share = 0.5\n",
        '[[stages]]\nname = "condense"\nmethod = "fcnn"\nclasses = "all-but-smallest"\n'
        "max_removed_share = 0.99\n",
        '[output]\nfolder = "run"\noverwrite = true\n',
        "[run]\nseed = 7\n",
    ])


def fault_catch(audit: pl.DataFrame, truth: pl.DataFrame, stage_family: dict[str, str],
                id_column: str = "reading_id") -> dict[str, Any]:
    """Score the rows the cleaning stages removed against the injected faults.

    Condensing and hybrid stages remove sound rows on purpose, so only
    schema, duplicate and editing removals are scored. Returns precision and
    recall overall, and recall per fault kind.

    Examples
    --------
    >>> audit = pl.DataFrame({"row_id": [1, 2, 3], "stage": ["a", "a", "b"]})
    >>> truth = pl.DataFrame({"reading_id": [1, 4], "fault": ["re-sent", "label-flip"]})
    >>> fault_catch(audit, truth, {"a": "duplicates", "b": "condensing"})["precision"]
    0.5
    """
    cleaning = [s for s, fam in stage_family.items() if fam in CLEANING_FAMILIES]
    removed = set(audit.filter(pl.col("stage").is_in(cleaning))["row_id"].to_list())
    faults = dict(zip(truth[id_column].to_list(), truth["fault"].to_list(), strict=True))
    caught = removed & set(faults)
    by_kind: dict[str, dict[str, float]] = {}
    for kind in sorted(set(faults.values())):
        rows = {i for i, f in faults.items() if f == kind}
        by_kind[kind] = {"injected": len(rows), "caught": len(rows & removed),
                         "recall": round(len(rows & removed) / len(rows), 4)}
    return {"removed_by_cleaning": len(removed), "injected": len(faults), "caught": len(caught),
            "precision": round(len(caught) / len(removed), 4) if removed else 0.0,
            "recall": round(len(caught) / len(faults), 4) if faults else 0.0,
            "by_fault": by_kind}


def run_demo(rows: int = 20000, out: Path = Path("demo"), seed: int = 7, quiet: bool = False,
             progress: Callable[[str], None] | None = None) -> str:
    """Write the demo data and pipeline under ``out``, run it, and describe the outcome."""
    out = Path(out)
    if not (out.is_dir() and not any(out.iterdir())):
        check_output(out, overwrite=True)  # replace only an earlier demo folder, never others
    out.mkdir(parents=True, exist_ok=True)
    write_marker(out, "demo", ["data", "pumps.toml", "run"])
    paths = demo_data.write(out / "data", rows=rows, seed=seed)
    pipeline = out / "pumps.toml"
    pipeline.write_text(demo_pipeline_text(), encoding="utf-8")
    result = run(pipeline, write=True, overwrite=True, progress=None if quiet else progress)
    truth = pl.read_csv(paths["truth"])
    families = {"schema": "schema"} | {s["name"]: METHODS[s["method"]].family
                                       for s in result.summary["stages"]}
    catch = fault_catch(result.audit, truth, families)
    s = result.summary
    lines = [f"demo: {s['rows_in']} pump readings in, {s['rows_kept']} kept, "
             f"{s['rows_removed']} removed ({s['rows_quarantined']} quarantined by the schema)"]
    for st in s["stages"]:
        lines.append(f"  {st['name']:<20} {st['method']:<24} removed {st['removed']:>6} of "
                     f"{st['rows_in']:>6} in {st['seconds']:.2f} s")
    lines.append(f"injected faults caught by the cleaning stages: {catch['caught']} of "
                 f"{catch['injected']} (recall {catch['recall']:.1%}, precision "
                 f"{catch['precision']:.1%} of {catch['removed_by_cleaning']} rows removed)")
    for kind, row in catch["by_fault"].items():
        lines.append(f"  {kind:<12} {row['caught']:>5} of {row['injected']:>5} caught "
                     f"(recall {row['recall']:.1%})")
    lines.append(f"run folder: {out / 'run'}  (try: curate why <row id> --run {out / 'run'})")
    return "\n".join(lines)
