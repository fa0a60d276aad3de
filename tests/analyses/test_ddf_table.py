"""The design-depth table of the basins: the numbers of cw.depth_duration_frequency, laid out
durations × return periods with intervals (the DDF itself is checked against lmoments3 and
scipy.stats.genextreme in tests/compute/test_ddf.py)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr

import climwidgets as cw
from climwidgets.analyses.basins import basin_series
from climwidgets.analyses.ddf_table import basin_design_table, design_depth_cells, design_depth_table

PERIODS = (2, 10, 100)


def _pr(seed=5):
    rng = np.random.default_rng(seed)
    time = pd.date_range("2001-01-01", "2016-12-31", freq="D")
    lat, lon = np.array([10.125, 10.375]), np.array([5.125, 5.375])
    wet = rng.random((time.size, 2, 2)) < 0.3
    data = np.where(wet, rng.gamma(0.8, 10.0, size=(time.size, 2, 2)), 0.0)
    return xr.DataArray(
        data,
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm", "step": "day"},
    )


BASIN = cw.Basin.from_vertices([(5.0, 10.0), (5.5, 10.0), (5.5, 10.5), (5.0, 10.5)], name="box")


def test_basin_table_equals_depth_duration_frequency_of_the_basin():
    pr = _pr()
    ds = basin_design_table(basin_series(pr, [BASIN]), durations=[1, 3, 5], periods=PERIODS, n_boot=60).compute()
    ref = cw.depth_duration_frequency(pr, durations=[1, 3, 5], periods=PERIODS, basins=[BASIN], n_boot=60)
    for v in ("estimate", "lower", "upper"):
        np.testing.assert_allclose(ds[v].transpose(*ref[v].dims).values, ref[v].values, rtol=1e-12)
    assert ds.attrs["areal"] == "fit of the basin-mean series" and ds.attrs["cautions"]
    table = design_depth_table(ds, basin="box")
    assert list(table.index) == ["1 day", "3 days", "5 days"]
    assert list(table.columns[:3]) == ["2 years", "2 years lower 90%", "2 years upper 90%"]
    np.testing.assert_allclose(table["100 years"], ref["estimate"].sel(period=100, basin="box").values)
    # depths grow with duration and return period (the DDF's consistency rule)
    est = table[[f"{t} years" for t in PERIODS]].to_numpy()
    assert (np.diff(est, axis=0) >= 0).all() and (np.diff(est, axis=1) > 0).all()
    cells = design_depth_cells(table)
    assert list(cells.columns) == ["2 years [mm]", "10 years [mm]", "100 years [mm]"]
    e, lo, hi = (float(table.loc["3 days", c]) for c in ("10 years", "10 years lower 90%", "10 years upper 90%"))
    assert cells.loc["3 days", "10 years [mm]"] == f"{e:.1f} ({lo:.1f}–{hi:.1f})"
