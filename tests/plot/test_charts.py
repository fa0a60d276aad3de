"""Charts: the drawn trend line is the Sen line; monthly normals are drawn per basin."""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr
from scipy import stats

from climwidgets.compute.trend import trend
from climwidgets.plot.charts import monthly_normals, series_with_trend


def test_series_with_trend_draws_the_sen_line():
    rng = np.random.default_rng(3)
    years = np.arange(1991, 2021)
    values = 0.2 + 0.002 * (years - 1991) + 0.02 * rng.standard_normal(years.size)
    series = xr.DataArray(values, dims="year", coords={"year": years}, attrs={"units": "1"})
    tr = trend(series)
    artists = series_with_trend(series, tr, scale=100.0, units="%")
    line = artists[-1]
    # Theil-Sen slope and intercept from scipy.stats.theilslopes (SciPy reference implementation)
    ref = stats.theilslopes(values, years)
    assert np.allclose(line.get_ydata(), 100 * (ref.intercept + ref.slope * years), rtol=1e-9)
    assert "per decade" in line.get_label()
    assert np.allclose(artists[0].get_ydata(), 100 * values)


def test_monthly_normals_one_line_per_basin():
    table = pd.DataFrame({"A": np.arange(12.0), "B": np.arange(12.0)[::-1]}, index=range(1, 13))
    artists = monthly_normals(table)
    assert [a.get_label() for a in artists] == ["A", "B"]
    assert artists[0].axes.get_ylabel() == "monthly normal [mm]"
