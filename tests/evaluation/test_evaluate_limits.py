"""A stage over its max_removed_share stops a run but is only counted by an evaluation.

Reference: the run's own contract (exit code 4, SafetyLimitError) on the same
pipeline and data; seeded Gaussians with 30% flipped labels, where ENN must
remove far more than 1% of each class (Wilson 1972: every row its neighbours
misclassify goes).
"""

from __future__ import annotations

import pytest
from evaluate_fixtures import gaussians_csv, spec_for

from curate.api import run
from curate.cli.render import evaluation_text
from curate.errors import SafetyLimitError
from curate.evaluation.crossval import evaluate


def test_evaluation_counts_the_folds_where_a_stage_went_over_its_limit(tmp_path) -> None:
    path, _, _ = gaussians_csv(tmp_path, 300, 1.0, dims=2, seed=9, flip=0.3)
    spec = spec_for(path, "y", [{"name": "strict", "method": "enn", "k": 3,
                                 "max_removed_share": 0.01}])
    with pytest.raises(SafetyLimitError):
        run(spec)
    out = evaluate(spec, folds=3, repeats=2, ks=[1], seed=0)
    assert out["over_limit"] == {"strict": 6}
    assert 0 < out["kept_share"] < 0.99
    assert "warning: stage 'strict'" in evaluation_text(out)
