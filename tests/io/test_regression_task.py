"""Task detection: which bundled tables are regression and which classification.

Outside reference: the documentation of each data set says what its target is.
scikit-learn's user guide lists ``load_diabetes`` and ``load_linnerud`` as
regression sets and ``load_iris``, ``load_wine`` and ``load_digits`` as
classification sets; palmerpenguins documents ``species`` as a class and
``body_mass_g`` as a measurement in grams.
"""

from __future__ import annotations

import numpy as np
import polars as pl
import pytest
from palmerpenguins import load_penguins
from sklearn.datasets import load_diabetes, load_digits, load_iris, load_linnerud, load_wine

from curate.io.task import MIN_DISTINCT, ROWS_PER_VALUE, detect_task


@pytest.mark.parametrize("loader", [load_diabetes, lambda: load_linnerud(as_frame=False)])
def test_bundled_regression_targets_are_read_as_regression(loader) -> None:
    target = np.asarray(loader().target)
    column = target if target.ndim == 1 else target[:, 0]
    assert detect_task(column).task == "regression"


@pytest.mark.parametrize("loader", [load_iris, load_wine, load_digits])
def test_bundled_class_codes_are_read_as_classification(loader) -> None:
    assert detect_task(loader().target).task == "classification"


def test_penguin_measurement_and_species_from_a_frame() -> None:
    frame = pl.from_pandas(load_penguins())
    assert detect_task(frame["body_mass_g"], column="body_mass_g").task == "regression"
    choice = detect_task(frame["species"], column="species")
    assert choice.task == "classification" and "text" in choice.reason


def test_integer_rule_uses_both_limits() -> None:
    # Common practice, no source: codes are few and each is frequent; quantities are many
    # values with few rows each. Just past each limit flips the choice.
    many_rare = np.repeat(np.arange(MIN_DISTINCT + 1), ROWS_PER_VALUE - 1)
    many_frequent = np.repeat(np.arange(MIN_DISTINCT + 1), ROWS_PER_VALUE)
    few = np.arange(MIN_DISTINCT)
    assert detect_task(many_rare).task == "regression"
    assert detect_task(many_frequent).task == "classification"
    assert detect_task(few).task == "classification"


def test_floats_with_fractions_are_regression_and_the_reason_names_one() -> None:
    choice = detect_task(pl.Series("hours", [12.0, 41.5, None]), column="hours")
    assert choice.task == "regression" and "41.5" in choice.reason and "'hours'" in choice.reason


def test_asked_task_is_taken_as_given_and_a_bad_one_refused() -> None:
    assert detect_task(["a", "b"], "regression").task == "regression"
    with pytest.raises(ValueError, match="task must be one of"):
        detect_task([1.0], "guess")
