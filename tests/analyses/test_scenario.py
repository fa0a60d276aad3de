"""Climate-change signals per basin (climwidgets/analyses/scenario.py).

Hand-checked case: a field of 10 mm in every month but July and August, 40 mm in those,
everywhere; the future multiplies the July–August amounts of member k by F[k].  Then the
seasonal share is 80 / 180 historically and 80 F / (80 F + 100) in the future, and the
annual normal changes by (80 F + 100) / 180 − 1 (arithmetic by hand, no outside library).
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses.meta import frame
from climwidgets.analyses.scenario import basin_signals
from climwidgets.compute.scenario import SCENARIO_CAUTIONS

WEST = cw.Basin.from_vertices([(-149.0, -34.0), (-147.0, -34.0), (-147.0, -32.0), (-149.0, -32.0)], name="west")
EAST = cw.Basin.from_vertices([(-147.0, -33.0), (-145.0, -33.0), (-145.0, -31.0), (-147.0, -31.0)], name="east")
F = np.array([1.0, 1.25, 1.5, 0.9])


def _run(first, factors):
    lat = np.arange(-34.75, -30.0, 0.5)
    lon = np.arange(-149.75, -144.0, 0.5)
    time = pd.date_range(f"{first}-01-01", periods=12 * 20, freq="MS")
    summer = np.isin(time.month, (7, 8))
    data = np.where(summer[None, :], 40.0 * factors[:, None], 10.0)[:, :, None, None] * np.ones((lat.size, lon.size))
    return xr.DataArray(
        data,
        dims=("member", "time", "lat", "lon"),
        coords={"member": ["a", "b", "c", "d"], "time": time, "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "month", "standard_name": "lwe_thickness_of_precipitation_amount"},
    )


@pytest.fixture(scope="module")
def signals():
    return basin_signals(_run(1981, np.ones(4)), _run(2041, F), [WEST, EAST]).compute()


def test_per_member_changes_match_the_hand_computation(signals):
    share = 80.0 * F / (80.0 * F + 100.0) - 80.0 / 180.0
    normal = (80.0 * F + 100.0) / 180.0 - 1.0
    for basin in ("west", "east"):
        np.testing.assert_allclose(signals["share_change_1"].sel(basin=basin).values, share, rtol=1e-10, atol=1e-14)
        np.testing.assert_allclose(signals["normal_change_1"].sel(basin=basin).values, normal, rtol=1e-10, atol=1e-14)


def test_ensemble_figures_equal_numpy_on_the_members(signals):
    for name in ("share_change_1", "normal_change_1"):
        stacked = signals[name].transpose("basin", "member").values
        np.testing.assert_allclose(signals[f"{name}_mean"].values, stacked.mean(axis=1), rtol=1e-12)
        np.testing.assert_allclose(signals[f"{name}_lower"].values, stacked.min(axis=1), rtol=1e-12)
        np.testing.assert_allclose(signals[f"{name}_upper"].values, stacked.max(axis=1), rtol=1e-12)
    # signs 0, +, +, −; median > 0, so two of four agree
    np.testing.assert_allclose(signals["share_change_1_agreement"].values, 0.5)


def test_table_labels_periods_and_cautions(signals):
    shown = frame(signals, display=True)
    assert "change in seasonal share, ensemble mean [% points]" in shown.columns
    assert "change in annual normal, highest member [%]" in shown.columns
    assert signals.attrs["historical_period"] == [1981, 2000]
    assert signals.attrs["future_period"] == [2041, 2060]
    assert signals.attrs["cautions"] == list(SCENARIO_CAUTIONS)


# ------------------------------------------------------------------ design depths
def _daily(first, factors, years=15):
    """Gamma-distributed daily depths, the same weather for every member, times its factor."""
    rng = np.random.default_rng(7)
    time = pd.date_range(f"{first}-01-01", f"{first + years - 1}-12-31", freq="D")
    lat, lon = np.arange(-34.75, -30.0, 0.5), np.arange(-149.75, -144.0, 0.5)
    base = rng.gamma(0.6, 8.0, size=(time.size, lat.size, lon.size))
    data = base[None] * np.asarray(factors, dtype=float)[:, None, None, None]
    return xr.DataArray(
        data,
        dims=("member", "time", "lat", "lon"),
        coords={"member": ["a", "b", "c", "d"][: len(factors)], "time": time, "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "day", "standard_name": "lwe_thickness_of_precipitation_amount"},
    )


def test_design_depth_change_is_the_factor_of_a_scaled_future():
    from climwidgets.analyses.extremes import areal_design_depths
    from climwidgets.analyses.scenario import basin_depth_signals

    # An L-moment GEV fit is scale-equivariant (location and scale scale, shape stays:
    # Hosking 1990, sec. 2), so a future that is the historical weather times F has every
    # return level times F: the change is F - 1 exactly.  Same weather, later years.
    hist = _daily(1981, [1.0, 1.0, 1.0])
    fut = (_daily(1981, [1.1, 0.95, 1.2])).assign_coords(
        time=pd.date_range("2041-01-01", periods=hist.sizes["time"], freq="D")
    )
    ds = basin_depth_signals(hist, fut, [WEST, EAST], periods=(10, 100), n_boot=50).compute()
    factors = np.array([1.1, 0.95, 1.2])
    np.testing.assert_allclose(
        ds["depth_change_1"].transpose("basin", "return_period", "member").values,
        np.broadcast_to(factors - 1.0, (2, 2, 3)),
        rtol=1e-6,
        atol=1e-9,
    )
    # the per-member depths are those of areal_design_depths called directly on the runs
    ref = areal_design_depths(hist, [WEST, EAST], periods=(10, 100), n_boot=50).compute()
    np.testing.assert_allclose(
        ds["historical_depth_mm"].values,
        ref["areal_estimate_mm"].transpose(*ds["historical_depth_mm"].dims).values,
        rtol=1e-12,
    )
    stacked = ds["depth_change_1"].transpose("basin", "return_period", "member").values
    np.testing.assert_allclose(ds["depth_change_1_mean"].values, stacked.mean(axis=-1), rtol=1e-12)
    np.testing.assert_allclose(ds["depth_change_1_lower"].values, stacked.min(axis=-1), rtol=1e-12)
    np.testing.assert_allclose(ds["depth_change_1_upper"].values, stacked.max(axis=-1), rtol=1e-12)
    # signs +, −, + with a positive median: two of three agree
    np.testing.assert_allclose(ds["depth_change_1_agreement"].values, 2 / 3)
    shown = frame(ds.sel(return_period=100), display=True)
    assert "change in design depth, ensemble mean [%]" in shown.columns
    assert set(SCENARIO_CAUTIONS) <= set(ds.attrs["cautions"]) and len(ds.attrs["cautions"]) > len(SCENARIO_CAUTIONS)


def test_design_depths_need_daily_runs():
    from climwidgets.analyses.scenario import basin_depth_signals
    from climwidgets.errors import ParameterError

    with pytest.raises(ParameterError, match="daily or hourly"):
        basin_depth_signals(_run(1981, np.ones(4)), _run(2041, F), [WEST])


# ------------------------------------------------------------------ cells and observation-based methods
def test_signal_maps_equal_the_hand_computation_in_every_cell():
    from climwidgets.analyses.scenario import signal_maps

    maps = signal_maps(_run(1981, np.ones(4)), _run(2041, F)).compute()
    normal = (80.0 * F + 100.0) / 180.0 - 1.0
    np.testing.assert_allclose(
        maps["normal_change_1"].transpose("member", ...).values,
        np.broadcast_to(normal[:, None, None], (4,) + maps["normal_change_1"].shape[1:]),
        rtol=1e-10,
    )
    np.testing.assert_allclose(maps["normal_change_1_mean"].values, normal.mean(), rtol=1e-10)
    np.testing.assert_allclose(maps["share_change_1_agreement"].values, 0.5)


def test_delta_change_method_compares_observations_with_the_scenario():
    from climwidgets.compute.scenario import delta_change

    # observations: 20 mm in July-August and 5 mm otherwise; the runs' July-August factor F
    # scales the observed July-August: share 40F / (40F + 50) against 40 / 90 (by hand)
    obs = _run(1991, np.ones(4)).isel(member=0, drop=True) / 2.0
    obs.attrs = dict(_run(1991, np.ones(4)).attrs)
    ds = basin_signals(_run(1981, np.ones(4)), _run(2041, F), [WEST], obs=obs, method="monthly_ratio").compute()
    share = 40.0 * F / (40.0 * F + 50.0) - 40.0 / 90.0
    np.testing.assert_allclose(ds["share_change_1"].sel(basin="west").values, share, rtol=1e-10)
    assert ds.attrs["historical_period"] == ds.attrs["future_period"] == [1991, 2010]
    # the same numbers as the scenario of delta_change averaged over the basin directly
    scen = delta_change(obs, _run(1981, np.ones(4)), _run(2041, F))
    series = cw.basin_mean(scen, WEST)
    ratio = cw.annual_normal(series, baseline=(1991, 2010)) / cw.annual_normal(
        cw.basin_mean(obs, WEST), baseline=(1991, 2010)
    )
    np.testing.assert_allclose(ds["normal_change_1"].sel(basin="west").values, ratio.values - 1.0, rtol=1e-10)


def test_quantile_delta_method_and_bad_methods():
    from climwidgets.errors import ParameterError

    obs = _run(1991, np.ones(4)).isel(member=0, drop=True)
    obs.attrs = dict(_run(1991, np.ones(4)).attrs)
    ds = basin_signals(_run(1981, np.ones(4)), _run(2041, F), [WEST], obs=obs, method="quantile_delta").compute()
    # the model's relative change of every quantile is kept: July-August times F, the rest as observed
    normal = (80.0 * F + 100.0) / 180.0 - 1.0
    np.testing.assert_allclose(ds["normal_change_1"].sel(basin="west").values, normal, rtol=1e-6)
    assert ds.attrs["historical_period"] == [1991, 2000] and ds.attrs["calibration_period"] == [1991, 2000]
    with pytest.raises(ParameterError, match="observations"):
        basin_signals(_run(1981, np.ones(4)), _run(2041, F), [WEST], method="monthly_ratio")
    with pytest.raises(ParameterError, match="unknown method"):
        basin_signals(_run(1981, np.ones(4)), _run(2041, F), [WEST], obs=obs, method="qdm")
