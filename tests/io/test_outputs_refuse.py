"""curate never replaces, deletes or writes into what it did not write, and says why first.

Source: the requirements of issue 9 (overwrite replaces only a folder curate
wrote, which carries a marker; the output may never be, contain or sit inside
the input, a file a glob matches, the pipeline file or the schema file; every
output check comes before the work) and the project rule "never delete, move
or replace a path curate did not write itself" (common practice, no source).
The CLI runs in this process here: these are checks on the real file system
that end before any work, so no process needs killing.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest
from output_fixtures import write_tables

from curate.cli import main
from curate.errors import OutputError
from curate.io.output_checks import MARKER, check_output


def snapshot(folder: Path) -> dict[str, str]:
    """Every file under ``folder`` with a hash of its bytes, to show nothing changed."""
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


@pytest.fixture
def data(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """``tmp_path/data`` holds the tables and pipeline files; the tests run in ``tmp_path``."""
    (tmp_path / "data").mkdir()
    write_tables(tmp_path / "data")
    monkeypatch.chdir(tmp_path)
    return tmp_path / "data"


def refused(capsys: pytest.CaptureFixture[str], *args: str) -> str:
    code = main([*args, "--quiet"] if args[0] in ("run", "evaluate") else list(args))
    err = capsys.readouterr().err
    assert code == 2, err
    assert err.startswith("error: ") and "nothing was written" in err and "hint:" in err, err
    return err


@pytest.mark.parametrize(("pipeline", "out", "words"), [
    ("small.toml", "data", "contains the input"),
    ("small.toml", ".", "contains the input"),
    ("small.toml", "data/small.csv", "is the input"),
    ("small.toml", "data/small.toml", "is the pipeline file"),
    ("folder.toml", "data/tables/run", "sits inside the input"),
    ("glob.toml", "data/tables", "contains the input"),
    ("linked.toml", "data/tables", "contains the input"),
    ("folder.toml", "alias/tables/run", "sits inside the input"),
    ("schema.toml", "data/schemas", "contains the schema file"),
])
def test_output_may_not_overlap_what_is_read(data: Path, capsys: pytest.CaptureFixture[str],
                                             pipeline: str, out: str, words: str) -> None:
    """Even with --overwrite: exit 2 naming both paths, and not one input byte changes.

    The input is a file, a folder, a glob, or a link to a file (links are resolved);
    ``alias`` is a link to ``data``."""
    tables = data / "tables"
    tables.mkdir()
    (tables / "a.csv").write_bytes((data / "small.csv").read_bytes())
    (data / "schemas").mkdir()
    (data / "schemas" / "model.py").write_text("import pandera.polars as pa\n")
    (data / "linked.csv").symlink_to(tables / "a.csv")
    (data.parent / "alias").symlink_to(data)
    body = (data / "small.toml").read_text()
    for name, path, extra in (("folder", "tables", ""), ("glob", "tables/*.csv", ""),
                              ("linked", "linked.csv", ""),
                              ("schema", "small.csv", 'schema = "schemas/model.py:Model"\n')):
        (data / f"{name}.toml").write_text(body.replace('path = "small.csv"\n',
                                                        f'path = "{path}"\n{extra}'))
    before = snapshot(data)
    err = refused(capsys, "run", f"data/{pipeline}", "--out", out, "--overwrite")
    assert words in err
    assert snapshot(data) == before


def test_overwrite_refuses_a_folder_curate_did_not_write(data: Path,
                                                         capsys: pytest.CaptureFixture[str]) -> None:
    """The message names the folder, why, and its first entries with a count."""
    mine = data.parent / "mine"
    mine.mkdir()
    for i in range(7):
        (mine / f"part{i}.csv").write_text("x\n1\n")
    (mine / "notes").mkdir()
    before = snapshot(mine)
    err = refused(capsys, "run", "data/small.toml", "--out", "mine", "--overwrite")
    assert str(mine) in err and MARKER in err and "8 entries" in err and "part0.csv" in err
    assert snapshot(mine) == before


def test_a_pipeline_file_alone_cannot_point_overwrite_at_any_folder(
        data: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """``folder = "../victim"`` with ``overwrite = true`` in the file: refused, victim intact."""
    victim = data.parent / "victim"
    victim.mkdir()
    (victim / "thesis.txt").write_text("years of work\n")
    text = (data / "small.toml").read_text().replace('folder = "run"', 'folder = "../victim"\n'
                                                                       "overwrite = true")
    (data / "small.toml").write_text(text)
    err = refused(capsys, "run", "data/small.toml")
    assert "thesis.txt" in err
    assert (victim / "thesis.txt").read_text() == "years of work\n"


def test_overwrite_replaces_a_run_folder_only_while_it_holds_only_curate_files(
        data: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """A run folder carries the marker and is replaced; with a file of the user's added
    inside, it is refused and that file is named."""
    assert main(["run", "data/small.toml", "--quiet", "--out", "run"]) == 0
    assert (data.parent / "run" / MARKER).is_file()
    assert main(["run", "data/large.toml", "--quiet", "--out", "run", "--overwrite"]) == 0
    (data.parent / "run" / "my notes.txt").write_text("keep me\n")
    err = refused(capsys, "run", "data/small.toml", "--out", "run", "--overwrite")
    assert "my notes.txt" in err
    assert (data.parent / "run" / "my notes.txt").read_text() == "keep me\n"


@pytest.mark.parametrize("case", ["exists", "below a file", "a file", "empty folder"])
def test_output_checks_come_before_the_work(data: Path, capsys: pytest.CaptureFixture[str],
                                            case: str) -> None:
    """The input here has no rows (exit 3 once read); exit 2 for the output shows that the
    output was checked before the input was even read."""
    (data / "empty.csv").write_text("sepal length (cm),target\n")
    text = (data / "small.toml").read_text().replace("small.csv", "empty.csv")
    (data / "empty.toml").write_text(text)
    assert main(["run", "data/empty.toml", "--quiet", "--out", "fresh"]) == 3
    capsys.readouterr()
    target = data.parent / "target"
    if case == "exists":
        target.mkdir()
        (target / MARKER).write_text('{"written_by": "curate", "files": []}')
    elif case == "below a file":
        (data.parent / "notes.txt").write_text("not a folder\n")
        target = data.parent / "notes.txt" / "run"
    elif case == "a file":
        target.write_text("a file\n")
    else:
        target.mkdir()
    extra = [] if case in ("exists", "below a file") else ["--overwrite"]
    err = refused(capsys, "run", "data/empty.toml", "--out", str(target), *extra)
    assert {"exists": "already exists", "below a file": "is a file, not a folder",
            "a file": "it is a file", "empty folder": "empty folder"}[case] in err


def test_other_writers_refuse_too(data: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """evaluate --out, review --out and diff --out go through the same checks."""
    assert main(["run", "data/small.toml", "--quiet", "--out", "run"]) == 0
    before = snapshot(data.parent)
    assert "contains the input" in refused(capsys, "evaluate", "data/small.toml", "--folds", "2",
                                           "--k", "1", "--out", "data", "--overwrite")
    assert "sits inside the run folder" in refused(capsys, "review", "--run", "run", "--out",
                                                   "run/review.csv")
    assert "may not replace" in refused(capsys, "diff", "run", "run", "--out",
                                        "data/small.csv", "--overwrite")
    assert snapshot(data.parent) == before


def test_demo_writes_only_into_a_new_empty_or_earlier_demo_folder(
        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """``curate demo --out`` a folder of the user's: exit 2 and the folder stays as it was."""
    mine = tmp_path / "mine"
    (mine / "data").mkdir(parents=True)
    (mine / "pumps.toml").write_text("my own pipeline\n")
    (mine / "data" / "readings.csv").write_text("my own readings\n")
    before = snapshot(mine)
    code = main(["demo", "--out", str(mine), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and "may not replace" in err and "pumps.toml" in err, err
    assert snapshot(mine) == before


def test_leftovers_of_an_inner_output_do_not_make_a_folder_foreign(tmp_path: Path) -> None:
    """A demo folder lists ``run``; the lock and partial names a killed run into ``run`` left
    beside it are curate's own, so the folder may still be replaced; a file of the user's
    may not."""
    demo = tmp_path / "demo"
    (demo / "run").mkdir(parents=True)
    (demo / MARKER).write_text('{"written_by": "curate", "kind": "demo", "files": ["run"]}')
    (demo / ".run.lock").write_text("{}")
    (demo / ".run.partial-0a1b2c3d").mkdir()
    assert check_output(demo, overwrite=True) == demo.resolve()
    (demo / ".run.notes").write_text("mine\n")
    with pytest.raises(OutputError, match=r"curate did not write \.run\.notes"):
        check_output(demo, overwrite=True)
