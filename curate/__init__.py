"""curate: clean and shrink tabular training sets, with an audit of every removed row.

The public face is small:

* :func:`run` runs a pipeline (file, dictionary or checked settings) and
  returns kept, removed and audit frames and the summary;
* :func:`update` adds new rows to a run folder, redoing only the work they cause,
  and returns the updated run;
* :func:`load_spec` reads and checks a pipeline file;
* :class:`Sampler` offers every method as a scikit-learn / imbalanced-learn
  sampler (``fit_resample``).

They are imported on first use, so that ``import curate`` (and so the
``curate`` command) does not pay for scikit-learn and pandera until needed.

Examples
--------
>>> import curate
>>> sorted(curate.__all__)
['Sampler', 'load_spec', 'run', 'update']
"""

# Imported under private names: every public name of the package is in __all__.
import importlib as _importlib
import typing as _typing

if _typing.TYPE_CHECKING:
    from curate.api import run, update
    from curate.sampler import Sampler
    from curate.spec import load_spec

__all__ = ["Sampler", "load_spec", "run", "update"]

_HOMES = {"Sampler": "curate.sampler", "load_spec": "curate.spec", "run": "curate.api",
          "update": "curate.api"}


def __getattr__(name: str) -> object:
    if name in _HOMES:
        return getattr(_importlib.import_module(_HOMES[name]), name)
    raise AttributeError(f"module 'curate' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
