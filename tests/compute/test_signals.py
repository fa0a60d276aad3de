"""Tests of climwidgets/compute/signals.py: per-member signals and their ensemble spread."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from climwidgets.compute.ensemble import ensemble_summary
from climwidgets.compute.extremes import annual_maxima
from climwidgets.compute.gev import return_levels
from climwidgets.compute.normals import annual_normal
from climwidgets.compute.scenario import SCENARIO_CAUTIONS
from climwidgets.compute.seasonal import seasonal_fraction
from climwidgets.compute.signals import annual_normal_signal, design_depth_signal, seasonal_share_signal
from climwidgets.errors import CalendarError, MismatchError

MEMBERS = ["m1", "m2", "m3"]


def _run(y0, y1, step="month", seed=0, members=MEMBERS, calendar="noleap"):
    freq = "MS" if step == "month" else "D"
    time = xr.date_range(f"{y0}-01-01", f"{y1 + 1}-01-01", freq=freq, calendar=calendar, use_cftime=True)[:-1]
    rng = np.random.default_rng(seed)
    shape = ((len(members),) if members else ()) + (len(time), 2, 3)
    values = rng.gamma(2.0, 40.0 if step == "month" else 3.0, shape)
    dims = (("member",) if members else ()) + ("time", "lat", "lon")
    coords = {"time": time, "lat": [0.0, 1.0], "lon": [0.0, 1.0, 2.0]}
    if members:
        coords["member"] = members
    return xr.DataArray(values, dims=dims, coords=coords, attrs={"units": "mm", "step": step}, name="pr")


def _member(da, m):
    return da.sel(member=m, drop=True)


def test_seasonal_share_signal_per_member_and_spread():
    hist, fut = _run(1981, 2000), _run(2041, 2060, seed=1)
    ds = seasonal_share_signal(hist, fut, months=(7, 8))
    for m in MEMBERS:  # per-member results equal per-member computations
        sh = seasonal_fraction(_member(hist, m), (7, 8))
        sf = seasonal_fraction(_member(fut, m), (7, 8))
        np.testing.assert_allclose(ds["change"].sel(member=m).values, (sf - sh).values, rtol=1e-12)
    # ensemble statistics equal numpy on the stacked members
    v = ds["change"].transpose("member", ...).values
    np.testing.assert_allclose(ds["change_mean"].values, v.mean(0), rtol=1e-12)
    np.testing.assert_allclose(ds["change_std"].values, v.std(0, ddof=1), rtol=1e-12)
    np.testing.assert_allclose(ds["change_iqr"].values, np.quantile(v, 0.75, 0) - np.quantile(v, 0.25, 0), rtol=1e-12)
    agree = (np.sign(v) == np.sign(np.median(v, 0))).mean(0)
    np.testing.assert_allclose(ds["change_agreement"].values, agree, rtol=1e-12)
    assert ds["change"].attrs["units"] == "1" and ds.attrs["cautions"] == SCENARIO_CAUTIONS


def test_annual_normal_signal_known_ratio_and_agreement():
    hist = _run(1981, 2010)
    factor = xr.DataArray([1.1, 0.9, 1.2], dims="member", coords={"member": MEMBERS})
    fut = (hist * factor).assign_coords(time=_run(2041, 2070)["time"]).assign_attrs(hist.attrs)
    ds = annual_normal_signal(hist, fut)
    np.testing.assert_allclose(
        ds["change"].transpose("member", ...).values,
        np.broadcast_to(factor.values[:, None, None], (3, 2, 3)),
        rtol=1e-12,
    )
    assert float(ds["change_agreement"].mean()) == pytest.approx(2 / 3)
    assert float(ds["change_median"].mean()) == pytest.approx(1.1)
    np.testing.assert_allclose(
        ds["historical"].sel(member="m2").values,
        annual_normal(_member(hist, "m2"), baseline=(1981, 2010)).values,
        rtol=1e-12,
    )
    xr.testing.assert_allclose(ds["change_range"], ensemble_summary(ds["change"], change="ratio")["range"])


def test_design_depth_signal_scales_with_the_run():
    # A future that is the historical run times 1.2: L-moment GEV fits are scale-equivariant
    # (loc and scale scale, shape does not; Hosking 1990), so every return level is x 1.2.
    hist = _run(1981, 2000, step="day", members=["m1", "m2"])
    factor = xr.DataArray([1.2, 0.9], dims="member", coords={"member": ["m1", "m2"]})
    fut = (hist * factor).assign_coords(time=_run(2041, 2060, step="day", members=["m1", "m2"])["time"])
    fut.attrs = hist.attrs
    ds = design_depth_signal(hist, fut, periods=(10, 100), n_boot=50)
    np.testing.assert_allclose(ds["change"].sel(member="m1").values, 1.2, rtol=1e-9)
    np.testing.assert_allclose(ds["change"].sel(member="m2").values, 0.9, rtol=1e-9)
    direct = return_levels(annual_maxima(_member(hist, "m1")), periods=(10, 100), n_boot=50)["estimate"]
    np.testing.assert_allclose(ds["historical"].sel(member="m1").values, direct.values, rtol=1e-12)
    assert float(ds["change_agreement"].min()) == pytest.approx(0.5)
    assert len(ds.attrs["cautions"]) > len(SCENARIO_CAUTIONS)
    assert {"historical_lower", "future_upper"} <= set(ds.data_vars)


def test_single_run_and_errors():
    hist, fut = _run(1981, 1990, members=None), _run(2041, 2050, seed=2, members=None)
    ds = annual_normal_signal(hist, fut)
    assert "change_mean" not in ds and "single run" in ds.attrs["ensemble"]
    with pytest.raises(MismatchError):
        seasonal_share_signal(_run(1981, 1990), fut)
    with pytest.raises(CalendarError):
        annual_normal_signal(_run(1981, 1990), _run(2041, 2050, calendar="360_day"))


def _no_compute(*args, **kwargs):
    raise AssertionError("the data were computed while building the lazy result")


def test_signals_are_lazy_without_computing():
    dask = pytest.importorskip("dask")
    hist = _run(1981, 1990, step="day", members=["m1", "m2"]).chunk({"time": 365})
    fut = _run(2041, 2050, step="day", seed=3, members=["m1", "m2"]).chunk({"time": 365})
    with dask.config.set(scheduler=_no_compute):
        out = [
            seasonal_share_signal(hist, fut),
            annual_normal_signal(hist, fut),
            design_depth_signal(hist, fut, periods=(10,), n_boot=50),
        ]
    assert all(ds["change_agreement"].chunks is not None for ds in out)


def test_signals_of_basin_series():
    # basin tables: the signals of area-mean series (dims member, time), as cw.basin_mean gives
    hist = _run(1981, 1990).mean(("lat", "lon")).assign_attrs(units="mm", step="month")
    fut = _run(2041, 2050, seed=4).mean(("lat", "lon")).assign_attrs(units="mm", step="month")
    ds = annual_normal_signal(hist, fut)
    assert ds["change"].dims == ("member",) and ds["change_median"].dims == ()
    expected = [
        annual_normal(fut.sel(member=m), baseline=(2041, 2050)).item()
        / annual_normal(hist.sel(member=m), baseline=(1981, 1990)).item()
        for m in MEMBERS
    ]
    np.testing.assert_allclose(ds["change"].values, expected, rtol=1e-12)
