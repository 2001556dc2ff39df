"""The report's projection equals scikit-learn's PCA (reference library).

``principal_components`` replaces ``sklearn.decomposition.PCA`` in the report
(importing scikit-learn cost most of a second per command): the projected
rows and the explained-variance shares must be scikit-learn's, signs
included, on its bundled wine and digits tables (open data shipped in a
package), range-normalised as curate measures them.
"""

from __future__ import annotations

import numpy as np
import open_data
import pytest
from sklearn.decomposition import PCA
from sklearn.preprocessing import MinMaxScaler

from curate.report.parts import principal_components


@pytest.mark.parametrize("name", ["wine", "digits"])
@pytest.mark.parametrize("n", [1, 2])
def test_projection_is_scikit_learns_pca(name: str, n: int) -> None:
    X, _ = open_data.load(name)
    matrix = MinMaxScaler().fit_transform(X)
    pca = PCA(n_components=n)
    expected = pca.fit_transform(matrix)
    xy, share = principal_components(matrix, n)
    np.testing.assert_allclose(xy, expected, atol=1e-9)
    np.testing.assert_allclose(share, pca.explained_variance_ratio_, rtol=1e-9)
