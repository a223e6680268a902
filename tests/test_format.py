"""Numbers as report text, checked against Python's decimal module."""

from decimal import Decimal

import pytest
from hypothesis import given
from hypothesis import strategies as st

from interp._format import decimals, number, table, unit_power


@given(
    st.floats(min_value=-1e9, max_value=1e9, allow_nan=False, allow_infinity=False),
    st.integers(min_value=0, max_value=6),
)
def test_number_is_fixed_point_and_within_half_a_unit_of_the_last_place(v, places):
    text = number(v, places)
    assert "e" not in text.lower()
    # reference: the exact decimal value of the float (decimal module)
    shown = len(text.partition(".")[2])
    assert shown >= places or shown == 0 == places
    assert abs(Decimal(text) - Decimal(v)) <= Decimal(5) * Decimal(10) ** -(shown + 1)
    if v and abs(v) >= 1e-6:
        # six significant digits at least
        assert abs(Decimal(text) - Decimal(v)) <= abs(Decimal(v)) * Decimal("1e-5")


@pytest.mark.parametrize(
    "values, k",
    [([4180000.25, 512000.5], 2), ([1.0, 2.0, 3.0], 0), ([0.125], 3), ([100.012, 90.0], 3)],
)
def test_decimals_is_the_data_resolution(values, k):
    # each value written with k decimals is exact and with k - 1 it is not (by hand)
    assert decimals(values) == k


def test_survey_figures_print_in_full():
    assert number(4180000.25, 2) == "4180000.25"
    assert number(11691234.5, 1) == "11691234.5"
    assert unit_power("m", 2) == "m²" and unit_power("m", 3) == "m³"
    assert table([("a", "1", "m"), ("bb", "10", "")]) == ["  a    1  m", "  bb  10"]
