"""Fixtures of the method tests (curate/methods).

Each method is checked against a reference library doing the same procedure
(imbalanced-learn, scikit-learn) or against its published definition; the
data helpers are in editing_fixtures.py and condensing_fixtures.py.
"""

from __future__ import annotations

from collections.abc import Iterator

import pytest
from threadpoolctl import threadpool_limits


@pytest.fixture
def one_thread() -> Iterator[None]:
    """Run the reference libraries on one thread: on a shared 2-core machine their
    thread pools oversubscribe and run many times slower (measured: 13 times).

    The editing tests use it (``pytestmark``); it is not autouse because entering the
    limit costs about 11 ms, which hundreds of other tests here do not need to pay.
    """
    with threadpool_limits(1):
        yield
