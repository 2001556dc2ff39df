"""Stage names tell stages apart in the audit: empty, repeated and reserved names are refused.

Contract: the audit's ``stage`` column (README, "Audit columns") holds the stage's
name, and ``schema`` for rows the schema quarantined; issue 9 asks for a refusal
naming the line of the second stage. The pipeline files are read with tomllib
(Python's TOML parser), whose line numbers the messages must match.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from curate.cli import main
from curate.errors import PipelineFileError
from curate.spec import load_spec

HEAD = '[input]\npath = "t.csv"\nlabel = "y"\n\n'


def stages(*names: str | None) -> str:
    text = HEAD
    for name in names:
        text += "[[stages]]\n" + (f"name = {name}\n" if name is not None else "") \
            + 'method = "enn"\n\n'
    return text


def line_of(text: str, fragment: str, occurrence: int) -> int:
    lines = [n for n, line in enumerate(text.splitlines(), start=1) if line == fragment]
    return lines[occurrence]


@pytest.mark.parametrize(("names", "fragment", "occurrence", "words"), [
    (('"mislabels"', '"copies"', '"mislabels"'), 'name = "mislabels"', 1,
     ["stage 3", "same name as stage 1"]),
    (('"Mislabels"', '" mislabels "'), 'name = " mislabels "', 0,
     ["stage 2", "same name as stage 1", "ignoring case"]),
    (('"copies"', '""'), 'name = ""', 0, ["stage 2", "has an empty name"]),
    (('"copies"', '"   "'), 'name = "   "', 0, ["stage 2", "has an empty name"]),
    (('"schema"',), 'name = "schema"', 0, ["stage 1", "quarantined"]),
    (('"2: enn"', None), "[[stages]]", 1, ["stage 2", "same name as stage 1"]),
])
def test_bad_stage_names_are_refused_with_the_line(tmp_path: Path, names: tuple[str | None, ...],
                                                   fragment: str, occurrence: int,
                                                   words: list[str]) -> None:
    """The line named is the offending stage's ``name`` key, or its ``[[stages]]`` header
    when it has the default name ("2: enn" for a second stage using enn)."""
    text = stages(*names)
    path = tmp_path / "p.toml"
    path.write_text(text)
    with pytest.raises(PipelineFileError) as err:
        load_spec(path)
    message = str(err.value)
    assert f"{path}, line {line_of(text, fragment, occurrence)}: " in message, message
    for word in words:
        assert word in message, message


def test_distinct_names_and_defaults_pass(tmp_path: Path) -> None:
    path = tmp_path / "p.toml"
    path.write_text(stages('"copies"', None, None))
    assert [s.name for s in load_spec(path).stages] == ["copies", "2: enn", "3: enn"]


def test_the_command_line_exits_2_naming_the_line(tmp_path: Path,
                                                  capsys: pytest.CaptureFixture[str]) -> None:
    text = stages('"mislabels"', '"mislabels"')
    path = tmp_path / "p.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    second = line_of(text, 'name = "mislabels"', 1)
    assert f"line {second}" in err and "Traceback" not in err
