"""Table -> matrix: rows as points in which the chosen distance is plain Lp distance.

* :mod:`~curate.space.points`: :class:`Space`, the matrix and its metric;
* :mod:`~curate.space.build`: :func:`build_space` and :func:`fit_space` from a table;
* :mod:`~curate.space.columns`: one column scaled, encoded (overlap, VDM) or imputed;
* :mod:`~curate.space.distance`: the exact distances every neighbour search is ranked by.
"""

from curate.space.build import WEIGHT_SEED, SpaceModel, build_space, fit_space, identity_codes
from curate.space.points import Space

__all__ = ["WEIGHT_SEED", "Space", "SpaceModel", "build_space", "fit_space", "identity_codes"]
