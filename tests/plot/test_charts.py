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


def test_design_depth_chart_one_panel_per_basin_one_line_per_period():
    from climwidgets.plot.charts import design_depth_chart

    durations, periods, basins = [1, 2, 3], [2, 10, 100], ["A", "B"]
    est = np.array([[[10.0 * d * np.log(t) + b for b in range(2)] for t in periods] for d in durations])
    ds = xr.Dataset(
        {
            v: (("duration", "period", "basin"), est * f, {"units": "mm"})
            for v, f in (("estimate", 1.0), ("lower", 0.8), ("upper", 1.2))
        },
        coords={"duration": durations, "period": periods, "basin": basins},
        attrs={"duration_units": "days"},
    )
    fig = design_depth_chart(ds, period=10, ci=0.9)
    axes = fig.axes
    assert [a.get_title() for a in axes] == basins
    lines = axes[1].get_lines()
    assert [ln.get_label() for ln in lines] == [f"once in {t} years" for t in periods]
    np.testing.assert_allclose(lines[2].get_ydata(), est[:, 2, 1])  # basin B, 100 years
    assert axes[0].get_xlabel() == "storm duration [days]" and axes[0].get_ylabel() == "depth [mm]"
    assert axes[0].get_xscale() == "linear"  # depth against duration, not a log return-period axis
    warm = design_depth_chart(ds, period=10, warming=(2.0, 7.0, 1.07**2))
    np.testing.assert_allclose(warm.axes[0].get_lines()[2].get_ydata(), est[:, 1, 0] * 1.07**2)
