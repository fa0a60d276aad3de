"""io/info.py: the plain-text description of a source (`climwidgets info`)."""

import numpy as np

from climwidgets.io.info import describe


def test_describe_names_variable_units_period_and_grid(tmp_path, cf_file):
    data = np.full((10, 3, 4), 2.0)
    data[0, 0, 0] = np.nan
    path = cf_file(tmp_path / "pr.nc", data, units="mm", start="2001-01-01")
    text = describe(path)
    assert "variable:     pr (units 'mm')" in text
    assert "period:       2001-01-01 00:00:00 to 2001-01-10 00:00:00 (10 steps)" in text
    assert "rectilinear 3 x 4 (lat x lon), spacing 0.5 x 0.5 deg" in text
    # Hand arithmetic: centres 10..11 and 20..21.5 at 0.5 degree, bounds half a cell out.
    assert "extent:       lat 9.75..11.25, lon 19.75..21.75" in text
    assert "not counted" in text


def test_describe_with_scan_counts_missing_values(tmp_path, cf_file):
    data = np.full((10, 3, 4), 2.0)
    data[0, 0, 0] = np.nan
    text = describe([cf_file(tmp_path / "pr.nc", data)], scan=True)
    # Hand arithmetic: 1 missing of 10 x 3 x 4 = 120 values is 0.83 %.
    assert "missing data: 0.83% of values; range 2..2 mm per step" in text
