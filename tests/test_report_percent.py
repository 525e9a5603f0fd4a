"""display_percent: exact rounding, and no 0 or 100 shown unless exact (the edges the table relies on)."""

from __future__ import annotations

from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from ffaudit.report.percent import NOT_APPLICABLE, display_percent


@pytest.mark.parametrize(
    ("part", "total", "expected"),
    [
        (0, 1000, "0.0"),  # exactly none
        (1, 1000, "0.1"),  # exactly 0.1 %
        (999, 1000, "99.9"),  # exactly 99.9 %
        (1000, 1000, "100.0"),  # all
        (1, 1, "100.0"),
        (1, 100_000, "0.1"),  # 0.001 % would round to 0.0: shown as the smallest step
        (99_999, 100_000, "99.9"),  # 99.999 % would round to 100.0: shown as the largest step below
        (1, 3, "33.3"),
        (2, 3, "66.7"),
        (1, 2000, "0.1"),  # 0.05 rounds half up
        (1, 8, "12.5"),
    ],
)
def test_edges_at_one_decimal(part: int, total: int, expected: str) -> None:
    assert display_percent(part, total) == expected


@pytest.mark.parametrize(
    ("part", "total", "precision", "expected"),
    [
        (1, 1000, 0, "1"),  # 0.1 % would round to 0
        (999, 1000, 0, "99"),  # 99.9 % would round to 100
        (1, 8, 0, "13"),  # 12.5 rounds half up
        (0, 7, 0, "0"),
        (7, 7, 0, "100"),
        (1, 3, 2, "33.33"),
        (1, 10**9, 2, "0.01"),
    ],
)
def test_other_precisions(part: int, total: int, precision: int, expected: str) -> None:
    assert display_percent(part, total, precision) == expected


def test_nothing_to_divide() -> None:
    assert display_percent(0, 0) == NOT_APPLICABLE


@pytest.mark.parametrize(
    ("part", "total", "precision"), [(-1, 10, 1), (11, 10, 1), (1, -1, 1), (1, 10, -1)]
)
def test_bad_arguments_raise(part: int, total: int, precision: int) -> None:
    with pytest.raises(ValueError):
        display_percent(part, total, precision)


@given(
    st.integers(min_value=1, max_value=10**7).flatmap(
        lambda t: st.tuples(st.integers(0, t), st.just(t))
    )
)
def test_extremes_only_when_exact_and_within_one_step(pair: tuple[int, int]) -> None:
    part, total = pair
    text = display_percent(part, total)
    assert (text == "0.0") == (part == 0)
    assert (text == "100.0") == (part == total)
    exact = Fraction(100 * part, total)
    # Rounded to the nearest 0.1 (or moved by the 0/100 rule, which is at most one step away).
    assert abs(Fraction(text) - exact) <= Fraction(1, 10)
