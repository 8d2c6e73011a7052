"""Printed numbers: half-up rounding, percentages that add to 100, typographic minus."""

from __future__ import annotations

import numpy as np
import pytest

from riskreport.report import formatting as fmt
from riskreport.report.charts import spread_labels


@pytest.mark.parametrize(
    ("value", "digits", "text"),
    [
        (2.45, 1, "2.5"),
        (2.25, 1, "2.3"),
        (-0.04, 1, "0.0"),
        (-1.25, 1, "\u22121.3"),
        (0.125, 2, "0.13"),
    ],
)
def test_half_up_and_minus(value: float, digits: int, text: str) -> None:
    # Half away from zero on the decimal string, unlike Python's round (2.45 -> 2.4):
    # jinja2's round filter has the same trap, as it uses Python's round (jinja2 documentation,
    # built-in filters, round).
    assert fmt.number(value, digits) == text


def test_percentages_add_to_100_largest_remainder(rng: np.random.Generator) -> None:
    # Largest remainder (Hamilton) apportionment: floors plus the biggest remainders.
    for _ in range(2000):
        p = rng.dirichlet([0.5, 1.0, 0.5])
        whole = fmt.percentages(list(p))
        assert sum(whole) == 100
        assert all(abs(w - 100 * x) < 1 for w, x in zip(whole, p, strict=True))


def test_percentages_reject_non_probabilities() -> None:
    with pytest.raises(ValueError, match="add to 1"):
        fmt.percentages([0.5, 0.6, 0.1])


def test_tiny_probabilities_are_not_printed_as_zero() -> None:
    assert fmt.percent_text(0) == "<1%"  # never print a certainty
    assert fmt.percent_text(100) == ">99%"
    assert fmt.percent_text(37) == "37%"
    assert fmt.outcome_texts(0.002, 0.5, 0.498) == ("<1%", "50%", "50%")


def test_points() -> None:
    assert fmt.points(0.034) == "+3 pp"
    assert fmt.points(-0.021) == "\u22122 pp"
    assert fmt.points(0.004) == "0 pp"


def test_chart_labels_are_kept_apart() -> None:
    placed = spread_labels([40.0, 41.0, 24.0], gap=7.0)
    ordered = sorted(placed)
    assert min(np.diff(ordered)) >= 7.0 - 1e-9
    assert placed[2] < placed[0] < placed[1]  # order is kept
