"""A pipeline file may load schema code only from its own folder or from what the user trusts.

Contract: README "Reliability" (what a pipeline file may load) and issue 9. A schema
module is Python code: importing it runs it. Each schema written here leaves a
footprint file when it runs, so "refused" is checked on the file system (the code
never ran), not only on the message. Python's import system and pandera's polars
models are the outside machinery; the tables are tiny and invented.
"""

from __future__ import annotations

from pathlib import Path

import polars as pl
import pytest

from curate.api import run
from curate.cli import main
from curate.errors import PipelineFileError
from curate.evaluation.crossval import evaluate
from curate.spec import load_spec

MODEL = '''\
from pathlib import Path
import pandera.polars as pa

Path({footprint!r}).write_text("ran")


class Model(pa.DataFrameModel):
    x: float = pa.Field(ge=0.0)
'''


@pytest.fixture
def pipes(tmp_path: Path) -> Path:
    """A pipeline folder with a small table; ``elsewhere`` beside it holds outside code."""
    folder = tmp_path / "pipes"
    folder.mkdir()
    (tmp_path / "elsewhere").mkdir()
    pl.DataFrame({"x": [0.0, 0.1, 0.2, 5.0, 5.1, 5.2, 0.3, 5.3],
                  "y": ["a", "a", "a", "b", "b", "b", "a", "b"]}).write_csv(folder / "t.csv")
    return folder


def schema_file(path: Path) -> Path:
    """Write a schema module at ``path`` that leaves ``path.ran`` behind when imported."""
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(MODEL.format(footprint=str(path.with_suffix(".ran"))))
    return path


def pipeline(folder: Path, ref: str) -> Path:
    path = folder / "p.toml"
    path.write_text(f'[input]\npath = "t.csv"\nlabel = "y"\nschema = "{ref}"\n\n'
                    '[[stages]]\nmethod = "exact-duplicates"\n')
    return path


def refused(capsys: pytest.CaptureFixture[str], *argv: str) -> str:
    assert main(list(argv)) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err and "hint:" in err
    return err


def test_a_schema_inside_the_pipeline_folder_loads(pipes: Path,
                                                   capsys: pytest.CaptureFixture[str]) -> None:
    code = schema_file(pipes / "schemas" / "m.py")
    assert main(["check", str(pipeline(pipes, "schemas/m.py:Model"))]) == 0, \
        capsys.readouterr().err
    assert code.with_suffix(".ran").exists()


@pytest.mark.parametrize("command", ["run", "check", "distances", "evaluate"])
def test_code_outside_the_folder_is_refused_before_it_runs(
        pipes: Path, capsys: pytest.CaptureFixture[str], command: str) -> None:
    """Every command that reads a pipeline file refuses it, names file, line, key, path and
    the fix, and the module never ran."""
    code = schema_file(pipes.parent / "elsewhere" / "m.py")
    path = pipeline(pipes, "../elsewhere/m.py:Model")
    err = refused(capsys, command, str(path))
    for words in (f"{path}, line 4", "'schema'", str(code), "outside the pipeline file's folder",
                  f"--trust-code {code.parent}", "runs with your rights"):
        assert words in err, err
    assert not code.with_suffix(".ran").exists()
    assert not (pipes / "runs").exists()


def test_an_absolute_path_and_a_link_out_of_the_folder_are_refused(
        pipes: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """Links are resolved first: a link inside the folder to code outside it is outside."""
    code = schema_file(pipes.parent / "elsewhere" / "m.py")
    refused(capsys, "check", str(pipeline(pipes, f"{code}:Model")))
    (pipes / "linked.py").symlink_to(code)
    err = refused(capsys, "check", str(pipeline(pipes, "linked.py:Model")))
    assert str(code) in err
    assert not code.with_suffix(".ran").exists()


def test_trust_code_names_a_folder(pipes: Path, capsys: pytest.CaptureFixture[str],
                                   monkeypatch: pytest.MonkeyPatch) -> None:
    """Repeatable, and relative to the working folder."""
    code = schema_file(pipes.parent / "elsewhere" / "m.py")
    path = pipeline(pipes, "../elsewhere/m.py:Model")
    monkeypatch.chdir(pipes.parent)
    assert main(["check", str(path), "--trust-code", "pipes", "--trust-code", "elsewhere"]) == 0, \
        capsys.readouterr().err
    assert code.with_suffix(".ran").exists()


def test_a_module_by_name_needs_trust_code(pipes: Path, capsys: pytest.CaptureFixture[str],
                                           monkeypatch: pytest.MonkeyPatch) -> None:
    """``package.module:Class`` runs only when the module or a parent package is named."""
    code = schema_file(pipes.parent / "site" / "trusted_probe_pkg" / "pumps.py")
    (code.parent / "__init__.py").write_text("")
    monkeypatch.syspath_prepend(str(code.parent.parent))
    path = pipeline(pipes, "trusted_probe_pkg.pumps:Model")
    err = refused(capsys, "check", str(path))
    assert "'trusted_probe_pkg.pumps' is not named with --trust-code" in err
    assert "--trust-code trusted_probe_pkg.pumps" in err
    refused(capsys, "check", str(path), "--trust-code", "trusted_probe_pkg.other")
    assert not code.with_suffix(".ran").exists()
    assert main(["check", str(path), "--trust-code", "trusted_probe_pkg"]) == 0
    assert code.with_suffix(".ran").exists()


def test_trust_code_that_names_nothing_is_a_usage_error(pipes: Path,
                                                        capsys: pytest.CaptureFixture[str]) -> None:
    schema_file(pipes / "m.py")
    err = refused(capsys, "check", str(pipeline(pipes, "m.py:Model")), "--trust-code", "no/such")
    assert "--trust-code 'no/such' is neither an existing folder nor a module name" in err


def test_python_api_takes_trust_code(pipes: Path) -> None:
    """load_spec, run (file or dictionary, whose folder is ``base``) and evaluate."""
    code = schema_file(pipes.parent / "elsewhere" / "m.py")
    path = pipeline(pipes, "../elsewhere/m.py:Model")
    with pytest.raises(PipelineFileError, match="outside the pipeline file's folder"):
        load_spec(path)
    as_dict = {"input": {"path": "t.csv", "label": "y", "schema": "../elsewhere/m.py:Model"},
               "stages": [{"method": "exact-duplicates"}]}
    with pytest.raises(PipelineFileError, match="outside the pipeline file's folder"):
        run(as_dict, base=pipes)
    with pytest.raises(PipelineFileError, match="outside the pipeline file's folder"):
        evaluate(path, folds=2, ks=[1])
    assert not code.with_suffix(".ran").exists()
    trusted = [code.parent]
    assert load_spec(path, trust_code=trusted).input.schema == f"{code}:Model"
    assert run(as_dict, base=pipes, trust_code=trusted).summary["rows_in"] == 8
    assert run(path, trust_code=trusted).summary["rows_in"] == 8
    assert evaluate(path, folds=2, ks=[1], trust_code=trusted)["folds"] == 2


@pytest.mark.parametrize(("body", "words"), [
    ("import pandera.polars as pa\nclass Model(pa.DataFrameModel)\n    x: float\n",
     ["m.py, line 2 does not parse"]),
    ("import pandera.polars as pa\n\nraise RuntimeError('no database here')\n",
     ["m.py, line 3 raised RuntimeError: no database here"]),
    ("import sys\nsys.exit(3)\n", ["m.py, line 2 raised SystemExit"]),
    ("import no_such_module_anywhere\n", ["m.py, line 1 raised ModuleNotFoundError"]),
    ("import pandera.polars as pa\nclass Other(pa.DataFrameModel):\n    x: float\n",
     ["has no 'Model'"]),
])
def test_a_schema_that_fails_to_import_names_file_and_line(
        pipes: Path, capsys: pytest.CaptureFixture[str], body: str, words: list[str]) -> None:
    """No traceback and exit 2, whether the file does not parse, raises or exits."""
    (pipes / "m.py").write_text(body)
    err = refused(capsys, "check", str(pipeline(pipes, "m.py:Model")))
    for word in words:
        assert word in err, err
