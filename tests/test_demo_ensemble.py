"""Tests of the invented demo ensemble (climwidgets/demo_ensemble.py, written by climwidgets/demo.py).

The ensemble's future runs repeat the historical weather times a known factor per member
and calendar month, so delta change must recover those factors exactly (to float32
rounding of the stored totals).
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from climwidgets import demo, demo_ensemble
from climwidgets.compute.ensemble import ensemble_summary
from climwidgets.compute.scenario import delta_change

FLOAT32 = 1e-5  # relative rounding of totals stored as float32


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    # the same folder as the session's demo_files fixture, so the demo is generated once
    paths = demo.generate(tmp_path_factory.getbasetemp() / "cw_demo_test", quiet=True, size="test")
    return paths | demo.generate_ensemble(paths["monthly"].parent, quiet=True, size="test")


@pytest.fixture(scope="module")
def runs(files):
    out = {}
    for key in ("ensemble_historical", "ensemble_future", "monthly"):
        with xr.open_dataset(files[key]) as ds:
            out[key] = ds["pr"].load().assign_attrs(step="month")
    with xr.open_dataset(files["ensemble_future"]) as ds:
        out["factors"] = ds["change_factor"].load()
    return out


def test_files_are_a_noleap_ensemble_on_a_coarser_grid(runs):
    hist, fut, obs = runs["ensemble_historical"], runs["ensemble_future"], runs["monthly"]
    for run, years in ((hist, demo_ensemble.HISTORICAL_YEARS), (fut, demo_ensemble.FUTURE_YEARS)):
        assert run.dims == ("member", "time", "lat", "lon")
        assert tuple(run["member"].values) == demo_ensemble.MEMBERS
        assert run["time"].dt.calendar == "noleap" and run.attrs["units"] == "mm"
        assert int(run["time"].dt.year.min()) == years[0] and int(run["time"].dt.year.max()) == years[1]
        assert float(run.min()) >= 0 and not bool(run.isnull().any())
    spacing = float(np.diff(hist["lat"].values)[0])
    assert spacing == pytest.approx(2 * demo.SIZES["test"].coarse_res)
    assert spacing > float(np.diff(obs["lat"].values)[0])
    np.testing.assert_array_equal(
        runs["factors"].values, np.array([demo_ensemble.CHANGE_FACTORS[m] for m in demo_ensemble.MEMBERS])
    )


def test_delta_change_recovers_the_known_change_factors(runs):
    obs, hist, fut = runs["monthly"], runs["ensemble_historical"], runs["ensemble_future"]
    scen, factors = delta_change(obs, hist, fut, return_factors=True)
    known = runs["factors"]
    assert factors.sizes["lat"] == obs.sizes["lat"] and factors.sizes["lon"] == obs.sizes["lon"]
    np.testing.assert_allclose(
        factors.transpose("member", "month", ...).values,
        np.broadcast_to(known.values[:, :, None, None], factors.shape),
        rtol=FLOAT32,
    )
    jan = np.flatnonzero((obs["time"].dt.month == 1).values)
    np.testing.assert_allclose(
        scen.isel(time=jan).sel(member="m3").values, obs.isel(time=jan).values * 1.18, rtol=FLOAT32
    )
    assert scen.attrs["cautions"]


def test_quantile_delta_on_the_demo_keeps_each_member_quantile_change(runs):
    obs, hist, fut = runs["monthly"], runs["ensemble_historical"], runs["ensemble_future"]
    adj = delta_change(obs, hist, fut, method="quantile_delta").compute()
    assert adj.attrs["calibration_period"] == [1981, 2010]
    base = obs.isel(time=np.flatnonzero((obs["time"].dt.year <= 2010).values))
    for month in (1, 7):
        a = adj.isel(time=np.flatnonzero((adj["time"].dt.month == month).values))
        o = base.isel(time=np.flatnonzero((base["time"].dt.month == month).values))
        tau = np.linspace(0, 1, a.sizes["time"])
        q_obs = np.quantile(o.values, tau, axis=0)  # (tau, lat, lon)
        q_adj = np.sort(a.values, axis=1)  # (member, tau, lat, lon)
        ratio = q_adj / q_obs[None]
        known = runs["factors"].sel(month=month).values
        np.testing.assert_allclose(ratio, np.broadcast_to(known[:, None, None, None], ratio.shape), rtol=FLOAT32)


def test_ensemble_spread_and_agreement_of_the_demo_factors(runs):
    summary = ensemble_summary(runs["factors"], change="ratio")
    # winter (January): 1.10, 1.05, 1.18, 0.96 -> median 1.075, three of four members wetter
    assert float(summary["median"].sel(month=1)) == pytest.approx(1.075)
    assert float(summary["agreement"].sel(month=1)) == pytest.approx(0.75)
    assert float(summary["range"].sel(month=7)) == pytest.approx(1.06 - 0.80)
