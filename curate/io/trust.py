"""What code a pipeline file may load, and loading it without a traceback.

A pipeline file looks like data and is shared like data, but ``[input] schema``
names a Python module, and importing a module runs it with the user's rights.
So a schema module loads only from

* a ``file.py`` inside the pipeline file's folder (after symbolic links are
  resolved: a link inside the folder that points outside it does not count);
* a folder the user names on the command line (``--trust-code DIR``) or in
  Python (``trust_code=[...]``);
* a module (``package.module:Class``) whose name, or a parent package's name, the
  user names the same way (``--trust-code package.module``).

Anything else is refused before it is imported. A module that does not parse
or raises while it is imported is reported with its file and line, not a
traceback.
"""

from __future__ import annotations

import importlib
import importlib.util
import re
import sys
import traceback
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from types import ModuleType

from curate.errors import PipelineFileError, UsageError

__all__ = ["TrustedCode", "import_schema_module", "refusal", "trusted_code"]

_MODULE_NAME = re.compile(r"[A-Za-z_]\w*(\.[A-Za-z_]\w*)*")


@dataclass(frozen=True)
class TrustedCode:
    """Folders (resolved) and module names the user trusts beyond the pipeline file's folder."""

    folders: tuple[Path, ...] = ()
    modules: tuple[str, ...] = ()


def trusted_code(entries: Iterable[str | Path] = ()) -> TrustedCode:
    """Sort ``--trust-code`` entries into folders and module names.

    An entry naming an existing folder (relative to the working folder) trusts
    that folder; an entry that is a dotted Python name trusts that module and
    its submodules. An entry may be both (``schemas``). Anything else is a
    usage error.

    Examples
    --------
    >>> trusted_code(["my_company.schemas"]).modules
    ('my_company.schemas',)
    >>> trusted_code(["/no/such/folder"])
    Traceback (most recent call last):
    ...
    curate.errors.UsageError: --trust-code '/no/such/folder' is neither an existing folder nor a module name
      hint: name a folder that holds schema files, or an installed module such as my_package.schemas
    """
    folders: list[Path] = []
    modules: list[str] = []
    for entry in entries:
        text = str(entry)
        path = Path(text)
        is_folder = _is_folder(path)
        if is_folder:
            folders.append(path.resolve())
        if _MODULE_NAME.fullmatch(text) and not isinstance(entry, Path):
            modules.append(text)
        elif not is_folder:
            raise UsageError(f"--trust-code {text!r} is neither an existing folder nor a module name",
                             hint="name a folder that holds schema files, or an installed module "
                                  "such as my_package.schemas")
    return TrustedCode(tuple(folders), tuple(modules))


def _is_folder(path: Path) -> bool:
    try:
        return path.is_dir() and bool(path.resolve())
    except (OSError, RuntimeError):  # a symbolic-link loop is no folder to trust
        return False


def refusal(module_ref: str, base: Path, trusted: TrustedCode) -> tuple[str, str] | None:
    """Why the schema module ``module_ref`` may not be loaded and the fix, or None when it may.

    ``module_ref`` is a resolved ``/path/file.py`` or a dotted module name;
    ``base`` is the pipeline file's folder.

    Examples
    --------
    >>> refusal("/pipes/schemas/r.py", Path("/pipes"), TrustedCode()) is None
    True
    >>> refusal("/elsewhere/r.py", Path("/pipes"), TrustedCode())[0]  # doctest: +ELLIPSIS
    "is refused: the file /elsewhere/r.py is outside the pipeline file's folder /pipes. ..."
    >>> refusal("acme.schemas.pumps", Path("/pipes"), TrustedCode(modules=("acme.schemas",))) is None
    True
    """
    if module_ref.endswith(".py"):
        path = Path(module_ref)
        if any(path.is_relative_to(folder) for folder in (base, *trusted.folders)):
            return None
        named = f" and the trusted folders {', '.join(map(str, trusted.folders))}" \
            if trusted.folders else ""
        problem, trust = f"the file {path} is outside the pipeline file's folder {base}{named}", \
            str(path.parent)
    elif any(module_ref == m or module_ref.startswith(m + ".") for m in trusted.modules):
        return None
    else:
        problem, trust = f"the module {module_ref!r} is not named with --trust-code", module_ref
    return (f"is refused: {problem}. A schema module is Python code and runs with your rights, "
            "so curate loads one only from the pipeline file's folder or from a folder or module "
            "you name",
            f"if you trust it, pass --trust-code {trust} (Python: trust_code=[{trust!r}]), or put "
            "the schema file in the pipeline file's folder")


def import_schema_module(module_ref: str) -> ModuleType:
    """Import a schema module (a ``file.py`` path or a module name) with clean errors.

    A file that does not parse, or raises while it runs, gives a
    :class:`~curate.errors.PipelineFileError` naming the file and line.

    Examples
    --------
    >>> import tempfile
    >>> bad = Path(tempfile.mkdtemp()) / "bad.py"
    >>> _ = bad.write_text("import math\\nvalue = math.sqrt(-1)\\n")
    >>> import_schema_module(str(bad))  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    curate.errors.PipelineFileError: schema file .../bad.py, line 2 raised ValueError: math domain error
      hint: fix the schema module at that line (it must import cleanly with python); ...
    """
    if module_ref.endswith(".py"):
        path = Path(module_ref)
        if not path.is_file():
            raise PipelineFileError(f"schema file {path} does not exist",
                                    hint="fix [input] schema = \"path/to/file.py:ClassName\"")
        name = f"curate_schema_{path.stem}"
        spec = importlib.util.spec_from_file_location(name, path)
        if spec is None or spec.loader is None:
            raise PipelineFileError(f"schema file {path} cannot be loaded as a Python module",
                                    hint="give a .py file: [input] schema = \"file.py:ClassName\"")
        module = importlib.util.module_from_spec(spec)
        sys.modules[name] = module
        try:
            spec.loader.exec_module(module)
        except (Exception, SystemExit) as err:
            sys.modules.pop(name, None)
            raise _import_failure(err, str(path), f"schema file {path}") from None
        return module
    try:
        return importlib.import_module(module_ref)
    except ModuleNotFoundError as err:
        if err.name is not None and (module_ref == err.name or module_ref.startswith(err.name + ".")):
            raise PipelineFileError(f"cannot import schema module {module_ref!r}: {err}",
                                    hint="fix [input] schema, or install the module") from None
        raise _import_failure(err, None, f"schema module {module_ref!r}") from None
    except (Exception, SystemExit) as err:
        raise _import_failure(err, None, f"schema module {module_ref!r}") from None


def _import_failure(err: BaseException, filename: str | None, what: str) -> PipelineFileError:
    """Name the file and line where importing the schema module failed."""
    if isinstance(err, SyntaxError):
        line = f", line {err.lineno}" if err.lineno else ""
        where = line if err.filename == filename else f" (in {err.filename}{line})"
        return PipelineFileError(f"{what}{where} does not parse: {err.msg}",
                                 hint="fix the Python syntax at that line")
    frames = [f for f in traceback.extract_tb(err.__traceback__)
              if not f.filename.startswith("<frozen")]
    own = [f for f in frames if f.filename == filename]
    if own:  # the line in the schema file itself that failed
        spot = f", line {own[-1].lineno}"
    elif frames and filename is None:  # a module by name: where the error was raised
        spot = f" ({frames[-1].filename}, line {frames[-1].lineno})"
    else:
        spot = ""
    detail = f"exit({err.code!r})" if isinstance(err, SystemExit) else str(err)
    return PipelineFileError(f"{what}{spot} raised {type(err).__name__}: {detail}",
                             hint="fix the schema module at that line (it must import cleanly with "
                                  "python); curate imports it to read the model named in "
                                  "[input] schema")
