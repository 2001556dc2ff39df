"""The models of a label-noise committee: names, import paths and their parameters.

A committee entry is written in a pipeline file as a string or a table:

* ``"knn"``: a k-nearest-neighbour vote in curate's own space (so the chosen
  distance, HEOM/HVDM and column weights apply); parameter ``k``.
* ``"trees"``: a random forest; ``"linear"``: a logistic regression;
  ``"tree"``: one decision tree grown C4.5-style (entropy, leaves of two rows
  or more). These three learn from the space's coordinates.
* the import path of any scikit-learn classifier with ``predict_proba``, such
  as ``"sklearn.naive_bayes.GaussianNB"``;

On a numeric target (``regression=True``) the same names give regressors: the
k-NN mean of the neighbours' targets, a random forest, a ridge regression and
one regression tree; an import path must name a model with ``predict``.
* a table ``{ model = "<name or path>", params = { ... } }`` to set its
  parameters.

Every member is checked here, once, with a message that names the entry
(``models[2]``), says what is wrong and how to fix it.
"""

from __future__ import annotations

import importlib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from curate.errors import UsageError

__all__ = ["BUILTIN", "DEFAULT_MODELS", "KNN", "REGRESSORS", "Member", "describe_models",
           "estimator", "models_problem", "parse_models"]

KNN = "knn"
# Built-in members other than the k-NN vote: (import path, default parameters). Why these
# defaults: see benchmarks/bench_noise.py, which measured them on open tables.
BUILTIN: dict[str, tuple[str, dict[str, Any]]] = {
    "trees": ("sklearn.ensemble.RandomForestClassifier", {"n_estimators": 100}),
    # Weak regularisation: on coordinates in [0, 1] the usual C = 1 flattens the
    # probabilities, and the doubt ranking's average precision drops (0.87 -> 0.84).
    "linear": ("sklearn.linear_model.LogisticRegression", {"C": 100.0, "max_iter": 1000}),
    "tree": ("sklearn.tree.DecisionTreeClassifier",
             {"criterion": "entropy", "min_samples_leaf": 2}),
}
# The same names on a numeric target. The ridge's weak penalty matches the logistic
# regression's C = 100 on coordinates in [0, 1].
REGRESSORS: dict[str, tuple[str, dict[str, Any]]] = {
    "trees": ("sklearn.ensemble.RandomForestRegressor", {"n_estimators": 100}),
    "linear": ("sklearn.linear_model.Ridge", {"alpha": 0.01}),
    "tree": ("sklearn.tree.DecisionTreeRegressor", {"min_samples_leaf": 2}),
}
KNN_DEFAULTS: dict[str, Any] = {"k": 5}
DEFAULT_MODELS = ("knn", "trees", "linear")


@dataclass(frozen=True)
class Member:
    """One committee member: its name as written, the import path (None for the k-NN vote)
    and its parameters (defaults merged with what the pipeline file set)."""

    name: str
    path: str | None
    params: dict[str, Any] = field(default_factory=dict)
    regression: bool = False

    @property
    def is_knn(self) -> bool:
        """Whether this member is the k-NN vote in curate's space."""
        return self.path is None


def _entry(value: Any, where: str, regression: bool = False) -> Member:
    """One entry of ``models`` as a Member; raise UsageError naming ``where``."""
    if isinstance(value, Mapping):
        unknown = sorted(set(value) - {"model", "params"})
        if unknown or "model" not in value:
            raise UsageError(f"{where}: a model table needs the key 'model' and may have "
                             f"'params' (got keys {sorted(value)})",
                             hint='write { model = "trees", params = { n_estimators = 200 } }')
        name, given = value["model"], value.get("params", {})
        if not isinstance(given, Mapping):
            raise UsageError(f"{where}: params must be a table of parameter = value, "
                             f"got {given!r}", hint="write params = { max_depth = 5 }")
    else:
        name, given = value, {}
    if not isinstance(name, str) or not name:
        raise UsageError(f"{where}: got {name!r}, expected a model name or import path",
                         hint="use 'knn', 'trees', 'linear', 'tree' or a path such as "
                              "'sklearn.naive_bayes.GaussianNB'")
    if name == KNN:
        unknown = sorted(set(given) - set(KNN_DEFAULTS))
        k = given.get("k", KNN_DEFAULTS["k"])
        if unknown or not isinstance(k, int) or isinstance(k, bool) or k < 1:
            raise UsageError(f"{where}: the knn member takes one parameter, k (an integer "
                             f">= 1), got {dict(given)}", hint="write { model = \"knn\", "
                                                                "params = { k = 10 } }")
        return Member(name, None, {"k": k}, regression)
    table = REGRESSORS if regression else BUILTIN
    path, defaults = table.get(name, (name, {}))
    member = Member(name, path, defaults | dict(given), regression)
    if name not in table or given:
        # imports and builds it once, to check it; a built-in with its own defaults needs no
        # check (and every command would otherwise import scikit-learn's models at start-up)
        estimator(member, seed=0, where=where)
    return member


def parse_models(value: Any, key: str = "models",
                 regression: bool = False) -> tuple[Member, ...]:
    """Check a ``models`` list and return its members, in order.

    Examples
    --------
    >>> [m.name for m in parse_models(["knn", {"model": "linear", "params": {"C": 0.5}}])]
    ['knn', 'linear']
    >>> parse_models(["sklearn.svm.LinearSVC"])
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: models[1]: 'sklearn.svm.LinearSVC' has no predict_proba, so it \
gives no probabilities to average
      hint: use a classifier with predict_proba (for SVC: params = { probability = true })
    """
    if isinstance(value, str | Mapping) or not isinstance(value, Sequence) or not value:
        raise UsageError(f"{key}: got {value!r}, expected a non-empty list of models",
                         hint=f'write {key} = ["knn", "trees", "linear"]')
    members = tuple(_entry(v, f"{key}[{i + 1}]", regression) for i, v in enumerate(value))
    seen = [(m.name, repr(sorted(m.params.items()))) for m in members]
    if len(set(seen)) != len(seen):
        raise UsageError(f"{key}: a model appears twice with the same parameters",
                         hint="name each model once, or give the copies different parameters")
    return members


def models_problem(value: Any, regression: bool = False) -> str | None:
    """Why ``value`` is not a valid ``models`` list, or None when it is.

    Examples
    --------
    >>> models_problem(["knn", "trees"]) is None
    True
    >>> models_problem(["no.such.Model"])
    "models[1]: 'no.such.Model' does not import (no module named 'no'); check the spelling, \
and that the package is installed in curate's environment"
    """
    try:
        parse_models(value, regression=regression)
    except UsageError as err:
        return f"{err.message}; {err.hint}" if err.hint else err.message
    return None


def _import(path: str, where: str) -> Any:
    module, _, name = path.rpartition(".")
    if not module:
        raise UsageError(f"{where}: {path!r} is neither a built-in model nor an import path",
                         hint="use 'knn', 'trees', 'linear', 'tree' or a full path such as "
                              "'sklearn.naive_bayes.GaussianNB'")
    try:
        return getattr(importlib.import_module(module), name)
    except ImportError as err:
        raise UsageError(f"{where}: {path!r} does not import ({str(err).lower()})",
                         hint="check the spelling, and that the package is installed in "
                              "curate's environment") from None
    except AttributeError:
        raise UsageError(f"{where}: {path!r} does not import (module {module!r} has no "
                         f"{name!r})", hint="check the class name and its capitals") from None


def estimator(member: Member, *, seed: int, where: str = "models") -> Any:
    """Build a fresh, unfitted estimator for a member that is not the k-NN vote.

    A ``random_state`` the file did not set is set to ``seed``, so that runs repeat.

    Examples
    --------
    >>> estimator(Member("linear", "sklearn.linear_model.LogisticRegression", {"C": 2.0}),
    ...           seed=0).C
    2.0
    """
    if member.path is None:
        raise ValueError("the k-NN member is not a scikit-learn estimator")
    cls = _import(member.path, where)
    try:
        model = cls(**member.params)
    except TypeError as err:
        raise UsageError(f"{where}: {member.path} does not take the parameters "
                         f"{member.params}: {err}",
                         hint="use the parameter names of the class's constructor") from None
    kind = "regressor" if member.regression else "classifier"
    if not hasattr(model, "fit"):
        raise UsageError(f"{where}: {member.path!r} is not an estimator (it has no fit)",
                         hint=f"name a scikit-learn {kind}")
    if member.regression and not hasattr(model, "predict"):
        raise UsageError(f"{where}: {member.path!r} has no predict, so it predicts no targets",
                         hint="name a scikit-learn regressor, such as "
                              "'sklearn.ensemble.GradientBoostingRegressor'")
    if not member.regression and not hasattr(model, "predict_proba"):
        raise UsageError(f"{where}: {member.path!r} has no predict_proba, so it gives no "
                         "probabilities to average",
                         hint="use a classifier with predict_proba (for SVC: params = "
                              "{ probability = true })")
    if hasattr(model, "get_params") and "random_state" in model.get_params() \
            and "random_state" not in member.params:
        model.set_params(random_state=seed)
    return model


def describe_models(members: Sequence[Member]) -> list[str]:
    """Name each member with its parameters, for the summary.

    Examples
    --------
    >>> describe_models(parse_models(["knn"]))
    ['knn (k=5)']
    """
    return [f"{m.name} ({', '.join(f'{k}={v}' for k, v in m.params.items())})"
            if m.params else m.name for m in members]
