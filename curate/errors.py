"""The one error tree of curate.

Every error says what failed, where (file, key, column, class, first row ids
and a count) and ends with a hint for the fix. The CLI exits with the class's
``exit_code``:

* 2 :class:`UsageError`, :class:`PipelineFileError`, :class:`NeighbourCountError`,
  :class:`OutputError`;
* 3 :class:`InputError`, :class:`SchemaFailure`;
* 4 :class:`SafetyLimitError`;
* 1 :class:`ClusterError`, and anything that is not a :class:`CurateError` (a bug).

A run stopped by SIGTERM unwinds like Ctrl-C (:class:`Terminated`, exit 143;
Ctrl-C exits with 130). The CLI prints ``error: message`` (the plain problem, no class name)
and the ``hint:`` line.

Warnings derive from :class:`CurateWarning`; the CLI prints each distinct one
once as ``warning: message`` (none with ``--quiet``) and goes on. This module
imports nothing but the standard library, so every layer may use it, with the
helpers every message uses: :func:`quoted` prints a value as the user wrote it
(never a numpy repr), :func:`counted` gets "1 row" and "2 rows" right.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

__all__ = [
    "ClusterError",
    "ConstantColumnWarning",
    "CurateError",
    "CurateWarning",
    "InputError",
    "NeighbourCountError",
    "OutputError",
    "OutputRecovered",
    "PipelineFileError",
    "SafetyLimitError",
    "SchemaFailure",
    "Terminated",
    "UsageError",
    "canonical",
    "counted",
    "first_ids",
    "quoted",
    "suggest",
]


class CurateError(Exception):
    """Base of every error curate raises on purpose.

    Examples
    --------
    >>> str(CurateError("the run failed", hint="try again"))
    'the run failed\\n  hint: try again'
    """

    exit_code = 1

    def __init__(self, message: str, *, hint: str | None = None) -> None:
        self.message = message
        self.hint = hint
        super().__init__(message if hint is None else f"{message}\n  hint: {hint}")


class UsageError(CurateError):
    """Bad command-line usage or an impossible request (exit code 2)."""

    exit_code = 2


class PipelineFileError(UsageError):
    """The pipeline file is missing, unreadable or has a bad key (exit code 2)."""


class OutputError(UsageError):
    """The output path cannot be written as asked: it is not curate's, it is busy, it
    overlaps the input, it is not writable or its disk is full (exit code 2)."""


class InputError(CurateError):
    """The input table cannot be used as it is (exit code 3)."""

    exit_code = 3


class SchemaFailure(InputError):
    """The input failed its schema; ``failures`` holds one row per failure."""

    def __init__(self, message: str, *, hint: str | None = None, failures: object = None) -> None:
        super().__init__(message, hint=hint)
        self.failures = failures


class SafetyLimitError(CurateError, ValueError):
    """A safety limit stopped the run before anything was written (exit code 4).

    Also a ``ValueError``, as scikit-learn raises for data it cannot accept, so
    that code around :class:`curate.Sampler` may catch it as such.
    """

    exit_code = 4


class NeighbourCountError(UsageError, ValueError):
    """More neighbours were asked for than there are reference rows (exit code 2).

    Also a ``ValueError``, as scikit-learn raises for the same request.
    """


class ClusterError(CurateError):
    """The cluster could not be reached or lost work it could not redo (exit code 1)."""


class CurateWarning(UserWarning):
    """Base of every warning curate gives on purpose; the run goes on."""


class ConstantColumnWarning(CurateWarning):
    """A feature column has one value only and contributes nothing to distances."""


class Terminated(KeyboardInterrupt):
    """The process got SIGTERM; raised like Ctrl-C so that every claim is released (exit 143)."""

    exit_code = 143


class OutputRecovered(CurateWarning):
    """curate finished or undid an interrupted replace, or took over a dead run's lock."""


def first_ids(ids: Sequence[object], limit: int = 5) -> str:
    """Name the first few ids and the count, for messages.

    Examples
    --------
    >>> first_ids([4, 8, 15, 16, 23, 42])
    '6 rows (first: 4, 8, 15, 16, 23)'
    >>> first_ids(["a"])
    '1 row (a)'
    """
    shown = ", ".join(str(i) for i in list(ids)[:limit])
    count = len(ids)
    if count == 1:
        return f"1 row ({shown})"
    return f"{count} rows (first: {shown})"


def quoted(value: object) -> str:
    """A value in quotes as the user wrote it: numpy scalars print as plain Python values.

    Examples
    --------
    >>> import numpy as np
    >>> quoted(np.str_("9")), quoted(np.int64(3)), quoted("seal-leak"), quoted(None)
    ("'9'", '3', "'seal-leak'", 'None')
    """
    # numpy is not imported here: its scalars are recognised by their module and `item`.
    if type(value).__module__ == "numpy" and hasattr(value, "item"):
        value = value.item()  # type: ignore[union-attr]
    return repr(value)


def counted(count: int, word: str, plural: str | None = None) -> str:
    """``count`` and the noun in the right number.

    Examples
    --------
    >>> counted(1, "row"), counted(3, "row"), counted(1, "class", "classes"), counted(0, "stage")
    ('1 row', '3 rows', '1 class', '0 stages')
    """
    return f"{count} {word if count == 1 else (plural or word + 's')}"


def canonical(value: Any, allowed: tuple[Any, ...]) -> Any:
    """``value`` as spelled in ``allowed``, letter case ignored for text; None when not allowed.

    Allowed values are fixed lists of lowercase words, so "HVDM" can only mean "hvdm".

    Examples
    --------
    >>> canonical("HVDM", ("heom", "hvdm")), canonical("hvd", ("heom", "hvdm"))
    ('hvdm', None)
    """
    if value in allowed:
        return value
    if isinstance(value, str):
        folded = [a for a in allowed if isinstance(a, str) and a.casefold() == value.casefold()]
        if len(folded) == 1:
            return folded[0]
    return None


def suggest(value: Any, known: tuple[Any, ...] | list[Any]) -> str:
    """``"; did you mean 'x'?"`` for the known word closest to a misspelled one, else "".

    Examples
    --------
    >>> suggest("mehtod", ["name", "method", "classes"])
    "; did you mean 'method'?"
    >>> suggest("zzz", ["name", "method"])
    ''
    """
    import difflib  # only when a word is misspelled: `curate --help` stays light

    words = [str(k) for k in known]
    close = difflib.get_close_matches(str(value).casefold(), words, n=1, cutoff=0.6)
    return f"; did you mean {close[0]!r}?" if close else ""
