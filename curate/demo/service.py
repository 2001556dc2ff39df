"""`curate demo --task regression`: the hours-until-service demo, its pipeline and its catch.

The data come from :mod:`curate.demo.hours` (the invented pump fleet with the
hours each pump ran until service as the target); the pipeline drops re-sent
rows and conflicting copies, removes rows whose logged hours lie far from their
neighbours' (the regression hardness score, in standard deviations of the
target) and condenses the rest with RegCNN. The catch of the cleaning stages is
scored against the generator's ground truth like the classification demo's.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from curate.demo import data as demo_data
from curate.demo import hours
from curate.demo.pumps import catch_lines, run_scored

__all__ = ["hours_pipeline_text", "run_hours_demo"]


def hours_pipeline_text() -> str:
    """The regression demo's pipeline file, with its column rules written inline.

    Examples
    --------
    >>> import tomllib
    >>> spec = tomllib.loads(hours_pipeline_text())
    >>> spec["input"]["task"], [s["method"] for s in spec["stages"]]
    ('regression', ['exact-duplicates', 'conflicting-duplicates', 'hardness', 'reg-cnn'])
    """
    rules = [
        '[input.columns.reading_id]\ntype = "int"\nunique = true\n',
        *(f'[input.columns.{name}]\ntype = "category"\nallowed = {list(values)!r}\n'.replace("'", '"')
          for name, values in (("site", demo_data.SITES), ("pump_model", demo_data.MODELS),
                               ("shift", demo_data.SHIFTS))),
        *(f"[input.columns.{name}]\ntype = \"float\"\nmin = {low}\nmax = {high}\n"
          for name, (low, high) in demo_data.RANGES.items()),
        f'[input.columns.{hours.TARGET}]\ntype = "float"\nmin = 0.0\n',
    ]
    return "\n".join([
        "# The hours-until-service demo (invented data). Paths are relative to this file.",
        f'[input]\npath = "data/hours.csv"\nlabel = "{hours.TARGET}"\nid = "reading_id"',
        f'task = "regression"\nunit = "{hours.UNIT}"\non_invalid = "quarantine"\n',
        *rules,
        '[space]\nscale = "range"\ndistance = "euclidean"\nmissing = "stop"\n',
        '[[stages]]\nname = "re-sent rows"\nmethod = "exact-duplicates"\n',
        '[[stages]]\nname = "conflicting copies"\nmethod = "conflicting-duplicates"\n'
        'relative_tolerance = 0.5\npolicy = "drop-all"\n',
        '[[stages]]\nname = "wrong hours"\nmethod = "hardness"\nk = 9\nthreshold = 2.0\n',
        '[[stages]]\nname = "condense"\nmethod = "reg-cnn"\nk = 9\nalpha = 1.0\n'
        "max_removed_share = 0.99\n",
        '[output]\nfolder = "run-hours"\noverwrite = true\n',
        "[run]\nseed = 7\n",
    ])


def run_hours_demo(rows: int = 20000, out: Path = Path("demo"), seed: int = 7,
                   quiet: bool = False, progress: Callable[[str], None] | None = None) -> str:
    """Write the regression demo's data and pipeline under ``out``, run it, describe the catch."""
    out = Path(out)
    paths = hours.write(out / "data", rows=rows, seed=seed)
    s, catch = run_scored(out / "hours.toml", hours_pipeline_text(), paths["hours-truth"],
                          None if quiet else progress)
    target = s["target"]
    lines = [f"demo: {s['rows_in']} pump readings in, {s['rows_kept']} kept, "
             f"{s['rows_removed']} removed ({s['rows_quarantined']} quarantined by the schema)",
             f"task: {s['task']['task']} ({s['task']['reason']})",
             f"hours until service: mean {target['before']['mean']:.1f} h, sd "
             f"{target['before']['sd']:.1f} h in; mean {target['after']['mean']:.1f} h, sd "
             f"{target['after']['sd']:.1f} h kept"]
    lines += catch_lines(s, catch)
    lines.append(f"run folder: {out / 'run-hours'}  (try: curate why <row id> --run "
                 f"{out / 'run-hours'})")
    return "\n".join(lines)
