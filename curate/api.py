"""The Python entry points: run a pipeline and get polars frames back."""

from __future__ import annotations

from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from curate.output_checks import spec_inputs
from curate.outputs import claim_output
from curate.pipeline import RunResult, execute, prepare
from curate.runfolder import write_result
from curate.spec import Spec, load_spec, spec_from_dict

__all__ = ["run"]


def _as_spec(pipeline: str | Path | Mapping[str, Any] | Spec, base: str | Path) -> Spec:
    if isinstance(pipeline, Spec):
        return pipeline
    if isinstance(pipeline, Mapping):
        return spec_from_dict(pipeline, base=base)
    return load_spec(pipeline)


def run(pipeline: str | Path | Mapping[str, Any] | Spec, *, out: str | Path | None = None,
        overwrite: bool | None = None, write: bool = False, base: str | Path = ".",
        progress: Callable[[str], None] | None = None) -> RunResult:
    """Run a pipeline and return kept, removed and audit frames and the summary.

    ``pipeline`` is a pipeline file path, a dictionary shaped like one
    (paths relative to ``base``) or a checked :class:`~curate.spec.Spec`.
    Nothing is written unless ``write`` is true or ``out`` is given; then the
    output folder is checked and claimed before the work starts (see
    :mod:`curate.outputs`).

    Examples
    --------
    >>> import polars as pl, tempfile
    >>> folder = Path(tempfile.mkdtemp())
    >>> pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.1],
    ...               "y": ["a", "a", "a", "b", "b", "b"]}).write_csv(folder / "t.csv")
    >>> result = run({"input": {"path": "t.csv", "label": "y"},
    ...               "stages": [{"method": "exact-duplicates"}]}, base=folder)
    >>> result.summary["rows_removed"], result.audit["kept_as"].to_list()
    (1, [4])
    """
    spec = _as_spec(pipeline, base)
    if not write and out is None:
        return execute(prepare(spec), progress=progress)
    with claim_output(Path(out) if out is not None else spec.output.folder,
                      overwrite=spec.output.overwrite if overwrite is None else overwrite,
                      inputs=spec_inputs(spec)) as claim:
        result = execute(prepare(spec), progress=progress)
        write_result(result, claim, report=spec.output.report)
    return result
