"""`scale = "none"`: distances on the features as they are, for pre-scaled features and embeddings.

Outside references: scipy's ``cdist`` on the raw features, imbalanced-learn's
EditedNearestNeighbours (``kind_sel="all"``, the same rule as curate's unanimous
ENN) on the raw, unscaled features, and scikit-learn's bundled wine set, whose
columns span very different ranges (proline in the hundreds, hue near 1), so a
forgotten scaling would change the neighbours.
"""

from __future__ import annotations

import numpy as np
import open_data
import polars as pl
import pytest
from imblearn.under_sampling import EditedNearestNeighbours
from scipy.spatial.distance import cdist
from threadpoolctl import threadpool_limits

from curate import Sampler
from curate.errors import PipelineFileError
from curate.neighbours import kneighbors
from curate.settings import SpaceSettings
from curate.space import build_space
from curate.spec import spec_from_dict


def test_the_space_measures_raw_values():
    X, _ = open_data.load("wine")
    names = [f"x{j}" for j in range(X.shape[1])]
    frame = pl.DataFrame(X, schema=names, orient="row")
    space = build_space(frame, dict.fromkeys(names, "float"), SpaceSettings(scale="none"),
                        list(range(len(X))))
    dist, pos = kneighbors(space, 3, queries=np.arange(20))
    reference = cdist(X[:20], X)
    reference[np.arange(20), np.arange(20)] = np.inf
    np.testing.assert_allclose(dist, np.sort(reference, axis=1)[:, :3], rtol=1e-12)
    np.testing.assert_allclose(reference[np.arange(20)[:, None], pos], dist, rtol=1e-12)


def test_sampler_without_scaling_keeps_what_imbalanced_learn_keeps_on_raw_features():
    X, y = open_data.load("wine")
    ours = Sampler(method="enn", k=3, vote="unanimous", scale="none")
    ours.fit_resample(X, y)
    theirs = EditedNearestNeighbours(sampling_strategy="all", n_neighbors=3, kind_sel="all")
    with threadpool_limits(1):
        theirs.fit_resample(X, y)
    assert ours.sample_indices_.tolist() == sorted(theirs.sample_indices_.tolist())
    scaled = Sampler(method="enn", k=3, vote="unanimous").fit(X, y).sample_indices_
    assert scaled.tolist() != ours.sample_indices_.tolist()  # the scaling really is off


def test_pipeline_file_accepts_it_and_heom_still_refuses_another_scale():
    spec = spec_from_dict({"input": {"path": "x.csv", "label": "y"}, "space": {"scale": "none"},
                           "stages": [{"method": "enn"}]})
    assert spec.space.scale == "none"
    with pytest.raises(PipelineFileError, match="scale"):
        spec_from_dict({"input": {"path": "x.csv", "label": "y"},
                        "space": {"scale": "none", "distance": "heom"},
                        "stages": [{"method": "enn"}]})
