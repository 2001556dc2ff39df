"""The pipeline file: defaults, locations in messages, and the contract's key names.

Reference for the file format: TOML 1.0, read by Python's tomllib (outside the project).
"""

from __future__ import annotations

import tomllib

import pytest

from curate.errors import PipelineFileError
from curate.methods import METHODS
from curate.spec import load_spec, spec_from_dict

CONTRACT = """
[input]
path = "data/readings.csv"
label = "condition"
id = "reading_id"
ignore = ["note"]
on_invalid = "stop"

[input.columns.vibration_mm_s]
type = "float"
min = 0.0
max = 80.0
nullable = false

[space]
scale = "range"
distance = "euclidean"
missing = "stop"

[[stages]]
name = "re-sent rows"
method = "exact-duplicates"

[[stages]]
name = "mislabels"
method = "enn"
k = 3
vote = "majority"
max_removed_share = 0.5

[output]
folder = "runs/latest"
overwrite = false
"""


def test_the_contract_shape_is_accepted(tmp_path):
    """Every key the foundation issue spells out is accepted under its contract name."""
    path = tmp_path / "p.toml"
    path.write_text(CONTRACT)
    spec = load_spec(path)
    assert spec.input.path == (tmp_path / "data/readings.csv").resolve()
    assert spec.input.id == "reading_id" and spec.input.ignore == ("note",)
    assert spec.input.columns[0].max == 80.0
    assert [s.method for s in spec.stages] == ["exact-duplicates", "enn"]
    assert spec.stages[1].params == {"k": 3, "vote": "majority"}
    assert spec.stages[1].max_removed_share == 0.5
    assert spec.output.folder == (tmp_path / "runs/latest").resolve()
    assert len(spec.sha256) == 64


def test_defaults_are_filled():
    spec = spec_from_dict({"input": {"path": "x.csv", "label": "y"}, "stages": [{"method": "enn"}]})
    assert (spec.space.scale, spec.space.distance, spec.space.missing) == ("range", "euclidean", "stop")
    assert spec.stages[0].params == {"k": 3, "vote": "majority"}
    assert spec.stages[0].max_removed_share == 0.5 and spec.stages[0].classes == "all"
    assert spec.input.on_invalid == "stop" and spec.output.overwrite is False
    assert spec.run.engine.recall_target == 0.99


@pytest.mark.parametrize(("text", "words"), [
    ("[input]\npath = 'x.csv'\nlabel = 'y'\ncolour = 1\n[[stages]]\nmethod = 'enn'\n",
     ("line 4", "'colour'", "is not a known key")),
    ("[input]\npath = 'x.csv'\nlabel = 'y'\n[[stages]]\nmethod = 'enn'\n[[stages]]\nmethod = 'enn'\n"
     "k = -2\n", ("line 8", "stage 2", "'k'", ">= 1")),
    ("[input]\npath = 'x.csv'\nlabel = 'y'\n[space]\nscale = 'log'\n[[stages]]\nmethod = 'enn'\n",
     ("line 5", "'log'", "'range', 'zscore', 'robust'")),
    ("[input]\npath = 'x.csv'\n[[stages]]\nmethod = 'enn'\n", ("has no 'label'",)),
    ("[input]\npath = 'x.csv'\nlabel = 'y'\n", ("no [[stages]]",)),
    ("[input]\npath = 'x.csv'\nlabel = 'y'\n[[stages]]\nmethod = 'edited'\n",
     ("line 5", "unknown method 'edited'", "enn")),
    ("[input]\npath = 'x.csv'\nlabel = 'y'\n[[stages]]\nmethod = 'enn'\nclasses = 'some'\n",
     ("line 6", "all-but-smallest")),
    ("[input\npath = 'x.csv'\n", ("not valid TOML",)),
    ("[input]\npath = 'x.csv'\nlabel = 'y'\n[[stages]]\nmethod = 'enn'\n[run]\n"
     "recall_target = 1.5\n", ("line 7", "'recall_target'", "at most 1.0")),
])
def test_errors_name_line_key_and_allowed_values(tmp_path, text, words):
    path = tmp_path / "p.toml"
    path.write_text(text)
    with pytest.raises(PipelineFileError) as err:
        load_spec(path)
    message = str(err.value)
    assert str(path) in message and "hint:" in message
    for word in words:
        assert word in message


def test_unknown_method_lists_every_known_method(tmp_path):
    path = tmp_path / "p.toml"
    path.write_text("[input]\npath = 'x.csv'\nlabel = 'y'\n[[stages]]\nmethod = 'nope'\n")
    with pytest.raises(PipelineFileError) as err:
        load_spec(path)
    assert all(key in str(err.value) for key in METHODS)


def test_example_pipelines_parse_with_tomllib_and_load():
    """The shipped example pipeline files are valid TOML and valid pipelines (their schema
    module is in the repository's schemas folder, trusted as README shows)."""
    from pathlib import Path

    for path in sorted(Path("pipelines").glob("*.toml")):
        tomllib.loads(path.read_text())
        assert load_spec(path, trust_code=["schemas"]).stages
