"""analyses.meta: tables for people show their display format, never scientific notation."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from climwidgets.analyses.meta import people_frame


def test_people_frame_has_no_scientific_notation_and_thousands_separators():
    t = pd.DataFrame(
        {
            "basin": ["a", "b"],
            "latest_year": [2020, 2019],
            "volume_per_year_acre_ft": [4.441e6, 1234567.8],
            "annual_mean_mm": [1955.2, np.nan],
            "unknown_column": [1.5e-7, 3.0e9],
        }
    ).set_index("basin")
    shown = people_frame(t)
    cells = [str(v) for v in shown.to_numpy().ravel()]
    assert not [c for c in cells if re.search(r"\de[+-]?\d", c)], cells
    assert shown.loc["a", "volume per year [acre-ft]"] == "4,441,000"  # thousands separators
    assert "2020" in shown.loc["a"].tolist() and "–" in shown.loc["b"].tolist()
    assert list(t.columns)[0] == "latest_year"  # the stored table is not changed


def test_people_never_see_scientific_notation():
    """A format spec that would print 1.235e+04 falls back to plain digits with separators."""
    from climwidgets.analyses.meta import format_cell

    assert format_cell(12345.6, {"display_format": ".4g"}) == "12,346"
    assert format_cell(1960.2, {"display_format": ".4g"}) == "1960"
    assert "e" not in format_cell(2.5e-7, {"display_format": ".3g"})


def test_a_value_rounding_to_zero_shows_no_minus_sign():
    """Rounding noise (-1e-14) is shown as zero, signed like a positive zero where the format
    signs numbers (Python's format gives "-0.0", which reads as a decrease)."""
    from climwidgets.analyses.meta import format_cell

    assert format_cell(-1e-14, {"display_format": "+.1f"}) == "+0.0"
    assert format_cell(-0.04, {"display_format": ".1f"}) == "0.0"
    assert format_cell(-0.06, {"display_format": "+.1f"}) == "-0.1"
    assert format_cell(-10.0, {"display_format": ".0f"}) == "-10"
