"""Numbers shown to people keep the digits that the detail that matters needs."""

from __future__ import annotations

import math

import pytest

from clusterdesk.display import digits_for, shown


@pytest.mark.parametrize("value, detail", [(24.993519, 0.0003), (114.73, 0.8), (0.0330884, 0.026),
                                           (-1234.5678, 0.01), (6.02e5, 3.0), (1.0e-7, 1.0e-11)])
def test_shown_value_is_within_the_detail_and_keeps_at_least_four_digits(value, detail):
    text = shown(value, detail)
    assert abs(float(text) - value) <= detail / 2 + 1e-15 * abs(value)  # rounding error at most half
    significant = len(f"{abs(float(text)):e}".split("e")[0].replace(".", "").rstrip("0"))
    assert digits_for(value, detail) >= 4 and significant <= digits_for(value, detail)


def test_the_gauge_cut_point_shows_its_fourth_decimal():
    # 24.9935 mm with components a few thousandths wide: 24.99 would be 0.0035 off.
    assert shown(24.993519, 0.00028) == "24.9935"
    assert shown(math.nan, 1.0) == "none" and digits_for(5.0, 0.0) == 4
