"""Every curate method as a scikit-learn / imbalanced-learn sampler.

:class:`Sampler` wraps one method of :data:`curate.methods.METHODS` behind
``fit_resample(X, y)``, so that it can sit as a step of an
``imblearn.pipeline.Pipeline``: there, cross-validation curates the training
folds only and scores the model on untouched test folds.

Why not a subclass of ``imblearn.base.BaseSampler``: its ``fit_resample``
turns every input into a numeric array first, which would lose the nominal
columns of a data frame (curate measures them with the overlap metric), and
it requires a ``sampling_strategy`` that means "how many rows per class", a
question curate's methods do not answer. The sampler is a plain scikit-learn
estimator with the method ``fit_resample``, which is all the imbalanced-learn
pipeline looks for.

A continuous ``y`` makes it a regression step (``task="auto"``, as in the
pipeline file): the regression methods (``reg-enn``, ``reg-cnn``,
``discretized``, and the regression forms of ``exact-duplicates``,
``conflicting-duplicates`` and ``hardness``) run on the numeric targets, so the
sampler sits in an ``imblearn.pipeline.Pipeline`` before any regressor.
"""

from __future__ import annotations

import contextlib
import warnings
from typing import Any

import numpy as np
import polars as pl
from sklearn.base import BaseEstimator, OneToOneFeatureMixin
from sklearn.utils import check_consistent_length
from sklearn.utils.multiclass import check_classification_targets, type_of_target
from sklearn.utils.validation import validate_data

from curate.errors import CurateWarning, InputError, UsageError, quoted
from curate.io.schema import feature_kinds
from curate.io.task import detect_task
from curate.methods import METHODS, REGRESSION_METHODS, method_for
from curate.methods._targets import check_targets, quantile_bins
from curate.methods.base import MethodInfo
from curate.pipeline.audit import AuditLog
from curate.pipeline.stage import run_step
from curate.settings import CLASS_CHOICES, SpaceSettings, StageSettings, check_params
from curate.space.build import build_space

__all__ = ["Sampler"]


class Sampler(OneToOneFeatureMixin, BaseEstimator):
    """Run one curate method on ``(X, y)`` and return the rows it keeps.

    Parameters
    ----------
    method : str
        A method key, as in the pipeline file (``curate methods`` lists them).
    params : dict or None
        The method's own parameters (``k``, ``vote``, ``radius``...), checked
        against its declared table when fitting; None means its defaults.
    scale, distance, missing : str
        How rows become points, as in the pipeline file's ``[space]``:
        ``scale`` "range" (default), "zscore", "robust" or "none" (values as
        they are, for pre-scaled features and embeddings); ``distance``
        "euclidean" (default), "manhattan", "heom" or "hvdm"; ``missing``
        "stop" (default: missing values are an error), "impute" or "far".
    classes : "all", "all-but-smallest" or list of labels
        Which labels' rows the method may remove; rows of other labels still
        count as neighbours. A regression step takes "all" only.
    task : "auto", "classification" or "regression"
        ``auto`` reads ``y`` as the pipeline file's ``[input] task = "auto"``
        reads the target column; a method that exists for one task only
        settles it.
    seed : int
        Seed of the method's randomness (presentation orders, tie draws).
    quiet : bool
        Give no warnings of curate's own (such as a constant column). Each fit
        warns once per problem; scikit-learn's cross-validation fits a fresh
        sampler per fold, so ``quiet=True`` is how to silence the repeats.
    max_removed_share : float or None
        The safety limit: the share of a class the method may remove, from 0
        to 1. Over it, ``fit_resample`` raises
        :class:`curate.errors.SafetyLimitError` (a ``ValueError``) naming the
        class and the counts. None (the default) or 1.0: no limit.
    **method_params
        Keyword convenience: ``Sampler(method="enn", k=5)`` stores
        ``params={"k": 5}`` (merged over ``params`` into a new dictionary).
        ``get_params`` reports them inside ``params`` and ``set_params(k=7)``
        updates ``params``, so ``clone`` and grid searches see them.

    Attributes
    ----------
    sample_indices_ : ndarray
        Positions of the kept rows in the input, ascending.
    audit_ : polars.DataFrame
        One row per removed row, with curate's audit columns; ``row_id`` is
        the input position.
    scores_ : dict of str to ndarray
        Per-row scores the method computed (kDN hardness, doubt), one per input row.
    task_ : str
        The task the step ran as, "classification" or "regression".
    suggested_labels_ : ndarray or None
        For label-noise methods, the label suggested for each flagged row
        (None elsewhere), removed or kept (``action = "relabel"``); None for
        other methods. ``y`` itself is never changed.
    n_features_in_, feature_names_in_
        As in scikit-learn.

    Notes
    -----
    Numeric arrays (and lists) are read as numeric features. Data frames
    (pandas or polars) keep their column types: text, categorical and boolean
    columns are nominal and measured with the overlap metric. The kept rows
    come back in the input's type (a pandas frame keeps its index). Problems
    with ``X`` or ``y`` raise ``ValueError`` or ``TypeError`` as in
    scikit-learn; problems with the settings raise
    :class:`curate.errors.UsageError`.

    Examples
    --------
    >>> X = np.array([[0.0], [0.1], [0.2], [0.3], [0.15], [1.0], [1.1], [1.2], [1.3]])
    >>> y = np.array(["a", "a", "a", "a", "b", "b", "b", "b", "b"])
    >>> sampler = Sampler(method="enn", k=3)
    >>> X_kept, y_kept = sampler.fit_resample(X, y)
    >>> sampler.sample_indices_.tolist(), sampler.audit_["reason"].to_list()
    ([0, 1, 2, 3, 5, 6, 7, 8], ['knn-disagrees'])
    >>> sampler.get_params()["params"]
    {'k': 3}

    With a continuous ``y`` it curates a regression table:

    >>> y = np.array([10.0, 11.0, 12.0, 40.0, 13.0, 14.0, 15.0, 16.0, 17.0])
    >>> sampler = Sampler(method="reg-enn", k=2).fit(np.arange(9.0).reshape(-1, 1), y)
    >>> sampler.task_, sampler.sample_indices_.tolist()
    ('regression', [0, 1, 2, 4, 5, 6, 7, 8])
    """

    def __init__(self, method: str = "enn", params: dict[str, Any] | None = None, *,
                 scale: str = "range", distance: str = "euclidean", missing: str = "stop",
                 classes: str | list[Any] = "all", seed: int = 0, task: str = "auto",
                 quiet: bool = False, max_removed_share: float | None = None,
                 **method_params: Any) -> None:
        self.method = method
        # scikit-learn keeps constructor arguments untouched; the one exception,
        # keyword convenience, lands in ``params`` so that get_params sees it.
        self.params = _merged(params, method_params)
        self.scale = scale
        self.distance = distance
        self.missing = missing
        self.classes = classes
        self.seed = seed
        self.task = task
        self.quiet = quiet
        self.max_removed_share = max_removed_share

    def set_params(self, **values: Any) -> Sampler:
        """Set parameters; names of the method's own parameters go into ``params``.

        Examples
        --------
        >>> Sampler(method="enn").set_params(k=7, seed=3).get_params()["params"]
        {'k': 7}
        """
        own = set(self._get_param_names())
        extra = {k: v for k, v in values.items() if k not in own and "__" not in k}
        super().set_params(**{k: v for k, v in values.items() if k not in extra})
        if extra:
            info = METHODS.get(self.method, REGRESSION_METHODS.get(self.method)) \
                if isinstance(self.method, str) else None
            unknown = [k for k in extra if info is not None and info.param(k) is None]
            if unknown:
                raise ValueError(f"Invalid parameter {unknown[0]!r} for estimator {self!r}: "
                                 f"method {self.method!r} has parameters "
                                 f"{', '.join(p.name for p in info.params)}")  # type: ignore[union-attr]
            self.params = _merged(self.params, extra)
        return self

    def __sklearn_tags__(self) -> Any:
        tags = super().__sklearn_tags__()
        tags.estimator_type = "sampler"
        tags.target_tags.required = True
        tags.input_tags.allow_nan = self.missing != "stop"
        return tags

    def fit(self, X: Any, y: Any) -> Sampler:
        """Select the rows to keep and set the fitted attributes; return the sampler."""
        self.fit_resample(X, y)
        return self

    def fit_resample(self, X: Any, y: Any) -> tuple[Any, Any]:
        """Return the kept rows of ``X`` and ``y``, in their input types.

        Examples
        --------
        >>> import polars as pl
        >>> frame = pl.DataFrame({"size": [1.0, 1.1, 1.2, 5.0, 5.1, 5.0],
        ...                       "kind": ["p", "p", "q", "q", "q", "q"]})
        >>> kept, labels = Sampler(method="exact-duplicates").fit_resample(
        ...     frame, ["a", "a", "a", "b", "b", "b"])
        >>> kept.height, labels
        (5, ['a', 'a', 'a', 'b', 'b'])
        """
        if y is None:
            raise ValueError(f"{type(self).__name__} requires y to be passed, but the target y "
                             "is None")
        values = _values(y)
        task = self._task(values)
        info, params = self._checked_settings(task)
        frame, kinds = self._features(X)
        labels = _labels(values) if task == "classification" else _targets(values)
        check_consistent_length(frame, labels)
        if info.uses_neighbours and frame.height < 2:
            raise ValueError(f"method {info.key!r} compares rows with their neighbours, but got "
                             f"n_samples = {frame.height}; give two or more rows")
        if info.compares_classes and len(np.unique(labels)) < 2:
            raise ValueError(f"method {info.key!r} compares classes, but y has one class only "
                             f"({quoted(labels[0])}); give two or more classes")
        classes = labels if task == "classification" else \
            quantile_bins(labels, 10)[0].astype(str)
        stage = StageSettings(name=info.key, method=info.key, params=params,
                              max_removed_share=self._limit(), classes=self._classes())
        with warnings.catch_warnings() if self.quiet else contextlib.nullcontext():
            if self.quiet:
                warnings.simplefilter("ignore", CurateWarning)
            space = build_space(frame, kinds, SpaceSettings(self.scale, self.distance,
                                                            self.missing),
                                list(range(frame.height)), labels=classes)
            step = run_step(stage, space, labels, np.zeros(0, dtype=np.int64), self.seed,
                            list(range(frame.height)), task)
        if step.over_limit is not None:
            raise step.over_limit
        sel = step.selection
        self.task_ = task
        self.sample_indices_ = np.sort(sel.kept)
        self.audit_ = _audit(info, sel, labels)
        self.scores_ = dict(sel.scores)
        self.suggested_labels_ = sel.suggested
        return _take(X, self.sample_indices_), _take(y, self.sample_indices_)

    def _task(self, values: np.ndarray) -> str:
        """The task this fit runs as: as set, by the method, or read from ``y``."""
        if self.task not in ("auto", "classification", "regression"):
            raise UsageError(f"Sampler: task = {self.task!r} is not allowed",
                             hint="use \"auto\", \"classification\" or \"regression\"")
        if self.task != "auto":
            return str(self.task)
        if self.method in METHODS and self.method not in REGRESSION_METHODS:
            return "classification"
        if self.method in REGRESSION_METHODS and self.method not in METHODS:
            return "regression"
        return detect_task(values).task

    def _checked_settings(self, task: str) -> tuple[MethodInfo, dict[str, Any]]:
        info = method_for(str(self.method), task, "Sampler")
        if self.params is not None and not isinstance(self.params, dict):
            raise UsageError(f"Sampler: params must be a dict or None, got {self.params!r}",
                             hint="write params={\"k\": 5}, or pass k=5")
        if isinstance(self.seed, bool) or not isinstance(self.seed, int | np.integer):
            raise UsageError(f"Sampler: seed must be an integer, got {self.seed!r}",
                             hint="pass seed=0 (or any integer)")
        return info, check_params(info, dict(self.params or {}), where=f"Sampler({info.key})",
                                  others="the Sampler's own arguments are: "
                                         + ", ".join(self._get_param_names()))

    def _limit(self) -> float:
        share = self.max_removed_share
        if share is None:
            return 1.0
        number = isinstance(share, int | float | np.floating) and not isinstance(share, bool)
        if not number or not 0.0 <= share <= 1.0:
            raise UsageError(f"Sampler: max_removed_share = {share!r} is not a share from 0 to 1",
                             hint="pass a share such as 0.5, or None for no limit")
        return float(share)

    def _classes(self) -> str | tuple[Any, ...]:
        if isinstance(self.classes, str) and self.classes in CLASS_CHOICES:
            return self.classes
        if isinstance(self.classes, list | tuple | np.ndarray) and len(self.classes) > 0:
            return tuple(self.classes)
        raise UsageError(f"Sampler: classes = {self.classes!r} is not allowed",
                         hint="use \"all\", \"all-but-smallest\" or a non-empty list of labels")

    def _features(self, X: Any) -> tuple[pl.DataFrame, dict[str, str]]:
        """Turn ``X`` into a polars frame and its column kinds; set ``n_features_in_``."""
        if (_is_pandas(X) and hasattr(X, "columns")) or isinstance(X, pl.DataFrame):
            frame = X if isinstance(X, pl.DataFrame) else _from_pandas(X)
            if frame.height == 0 or frame.width == 0:
                raise ValueError(f"found array with {frame.height} sample(s) and {frame.width} "
                                 "feature(s) while a minimum of 1 is required")
            validate_data(self, X, skip_check_array=True, reset=True)
            return frame, feature_kinds(frame, frame.columns, ())
        allow = "allow-nan" if self.missing != "stop" else True
        array = validate_data(self, X, dtype="numeric", ensure_all_finite=allow, reset=True)
        names = [f"x{j}" for j in range(array.shape[1])]
        frame = pl.DataFrame(np.asarray(array, dtype=np.float64), schema=names, orient="row",
                             nan_to_null=True)
        return frame, {name: "float" for name in names}


def _merged(params: Any, extra: dict[str, Any]) -> Any:
    """``params`` updated with ``extra`` in a new dict; a non-dict ``params`` is left for fit
    to report (scikit-learn expects constructors and set_params never to raise)."""
    if not extra or not (params is None or isinstance(params, dict)):
        return params
    return {**(params or {}), **extra}


def _is_pandas(obj: Any) -> bool:
    # pandas is optional: recognise its objects without importing it.
    return type(obj).__module__.split(".")[0] == "pandas"


def _from_pandas(X: Any) -> pl.DataFrame:
    return pl.from_pandas(X.rename(columns=str), include_index=False)


def _values(y: Any) -> np.ndarray:
    """``y`` as a one-dimensional numpy array."""
    if isinstance(y, pl.Series):
        values = (y.cast(pl.String) if y.dtype == pl.Categorical else y).to_numpy()
    elif isinstance(y, pl.DataFrame):
        values = y.to_numpy()
    else:
        values = np.asarray(y.to_numpy() if _is_pandas(y) else y)
    if values.ndim == 2 and values.shape[1] == 1:
        values = values.ravel()
    if values.ndim != 1:
        raise ValueError("Multilabel and multioutput targets are not supported: y must be one "
                         f"column of labels, got shape {values.shape}")
    return values


def _targets(values: np.ndarray) -> np.ndarray:
    """Numeric targets as float64; a bad ``y`` is a ValueError, as scikit-learn raises."""
    try:
        return check_targets(values, where="y")
    except InputError as err:
        raise ValueError(str(err)) from None


def _labels(values: np.ndarray) -> np.ndarray:
    """Class labels, checked the scikit-learn way."""
    check_classification_targets(values)
    if type_of_target(values) not in ("binary", "multiclass"):
        raise ValueError(f"Unknown label type: {type_of_target(values)}")
    return values


def _audit(info: MethodInfo, sel: Any, labels: np.ndarray) -> pl.DataFrame:
    """The audit table of one selection; row ids are input positions."""
    builder = AuditLog(pl.Series("row_id", np.arange(len(labels), dtype=np.int64)),
                           pl.Series("label", labels))
    builder.add(stage=info.key, method=info.key, positions=sel.removed, reason=sel.reason,
                detail=sel.detail, neighbours=sel.neighbours, distances=sel.distances,
                kept_as=sel.kept_as, step=sel.step,
                suggested=None if sel.suggested is None else sel.suggested[sel.removed])
    return builder.frame()


def _take(obj: Any, positions: np.ndarray) -> Any:
    """Rows ``positions`` of ``obj``, in the type ``obj`` came in."""
    if _is_pandas(obj):
        return obj.iloc[positions]
    if isinstance(obj, pl.DataFrame | pl.Series):
        return obj[positions]
    if isinstance(obj, list):
        return [obj[i] for i in positions]
    return np.asarray(obj)[positions]
