"""Checks of climwidgets.compute.ddf.depth_duration_frequency.

Per duration: the annual maxima of running sums against xclim 0.62.0
(``xclim.indices.max_n_day_precipitation_amount``) for daily data and pandas rolling sums
for hourly data; the GEV fit against lmoments3 1.0.8 (``distr.gev.lmom_fit`` / ``ppf``)
and ``scipy.stats.genextreme``; the table monotonic in duration and return period.
"""

import warnings

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from lmoments3 import distr
from scipy import stats

import climwidgets as cw
from climwidgets.compute.arf import ARFExtrapolationWarning, areal_reduction_factor
from climwidgets.compute.depth_units import MM_PER_INCH, convert_depth
from climwidgets.compute.extremes import annual_maxima_window
from climwidgets.compute.warming import DESIGN_DEPTH_CAUTIONS
from climwidgets.errors import ParameterError, TimeAxisError

PERIODS = (2, 5, 10, 25, 50, 100)
N_BOOT = 60


def daily(seed=1):
    t = xr.date_range("1961-01-01", "2000-12-31", freq="D")
    rng = np.random.default_rng(seed)
    shape = (t.size, 2, 3)
    depth = rng.gamma(0.6, 7.0, shape) * (rng.random(shape) < 0.45)
    return xr.DataArray(
        depth,
        dims=("time", "lat", "lon"),
        name="pr",
        coords={"time": t, "lat": [10.0, 10.5], "lon": [-40.0, -39.5, -39.0]},
        attrs={"units": "mm", "step": "day"},
    )


@pytest.fixture(scope="module")
def pr():
    return daily()


@pytest.fixture(scope="module")
def table(pr):
    return cw.depth_duration_frequency(pr, periods=PERIODS, n_boot=N_BOOT)


def test_layout_and_cautions(table):
    assert table["estimate"].dims == ("duration", "period", "lat", "lon")
    np.testing.assert_array_equal(table["duration"], np.arange(1, 11))  # 1-10 days for daily data
    np.testing.assert_array_equal(table["duration_hours"], 24 * np.arange(1, 11))
    np.testing.assert_array_equal(table["period"], PERIODS)
    assert table.attrs["cautions"] == DESIGN_DEPTH_CAUTIONS
    assert table["estimate"].attrs["units"] == "mm" and "running maximum" in table.attrs["consistency"]


def test_annual_maxima_per_duration_against_xclim(pr, table):
    from xclim.indices import max_n_day_precipitation_amount

    for d in range(1, 11):
        # xclim.indices.max_n_day_precipitation_amount(window=d, freq="YS") (xclim 0.62.0)
        ref = max_n_day_precipitation_amount(pr.assign_attrs(units="mm/d"), window=d, freq="YS")
        np.testing.assert_allclose(table["annual_max"].sel(duration=d).values, ref.values, rtol=1e-12)


def test_gev_fit_per_duration_against_lmoments3_and_scipy(table):
    F = 1 - 1 / np.asarray(PERIODS, float)
    for d in (1, 3, 7, 10):
        for j in range(2):
            for i in range(3):
                cell = table.sel(duration=d).isel(lat=j, lon=i)
                am = cell["annual_max"].values
                ours = cell["estimate"].values
                raised = cell["adjusted"].values
                # scipy.stats.genextreme with c = Hosking's k
                sp = stats.genextreme.ppf(F, c=float(cell["shape"]), loc=float(cell["loc"]), scale=float(cell["scale"]))
                np.testing.assert_allclose(ours[~raised], sp[~raised], rtol=1e-10)
                # lmoments3 1.0.8 (Hosking's PELGEV): same L-moments, shape within 1e-3
                ref = distr.gev.lmom_fit(am)
                assert float(cell["shape"]) == pytest.approx(ref["c"], abs=1e-3)
                np.testing.assert_allclose(ours[~raised], distr.gev.ppf(F, **ref)[~raised], rtol=2e-3)


def test_monotonic_in_duration_and_period(table):
    for v in ("estimate", "lower", "upper"):
        assert (table[v].diff("duration") >= 0).all(), v
        assert (table[v].diff("period") > 0).all(), v
    assert (table["lower"] <= table["estimate"]).all() and (table["estimate"] <= table["upper"]).all()


def test_consistency_is_a_running_maximum_of_the_single_duration_fits(pr, table):
    raw = xr.concat(
        [
            cw.return_levels(annual_maxima_window(pr, d, f"{d} day"), periods=PERIODS, n_boot=N_BOOT)["estimate"]
            for d in range(1, 11)
        ],
        dim="duration",
    )
    expect = np.maximum.accumulate(raw.values, axis=0)
    np.testing.assert_allclose(table["estimate"].values, expect, rtol=1e-12)
    np.testing.assert_array_equal(table["adjusted"].values, expect > raw.values)
    assert table["adjusted"].any()  # the random record does cross somewhere: the rule is exercised


def test_hourly_defaults_and_maxima_against_pandas():
    t = xr.date_range("1990-01-01", "2001-12-31 23:00", freq="h")
    rng = np.random.default_rng(2)
    x = rng.gamma(0.3, 3.0, (t.size, 2)) * (rng.random((t.size, 2)) < 0.1)
    pr = xr.DataArray(x, dims=("time", "cell"), coords={"time": t}, attrs={"units": "mm", "step": "hour"})
    ds = cw.depth_duration_frequency(pr, periods=(2, 10), n_boot=50)
    np.testing.assert_array_equal(ds["duration"], [1, 2, 3, 6, 12, 24, 48, 72])
    assert ds.attrs["duration_units"] == "hours"
    frame = pd.DataFrame(x, index=pd.DatetimeIndex(t))
    for d in (1, 6, 72):
        # pandas rolling sums (window ends at its last hour), maximum per calendar year
        ref = frame.rolling(d, min_periods=d).sum().groupby(frame.index.year).max()
        np.testing.assert_allclose(ds["annual_max"].sel(duration=d).values, ref.values, rtol=1e-10)
    assert (ds["estimate"].diff("duration") >= 0).all()


def test_basin_series_and_arf(pr):
    basin = cw.Basin.from_vertices([(-40.2, 9.8), (-39.3, 9.8), (-39.3, 10.7), (-40.2, 10.7)], name="upper")
    series = cw.depth_duration_frequency(pr, durations=(1, 3), periods=PERIODS, n_boot=N_BOOT, basins=[basin])
    assert series["estimate"].dims == ("duration", "period", "basin")
    # the areal version is the fit of the basin-mean series (climwidgets.geo.aggregate.basin_mean)
    direct = cw.return_levels(
        cw.annual_maxima(cw.basin_mean(pr, basin), duration_days=3), periods=PERIODS, n_boot=N_BOOT
    )["estimate"]
    got = series["estimate"].sel(duration=3, basin="upper")
    raised = series["adjusted"].sel(duration=3, basin="upper")
    np.testing.assert_allclose(got.values[~raised.values], direct.values[~raised.values], rtol=1e-12)

    with pytest.warns(ARFExtrapolationWarning, match="upper"):  # the basin is larger than 400 square miles
        arf = cw.depth_duration_frequency(
            pr, durations=(1,), periods=PERIODS, n_boot=N_BOOT, basins={"upper": basin}, areal="arf"
        )
    point = cw.depth_duration_frequency(pr, durations=(1,), periods=PERIODS, n_boot=N_BOOT)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ARFExtrapolationWarning)
        factor = float(areal_reduction_factor(24.0, basin.area_m2 / 1e6))
    expect = cw.basin_mean(point["estimate"], basin) * factor
    np.testing.assert_allclose(arf["estimate"].sel(basin="upper").values, expect.values, rtol=1e-12)
    assert float(arf["areal_reduction_factor"].sel(basin="upper", duration=1)) == pytest.approx(factor)
    assert arf.attrs["arf_extrapolated"] == 1 and "Leclerc" in arf.attrs["areal"]


def test_inches(pr, table):
    pint = pytest.importorskip("pint")
    # pint: 1 inch = 25.4 mm exactly
    assert pint.UnitRegistry()("1 inch").to("mm").magnitude == pytest.approx(MM_PER_INCH, rel=1e-15)
    inch = cw.depth_duration_frequency(pr, durations=(1, 2), periods=PERIODS, n_boot=N_BOOT, units="in")
    np.testing.assert_allclose(inch["estimate"] * MM_PER_INCH, table["estimate"].sel(duration=[1, 2]), rtol=1e-12)
    assert inch["estimate"].attrs["units"] == "in" and inch["shape"].attrs["units"] == "1"
    assert inch.attrs["cautions"] == DESIGN_DEPTH_CAUTIONS
    again = convert_depth(table, "in")
    assert again["lower"].attrs["units"] == "in" and table["lower"].attrs["units"] == "mm"  # input untouched


def test_dask_is_lazy_and_equal(pr, table):
    lazy = cw.depth_duration_frequency(pr.chunk(time=3650, lon=2), durations=(1, 2, 5), periods=PERIODS, n_boot=N_BOOT)
    assert lazy["estimate"].chunks is not None
    xr.testing.assert_allclose(lazy["estimate"].compute(), table["estimate"].sel(duration=[1, 2, 5]))


def test_bad_input(pr):
    with pytest.raises(ParameterError, match="duration"):
        cw.depth_duration_frequency(pr, durations=(0, 2))
    with pytest.raises(ParameterError, match="repeats"):
        cw.depth_duration_frequency(pr, durations=(2, 2))
    with pytest.raises(ParameterError, match="areal"):
        cw.depth_duration_frequency(pr, areal="storm")
    with pytest.raises(ParameterError, match="units"):
        cw.depth_duration_frequency(pr, units="ft")
    with pytest.raises(ParameterError, match="Basin"):
        cw.depth_duration_frequency(pr, basins=["not a basin"])
    with pytest.raises(TimeAxisError, match="monthly"):
        cw.depth_duration_frequency(pr.assign_attrs(step="month"))
