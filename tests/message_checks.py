"""What every message curate prints for bad input must look like (tests/cli, tests/io).

Common practice, no source (the convention of command-line tools such as git and pip): a
line that starts with ``error:`` and says the problem in plain words, a ``hint:`` line with
the fix, no traceback, no programming-language internals (class names, numpy reprs), and
the file and line said once.
"""

from __future__ import annotations

import re

# A numpy value printed with repr (np.str_('9'), np.int64(3), array([...]), dtype=...).
NUMPY_REPR = re.compile(r"\bnp\.|\bnumpy\.|\barray\(|dtype=")
# A Python class name leading a line ("UsageError: ...", "SchemaFailure: ...").
CLASS_PREFIX = re.compile(r"^\s*[A-Z][A-Za-z]+(Error|Failure|Exception|Warning):", re.M)


def assert_plain_message(err: str, *, where: str | None = None) -> None:
    """``err`` (stderr of a failed command) is a plain error message with a hint."""
    assert err.startswith("error: "), err
    assert err.count("\n  hint: ") == 1, err
    assert "Traceback" not in err, err
    assert not NUMPY_REPR.search(err), f"numpy repr in: {err}"
    assert not CLASS_PREFIX.search(err), f"class name in: {err}"
    if where is not None:
        assert err.count(where) <= 1, f"{where} said more than once: {err}"
