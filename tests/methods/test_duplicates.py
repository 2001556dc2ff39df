"""Exact and conflicting copies, checked against polars' own duplicate detection."""

from __future__ import annotations

import warnings

import numpy as np
import polars as pl
from hypothesis import given, settings
from hypothesis import strategies as st

from curate.errors import ConstantColumnWarning
from curate.methods.duplicates import conflicting_duplicates, exact_duplicates
from curate.settings import SpaceSettings
from curate.space import build_space

KINDS = {"a": "int", "b": "category"}


def space_of(frame: pl.DataFrame):
    with warnings.catch_warnings():
        # Random tables may have a constant column; that warning is not what is tested here.
        warnings.simplefilter("ignore", ConstantColumnWarning)
        return build_space(frame, KINDS, SpaceSettings(), list(range(frame.height)))


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 3), st.sampled_from("xy"), st.sampled_from("PQ")),
                min_size=1, max_size=40))
def test_exact_copies_match_polars(rows):
    """Reference: polars DataFrame.is_first_distinct over features and label."""
    frame = pl.DataFrame(rows, schema=["a", "b", "y"], orient="row")
    sel = exact_duplicates(space_of(frame), frame["y"].to_numpy(),
                           removable=np.ones(frame.height, bool))
    first = frame.select(pl.struct("a", "b", "y").is_first_distinct()).to_series().to_numpy()
    assert sel.kept.tolist() == np.flatnonzero(first).tolist()
    # kept_as names the first row with the same values (polars: first index per group).
    firsts = frame.with_row_index("i").group_by(["a", "b", "y"]).agg(pl.col("i").min())
    lookup = {(a, b, y): i for a, b, y, i in firsts.iter_rows()}
    for pos, keeper in zip(sel.removed, sel.kept_as, strict=True):
        assert keeper == lookup[tuple(frame.row(int(pos)))]


def test_exact_copies_keep_a_protected_row():
    frame = pl.DataFrame({"a": [1, 1, 1, 2], "b": ["x", "x", "x", "z"], "y": ["P", "P", "P", "P"]})
    removable = np.array([True, False, True, True])
    sel = exact_duplicates(space_of(frame), frame["y"].to_numpy(), removable=removable)
    assert sel.kept.tolist() == [1, 3]
    assert sel.kept_as.tolist() == [1, 1]


def test_close_values_are_not_merged_by_scaling():
    """Two values one ulp apart stay distinct, as polars sees them (raw values decide)."""
    x = 1.0 + np.finfo(float).eps
    frame = pl.DataFrame({"a": [1.0, x, 1000.0], "y": ["P", "P", "P"]})
    space = build_space(frame, {"a": "float"}, SpaceSettings(), [0, 1, 2])
    sel = exact_duplicates(space, frame["y"].to_numpy(), removable=np.ones(3, bool))
    assert frame.select(pl.col("a").is_duplicated()).to_series().sum() == 0
    assert len(sel.removed) == 0


# Hand-made table (hand-computed expectations):
# rows 0,1,4 share values with labels P,Q,P -> conflicting group, majority P (first row 0)
# rows 2,3 share values with labels P,Q     -> conflicting group, tie
# row 5 is unique; rows 6,7 are same-label copies (not a conflict)
TABLE = pl.DataFrame({"a": [1, 1, 2, 2, 1, 3, 4, 4], "b": ["x", "x", "z", "z", "x", "x", "z", "z"],
                      "y": ["P", "Q", "P", "Q", "P", "P", "Q", "Q"]})


def run_conflicts(policy: str):
    return conflicting_duplicates(space_of(TABLE), TABLE["y"].to_numpy(),
                                  removable=np.ones(TABLE.height, bool), policy=policy)


def test_conflicts_drop_all():
    sel = run_conflicts("drop-all")
    assert sel.removed.tolist() == [0, 1, 4, 2, 3]
    assert set(sel.reason) == {"conflicting-copy"}
    # each removal names the other rows of its group
    assert sel.neighbours[0].tolist() == [1, 4]
    assert sel.neighbours[3].tolist() == [3]


def test_conflicts_keep_majority():
    sel = run_conflicts("keep-majority")
    got = dict(zip(sel.removed.tolist(), sel.reason, strict=True))
    assert got == {1: "conflict-outvoted", 4: "conflict-repeat", 2: "conflict-tie",
                   3: "conflict-tie"}
    assert sel.kept_as[sel.removed.tolist().index(1)] == 0


def test_conflicts_report_removes_nothing_and_lists_groups():
    sel = run_conflicts("report")
    assert len(sel.removed) == 0
    assert [g.tolist() for g in sel.groups] == [[0, 1, 4], [2, 3]]
    assert sel.info == {"conflicting_groups": 2, "rows_in_conflicting_groups": 5}
