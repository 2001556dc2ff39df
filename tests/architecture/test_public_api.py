"""The public face of ``curate``: ``__all__`` lists exactly the public names, each importable.

Outside reference: the Python language reference on ``__all__`` and module
``__getattr__`` (PEP 562); the house rule (a small public surface, all of it
in ``__all__`` and checked by a test) follows httpx and tomllib.
"""

from __future__ import annotations

import importlib
import subprocess
import sys
import types

import curate


def test_all_lists_exactly_the_public_names() -> None:
    """Every public, non-module name of the package is in ``__all__`` and no other."""
    public = {name for name in dir(curate) if not name.startswith("_")
              and not isinstance(getattr(curate, name), types.ModuleType)}
    assert public == set(curate.__all__)
    assert len(curate.__all__) == len(set(curate.__all__))


def test_each_public_name_imports() -> None:
    """``from curate import <name>`` works for every name in ``__all__``."""
    namespace: dict[str, object] = {}
    exec(f"from curate import {', '.join(curate.__all__)}", namespace)
    for name in curate.__all__:
        assert namespace[name] is getattr(curate, name)
        assert callable(namespace[name])
        home = importlib.import_module(namespace[name].__module__)
        assert getattr(home, name) is namespace[name]


def test_the_entry_points_are_run_update_load_spec_and_the_sampler() -> None:
    """The documented surface (README, "Python"): an update takes the same keywords as a run,
    plus the run folder, the new rows and refit."""
    import inspect

    assert set(curate.__all__) == {"Sampler", "load_spec", "run", "update"}
    run = inspect.signature(curate.run).parameters
    update = inspect.signature(curate.update).parameters
    assert set(run) <= set(update)
    assert {"run", "new", "refit"} <= {name for name, p in update.items()
                                       if p.kind is inspect.Parameter.KEYWORD_ONLY}


def test_unknown_names_raise_attribute_error() -> None:
    """A name curate does not have is an AttributeError, as for any module."""
    try:
        curate.no_such_name  # noqa: B018
    except AttributeError as err:
        assert "no_such_name" in str(err)
    else:
        raise AssertionError("curate.no_such_name did not raise")


def test_import_stays_light() -> None:
    """``import curate`` does not import scikit-learn or pandera (the command starts fast)."""
    code = ("import sys, curate; "
            "print(sorted(m for m in ('sklearn', 'pandera') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
