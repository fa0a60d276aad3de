"""Tests of climwidgets/compute/scenario.py: delta change and quantile delta mapping."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import xarray as xr

from climwidgets.compute.scenario import SCENARIO_CAUTIONS, delta_change
from climwidgets.errors import (
    CalendarError,
    GridError,
    InsufficientDataError,
    MismatchError,
    ParameterError,
    UnitsError,
)


def _series(
    y0,
    y1,
    *,
    calendar="noleap",
    members=None,
    step="day",
    lat=(0.0, 1.0),
    lon=(0.0, 1.0, 2.0),
    seed=0,
    scale=5.0,
    k=0.8,
    dry=0.4,
    floor=0.0,
):
    freq = "D" if step == "day" else "MS"
    time = xr.date_range(
        f"{y0}-01-01", f"{y1 + 1}-01-01", freq=freq, calendar=calendar, use_cftime=calendar != "standard"
    )[:-1]
    rng = np.random.default_rng(seed)
    shape = ((len(members),) if members else ()) + (len(time), len(lat), len(lon))
    values = floor + rng.gamma(k, scale, shape) * (rng.random(shape) >= dry)
    dims = (("member",) if members else ()) + ("time", "lat", "lon")
    coords = {"time": time, "lat": list(lat), "lon": list(lon)}
    if members:
        coords["member"] = list(members)
    return xr.DataArray(values, dims=dims, coords=coords, attrs={"units": "mm", "step": step}, name="pr")


MEMBERS = ("m1", "m2")


# ----------------------------------------------------------------------------- monthly ratio
def test_monthly_ratio_by_hand():
    # One cell, two members, monthly steps, two historical and two future years.
    # By hand: member m1, January: historical 10 and 30 mm (normal 20), future 25 and 35 mm
    # (normal 30) -> factor 1.5; an observed January of 40 mm becomes 60 mm.  Member m2,
    # January: historical 20 and 20, future 10 and 10 -> factor 0.5 -> 20 mm.
    hist = _series(1981, 1982, members=MEMBERS, step="month", lat=(0.0,), lon=(0.0,), dry=0.0)
    fut = _series(2041, 2042, members=MEMBERS, step="month", lat=(0.0,), lon=(0.0,), dry=0.0, seed=1)
    obs = _series(2001, 2001, calendar="standard", step="month", lat=(0.0,), lon=(0.0,), dry=0.0, seed=2)
    hist[:, [0, 12], 0, 0] = [[10.0, 30.0], [20.0, 20.0]]
    fut[:, [0, 12], 0, 0] = [[25.0, 35.0], [10.0, 10.0]]
    obs[0, 0, 0] = 40.0
    out, factors = delta_change(obs, hist, fut, min_fraction=1.0, return_factors=True)
    assert factors.sel(month=1, member="m1").item() == pytest.approx(1.5)
    assert factors.sel(month=1, member="m2").item() == pytest.approx(0.5)
    assert out.sel(member="m1").isel(time=0).item() == pytest.approx(60.0)
    assert out.sel(member="m2").isel(time=0).item() == pytest.approx(20.0)
    # every month: observed value times mean(future)/mean(historical) of that month
    h = hist.values.reshape(2, 2, 12)  # member, year, month
    f = fut.values.reshape(2, 2, 12)
    expected = obs.values[:, 0, 0][None, :] * f.mean(1) / h.mean(1)
    np.testing.assert_allclose(out.values[:, :, 0, 0], expected, rtol=1e-12)
    assert out.dims == ("member", "time", "lat", "lon")
    assert out.attrs["units"] == "mm" and out.attrs["step"] == "month"
    assert out.attrs["cautions"] == SCENARIO_CAUTIONS
    assert "history" in out.attrs


def test_monthly_ratio_daily_obs_zero_normals_and_single_run():
    hist = _series(1981, 1984, step="month", dry=0.0)
    fut = _series(2041, 2044, step="month", dry=0.0, seed=1)
    hist[hist["time"].dt.month == 7] = 0.0  # July dry in both periods: factor 1
    fut[fut["time"].dt.month == 7] = 0.0
    hist[hist["time"].dt.month == 8] = 0.0  # August dry only historically: cannot scale zero
    obs = _series(1991, 1992, calendar="standard", seed=3)
    out, factors = delta_change(obs, hist, fut, return_factors=True)
    assert "member" not in out.dims and out.sizes["time"] == obs.sizes["time"]
    assert bool((factors.sel(month=7) == 1.0).all()) and bool(factors.sel(month=8).isnull().all())
    jan = obs["time"].dt.month == 1
    np.testing.assert_allclose(out.where(jan, drop=True), (obs * factors.sel(month=1, drop=True)).where(jan, drop=True))


def test_monthly_ratio_regrids_model_factors_conservatively():
    # Model cells of 2 deg containing 2 x 2 observed cells of 1 deg each; the factor of a
    # model cell must reach the four observed cells inside it unchanged (nested grids).
    hist = _series(1981, 1983, members=MEMBERS, step="month", lat=(1.0, 3.0), lon=(1.0, 3.0), dry=0.0)
    fut = hist.copy(data=hist.values * np.array([1.2, 0.7])[:, None, None, None])
    fut = fut.assign_coords(
        time=xr.date_range("2041-01-01", periods=hist.sizes["time"], freq="MS", calendar="noleap", use_cftime=True)
    )
    fut[:, :, 0, 0] *= 2.0  # one model cell doubles on top
    obs = _series(
        1991, 1991, calendar="standard", step="month", lat=(0.5, 1.5, 2.5, 3.5), lon=(0.5, 1.5, 2.5, 3.5), dry=0.0
    )
    out, factors = delta_change(obs, hist, fut, return_factors=True)
    np.testing.assert_allclose(factors.sel(member="m1").values[:, :2, :2], 2.4, rtol=1e-12)
    np.testing.assert_allclose(factors.sel(member="m2").values[:, 2:, 2:], 0.7, rtol=1e-12)
    assert factors.sizes["lat"] == 4 and "remapped" in out.attrs["grid"]


def test_monthly_ratio_lazy():
    hist = _series(1981, 1985, members=MEMBERS, step="month")
    fut = _series(2041, 2045, members=MEMBERS, step="month", seed=1)
    obs = _series(1991, 1993, calendar="standard", seed=2)
    lazy = delta_change(obs.chunk({"time": 100}), hist.chunk({"member": 1}), fut.chunk({"time": 24}))
    assert lazy.chunks is not None
    xr.testing.assert_allclose(lazy.compute(), delta_change(obs, hist, fut))


# ----------------------------------------------------------------------------- quantile delta
def _wet_case():
    """Daily series with every amount >= 1 mm: no dry days, so the trace rule is idle."""
    obs = _series(1981, 1990, lat=(0.0, 1.0), lon=(0.0,), k=0.7, scale=6.0, dry=0.0, floor=1.0, seed=1)
    hist = _series(
        1981, 1990, members=MEMBERS, lat=(0.0, 1.0), lon=(0.0,), k=0.9, scale=4.0, dry=0.0, floor=1.0, seed=2
    )
    fut = _series(2041, 2050, members=MEMBERS, lat=(0.0, 1.0), lon=(0.0,), k=0.8, scale=5.0, dry=0.0, floor=1.0, seed=3)
    return obs, hist, fut


@pytest.mark.parametrize("group", ["month", "season"])
def test_quantile_delta_matches_xsdba(group):
    # Reference: xsdba 0.7.0 (PyPI), QuantileDeltaMapping, kind="*" (multiplicative),
    # trained on each month's (or season's) values alone (group="time").  With its quantile
    # nodes at the future values' own plotting positions, linspace(0, 1, n), its linear
    # interpolation of adjustment factors is evaluated exactly at the nodes, so the two
    # implementations of Cannon et al. (2015) must agree to rounding.
    xsdba = pytest.importorskip("xsdba")
    assert xsdba.__version__ == "0.7.0"
    obs, hist, fut = _wet_case()
    obs_before = obs.copy(deep=True)
    ours = delta_change(obs, hist, fut, method="quantile_delta", group=group).compute()
    xr.testing.assert_identical(obs, obs_before)  # inputs are never modified
    # four months keep the test quick (every month is its own mapping); DJF spans the year end
    chosen = [(1,), (2,), (7,), (12,)] if group == "month" else [(12, 1, 2), (6, 7, 8)]
    for months in chosen:

        def sel(x, months=months):
            return x.isel(time=np.flatnonzero(np.isin(x["time"].dt.month.values, months)))

        ref, hst, sim = sel(obs), sel(hist), sel(fut)
        nodes = np.linspace(0.0, 1.0, sim.sizes["time"])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            qdm = xsdba.QuantileDeltaMapping.train(
                ref.assign_attrs(units="mm/d"), hst.assign_attrs(units="mm/d"), nquantiles=nodes, kind="*", group="time"
            )
            scen = qdm.adjust(sim.assign_attrs(units="mm/d"), interp="linear", extrapolation="constant")
        mine = sel(ours)
        np.testing.assert_allclose(scen.transpose(*mine.dims).values, mine.values, rtol=1e-10)


def _smooth_sample(template, dist, seed):
    """``template`` filled, month by month, with shuffled exact quantiles of ``dist``: the
    empirical quantile functions are then smooth, so the property below is checked on the
    sorted adjusted series rather than value by value."""
    rng = np.random.default_rng(seed)
    out = template.copy(data=np.empty(template.shape))
    axis = template.dims.index("time")
    months = template["time"].dt.month.values
    for m in range(1, 13):
        idx = np.flatnonzero(months == m)
        n = idx.size
        shape = list(template.shape)
        shape[axis] = n
        q = dist.ppf((np.arange(n) + 0.5) / n)
        block = np.moveaxis(np.broadcast_to(q, shape[:axis] + shape[axis + 1 :] + [n]), -1, axis).copy()
        block = rng.permuted(block, axis=axis)
        np.put_along_axis(
            out.values,
            np.broadcast_to(idx.reshape([-1 if d == axis else 1 for d in range(len(shape))]), shape),
            block,
            axis,
        )
    return out


def test_quantile_delta_preserves_relative_change_in_each_quantile():
    # Defining property of QDM (Cannon et al. 2015, multiplicative case): adjusted quantile /
    # observed quantile = future model quantile / historical model quantile, at every
    # probability tau (here the plotting positions of the future sample), per month.
    stats = pytest.importorskip("scipy.stats")
    obs, hist, fut = _wet_case()
    obs = _smooth_sample(obs, stats.gamma(1.6, loc=1.0, scale=6.0), 1)
    hist = _smooth_sample(hist, stats.gamma(2.0, loc=1.0, scale=4.0), 2)
    fut = _smooth_sample(fut, stats.gamma(1.8, loc=1.0, scale=5.0), 3)
    adj = delta_change(obs, hist, fut, method="quantile_delta").compute()
    for month in (1, 2, 7):

        def vals(x, month=month):
            return np.moveaxis(
                x.isel(time=np.flatnonzero((x["time"].dt.month == month).values)).values, x.dims.index("time"), -1
            )

        a, f, h, o = vals(adj), vals(fut), vals(hist), vals(obs)
        tau = np.linspace(0.0, 1.0, f.shape[-1])
        q_adj, q_fut = np.sort(a, -1), np.sort(f, -1)
        q_hist = np.moveaxis(np.quantile(h, tau, axis=-1), 0, -1)
        q_obs = np.moveaxis(np.quantile(o, tau, axis=-1), 0, -1)[None]
        np.testing.assert_allclose(q_adj / q_obs, q_fut / q_hist, rtol=1e-9)
        # and the change in the mean is not what QDM preserves: only the quantiles are
        assert np.all(np.isfinite(q_adj))


def test_quantile_delta_without_change_is_quantile_mapping_including_dry_days():
    # Future == historical: the adjusted series takes the observed distribution, and dry
    # days (below the 0.05 mm trace) come out as exact zeros at about the observed frequency.
    obs = _series(1981, 2000, lon=(0.0,), dry=0.5, seed=4)
    hist = _series(1981, 2000, members=MEMBERS, lon=(0.0,), dry=0.3, scale=3.0, seed=5)
    fut = hist.assign_coords(
        time=xr.date_range("2041-01-01", periods=hist.sizes["time"], freq="D", calendar="noleap", use_cftime=True)
    )
    adj = delta_change(obs, hist, fut, method="quantile_delta").compute()
    assert not bool(((adj > 0) & (adj < 0.05)).any()) and not bool(adj.isnull().any())
    dry_obs = float((obs < 0.05).mean())
    assert float((adj == 0).mean()) == pytest.approx(dry_obs, abs=0.02)
    wet = np.quantile(adj.values[adj.values > 0], [0.5, 0.9])
    np.testing.assert_allclose(wet, np.quantile(obs.values[obs.values >= 0.05], [0.5, 0.9]), rtol=0.02)


def test_quantile_delta_carries_drier_future():
    obs = _series(1981, 2000, lon=(0.0,), dry=0.3, seed=6)
    hist = _series(1981, 2000, members=MEMBERS, lon=(0.0,), dry=0.3, seed=7)
    fut = _series(2041, 2060, members=MEMBERS, lon=(0.0,), dry=0.5, seed=8)
    adj = delta_change(obs, hist, fut, method="quantile_delta").compute()
    assert float((adj == 0).mean()) > float((obs < 0.05).mean()) + 0.1


def test_quantile_delta_season_groups_and_chunking():
    obs = _series(1981, 1990, dry=0.4, seed=9)
    hist = _series(1981, 1990, members=MEMBERS, dry=0.3, seed=10)
    fut = _series(2041, 2050, members=MEMBERS, dry=0.5, seed=11)
    eager = delta_change(obs, hist, fut, method="quantile_delta", group="season")
    lazy = delta_change(
        obs.chunk({"lat": 1}),
        hist.chunk({"member": 1, "time": 500}),
        fut.chunk({"lon": 2}),
        method="quantile_delta",
        group="season",
    )
    assert lazy.chunks is not None
    # the pseudo-random dry-day amounts depend on position and seed, not on the chunking
    np.testing.assert_array_equal(lazy.compute().values, eager.values)
    assert eager.attrs["group"] == "season" and eager.sizes["time"] == fut.sizes["time"]
    assert "0.05" in eager.attrs["dry_days"] and eager.attrs["cautions"] == SCENARIO_CAUTIONS


@pytest.mark.parametrize("method", ["monthly_ratio", "quantile_delta"])
def test_per_member_results_equal_per_member_computations(method):
    obs = _series(1981, 1990, dry=0.4, seed=12)
    hist = _series(1981, 1990, members=MEMBERS, dry=0.3, seed=13)
    fut = _series(2041, 2050, members=MEMBERS, dry=0.5, seed=14)
    both = delta_change(obs, hist, fut, method=method)
    for m in MEMBERS:
        one = delta_change(obs, hist.sel(member=m, drop=True), fut.sel(member=m, drop=True), method=method)
        np.testing.assert_array_equal(both.sel(member=m).values, one.values)


def _no_compute(*args, **kwargs):
    raise AssertionError("the data were computed while building the lazy result")


@pytest.mark.parametrize("method", ["monthly_ratio", "quantile_delta"])
def test_lazy_without_computing(method):
    dask = pytest.importorskip("dask")
    obs = _series(1981, 1985, dry=0.4, seed=15).chunk({"time": 365})
    hist = _series(1981, 1985, members=MEMBERS, seed=16).chunk({"time": 365})
    fut = _series(2041, 2045, members=MEMBERS, seed=17).chunk({"time": 365})
    with dask.config.set(scheduler=_no_compute):
        out = delta_change(obs, hist, fut, method=method)
    assert out.chunks is not None


def test_basin_series():
    # basin tables: area-mean series of observations and runs (no lat/lon) work alike
    obs = _series(1981, 1990, calendar="standard", step="month", dry=0.0).mean(("lat", "lon"))
    hist = _series(1981, 1990, members=MEMBERS, step="month", dry=0.0, seed=1).mean(("lat", "lon"))
    fut = _series(2041, 2050, members=MEMBERS, step="month", dry=0.0, seed=2).mean(("lat", "lon"))
    for da in (obs, hist, fut):
        da.attrs.update(units="mm", step="month")
    out, factors = delta_change(obs, hist, fut, return_factors=True)
    assert out.dims == ("member", "time") and factors.dims == ("member", "month")
    jan = hist["time"].dt.month == 1
    expected = fut.where(fut["time"].dt.month == 1).mean("time") / hist.where(jan).mean("time")
    np.testing.assert_allclose(factors.sel(month=1).values, expected.values, rtol=1e-12)
    assert delta_change(obs, hist, fut, method="quantile_delta").dims == ("member", "time")
    with pytest.raises(GridError, match="no lat/lon"):
        delta_change(
            obs, _series(1981, 1990, members=MEMBERS, step="month"), _series(2041, 2050, members=MEMBERS, step="month")
        )


def test_quantile_delta_missing_values_stay_missing():
    obs, hist, fut = _wet_case()
    obs, fut = obs.copy(), fut.copy()
    obs[100:160, 0, 0] = np.nan  # a gap in the observed record
    fut[:, 40:45, 1, 0] = np.nan  # a gap in the future run
    adj = delta_change(obs, hist, fut, method="quantile_delta").compute()
    assert bool(adj[:, 40:45, 1, 0].isnull().all())
    # the observed gap only shortens that cell's observed sample: no missing values follow from it
    assert int(adj.isnull().sum()) == 2 * 5


# ----------------------------------------------------------------------------- bad input
def test_errors():
    obs = _series(1981, 1990, calendar="standard")
    hist = _series(1981, 1990, members=MEMBERS)
    fut = _series(2041, 2050, members=MEMBERS)
    with pytest.raises(ParameterError, match="unknown method"):
        delta_change(obs, hist, fut, method="scaling")
    with pytest.raises(CalendarError, match="calendar"):
        delta_change(obs, hist, _series(2041, 2050, members=MEMBERS, calendar="360_day"))
    with pytest.raises(UnitsError, match="model_future"):
        delta_change(obs, hist, fut.assign_attrs(units="kg m-2 s-1"))
    with pytest.raises(MismatchError, match="no member dimension"):
        delta_change(obs, hist, fut.isel(member=0, drop=True))
    with pytest.raises(MismatchError, match="different members"):
        delta_change(obs, hist, fut.assign_coords(member=["m1", "m3"]))
    with pytest.raises(ParameterError, match="member dimension"):
        delta_change(hist, hist, fut)
    with pytest.raises(MismatchError, match="share no complete year"):
        delta_change(_series(2001, 2005), hist, fut, method="quantile_delta")
    with pytest.raises(MismatchError, match="one time step"):
        delta_change(_series(1981, 1990, step="month"), hist, fut, method="quantile_delta")
    with pytest.raises(InsufficientDataError, match="not covered"):
        delta_change(obs, hist, fut, future=(2041, 2060))
    with pytest.raises(ParameterError, match="group"):
        delta_change(obs, hist, fut, method="quantile_delta", group="week")
    far = _series(1981, 1990, calendar="standard", lat=(60.0, 61.0), lon=(100.0, 101.0))
    with pytest.raises(GridError, match="do not overlap"):
        delta_change(far, hist, fut)
