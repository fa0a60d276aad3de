"""plot/indices.py: the per-basin index chart draws what the table holds, nothing more."""

import numpy as np
import xarray as xr

from climwidgets.plot.indices import basin_index_chart


def _table():
    years = np.arange(2001, 2006)
    per_year = np.array([[10.0, 11.0, 12.0, 13.0, 14.0], [5.0, 5.0, 6.0, 5.0, 5.0]])
    return xr.Dataset(
        {
            "index_per_year": (("basin", "year"), per_year, {"units": "d", "display_units": "days"}),
            "index_slope": ("basin", [1.0, np.nan]),
            "index_intercept": ("basin", [-1990.0, np.nan]),
            "index_pvalue": ("basin", [0.01, np.nan]),
        },
        coords={"basin": ["upper", "lower"], "year": years},
        attrs={"index": "R10mm"},
    )


def test_dots_per_basin_and_a_dashed_sen_line_where_the_slope_is_known():
    fig = basin_index_chart(_table())
    ax = fig.axes[0]
    drawn = [line for line in ax.lines if len(line.get_xdata())]
    assert len(drawn) == 3  # two series, one trend line (the second basin's slope is missing)
    trend = next(line for line in drawn if line.get_linestyle() == "--")
    # Hand arithmetic: intercept -1990 + 1 per year gives 11 in 2001 and 15 in 2005.
    np.testing.assert_allclose(trend.get_ydata(), [11.0, 12.0, 13.0, 14.0, 15.0])
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    # Hand arithmetic: 1 day per year is +10 days per decade.
    assert labels == ["upper: +10 days per decade (p = 0.01)", "lower"]
    assert ax.get_ylabel() == "R10mm [days]" and ax.get_xlabel() == "year"


def test_no_table_gives_an_empty_chart():
    ax = basin_index_chart(None).axes[0]
    assert not ax.lines and ax.get_legend() is None
