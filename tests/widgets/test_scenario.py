"""ScenarioWidget: the numbers it shows are those of the scenario analyses called directly.

References: climwidgets.analyses.scenario (checked by hand and against the defining property
of quantile delta mapping in tests/analyses/test_scenario.py) and the demo ensemble's known
change factors (climwidgets.demo_ensemble.CHANGE_FACTORS), whose future runs are the
historical weather times a factor per member and calendar month.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets import demo, demo_ensemble
from climwidgets.analyses.scenario import basin_depth_signals, basin_signals, signal_maps
from climwidgets.compute.scenario import SCENARIO_CAUTIONS

from ._data import check_every_export

pytest.importorskip("ipympl")


@pytest.fixture(scope="module")
def files(demo_files):
    return demo_files | demo.generate_ensemble(demo_files["monthly"].parent, quiet=True, size="test")


@pytest.fixture(scope="module")
def runs(files):
    return (
        cw.open_precip(files["ensemble_historical"]),
        cw.open_precip(files["ensemble_future"]),
        cw.open_precip(files["monthly"]),
        cw.load_basins(files["basins"]),
    )


@pytest.fixture(scope="module")
def widget(runs, tmp_path_factory):
    hist, fut, obs, basins = runs
    w = cw.ScenarioWidget(hist, fut, basins=basins, obs=obs, export_dir=tmp_path_factory.mktemp("exports"))
    w.wait()
    assert w.error is None, w.message.value
    return w


def _close(a, b):
    np.testing.assert_allclose(np.asarray(a, dtype=float), np.asarray(b, dtype=float), rtol=1e-10, equal_nan=True)


def test_numbers_equal_basin_signals_called_directly(widget, runs):
    hist, fut, obs, basins = runs
    ref = basin_signals(hist, fut, basins).compute()
    for name in ("share_change_1_mean", "share_change_1_lower", "normal_change_1_upper", "normal_change_1_agreement"):
        _close(widget.result["signals"][name].values, ref[name].values)
    # the shown table is the analysis in its display units (% and % points)
    shown = widget.table
    _close(shown["change in annual normal, ensemble mean [%]"].values, 100 * ref["normal_change_1_mean"].values)
    _close(shown["change in seasonal share, members agreeing [%]"].values, 100 * ref["share_change_1_agreement"].values)
    maps = signal_maps(hist, fut).compute()
    _close(widget.result["maps"]["normal_change_1"].values, maps["normal_change_1_mean"].values)  # ensemble mean
    assert widget.map.field is not None and widget._dots is not None  # m4 disagrees: dots where < 80 % agree
    for caution in SCENARIO_CAUTIONS:
        assert caution in widget.cautions.value.replace("&#x27;", "'")


def test_demo_ensemble_recovers_its_known_change_factors(widget, runs):
    hist, fut, obs, basins = runs
    # the future is the historical weather times F(member, month): the annual normal of a
    # basin changes by sum_m F N_m / sum_m N_m (N_m its historical monthly normals)
    factors = xr.DataArray(
        np.array([demo_ensemble.CHANGE_FACTORS[m] for m in demo_ensemble.MEMBERS]),
        dims=("member", "month"),
        coords={"member": list(demo_ensemble.MEMBERS), "month": np.arange(1, 13)},
    )
    for b in basins:
        n = cw.normals(cw.basin_mean(hist, b), baseline=demo_ensemble.HISTORICAL_YEARS)
        n = n.drop_vars([c for c in n.coords if c not in n.dims])
        expected = (factors * n).sum("month") / n.sum("month") - 1.0
        got = widget.result["signals"]["normal_change_1"].sel(basin=b.name)
        np.testing.assert_allclose(got.sel(member=expected["member"]).values, expected.values, rtol=1e-5)
    # a season made of months with one factor changes its seasonal total by that factor:
    # June-August share goes from S/A to F S / A', with A' the future annual total
    with widget.quiet():
        widget.first.value, widget.last.value = 6, 8
    widget.refresh()
    widget.wait()
    summer = np.array([demo_ensemble.CHANGE_FACTORS[m][6] for m in demo_ensemble.MEMBERS])
    for b in basins[:1]:
        sh = cw.seasonal_fraction(cw.basin_mean(hist, b), months=(6, 7, 8))
        ah = cw.annual_normal(cw.basin_mean(hist, b), baseline=demo_ensemble.HISTORICAL_YEARS)
        af = cw.annual_normal(cw.basin_mean(fut, b), baseline=demo_ensemble.FUTURE_YEARS)
        share_future = summer * sh.values * ah.values / af.values
        got = widget.result["signals"]["share_change_1"].sel(basin=b.name).values
        np.testing.assert_allclose(got, share_future - sh.values, rtol=1e-4, atol=1e-7)
    with widget.quiet():
        widget.first.value, widget.last.value = 7, 8
    widget.refresh()
    widget.wait()


def test_methods_periods_and_member_menu(widget, runs):
    hist, fut, obs, basins = runs
    widget.method.value = "monthly_ratio"
    widget.wait()
    assert widget.error is None, widget.message.value
    ref = basin_signals(hist, fut, basins, obs=obs, method="monthly_ratio").compute()
    _close(widget.result["signals"]["normal_change_1_mean"].values, ref["normal_change_1_mean"].values)
    assert widget.result["maps"]["normal_change_1"].sizes == {"lat": obs.sizes["lat"], "lon": obs.sizes["lon"]}
    assert "delta change" in widget.about.value and widget.design_period.layout.display == "none"  # monthly runs
    assert all(c.layout.display != "none" for c in (widget.first, widget.last, widget.method, widget.layer))
    widget.method.value = "quantile_delta"
    widget.wait()
    ref = basin_signals(hist, fut, basins, obs=obs, method="quantile_delta").compute()
    _close(widget.result["signals"]["share_change_1_mean"].values, ref["share_change_1_mean"].values)
    widget.method.value = "none"
    widget.historical.value = (1986, 2005)
    widget.wait()
    ref = basin_signals(hist, fut, basins, historical=(1986, 2005)).compute()
    _close(widget.result["signals"]["normal_change_1_lower"].values, ref["normal_change_1_lower"].values)
    widget.member.value = "m4"
    widget.wait()
    maps = signal_maps(hist, fut, historical=(1986, 2005)).compute()
    _close(widget.result["maps"]["normal_change_1"].values, maps["normal_change_1"].sel(member="m4").values)
    # the table keeps the ensemble figures whatever the map shows
    _close(widget.result["signals"]["normal_change_1_lower"].values, ref["normal_change_1_lower"].values)
    widget.layer.value = "share_change_1"
    assert "share" in widget.map.ax.get_title()
    widget.member.value = "mean"
    widget.layer.value = "normal_change_1"
    widget.historical.value = (widget.historical.min, widget.historical.max)
    widget.wait()


def test_every_export_reaches_the_browser(widget):
    files = check_every_export(widget)
    import json

    meta = next(json.loads(v) for k, v in files["Table as CSV"].items() if k.endswith("-metadata.json"))
    text = json.dumps(meta)
    assert SCENARIO_CAUTIONS[0][:40] in text and "jul-aug" in next(iter(files["Table as CSV"]))
    page = next(iter(files["Report as HTML"].values())).decode("utf-8")
    assert page.index("Before using these numbers") < page.index("<table")
    assert "pr_ensemble_historical_noleap.nc" in page  # the inputs, with their checksums


def _daily(first, factors):
    rng = np.random.default_rng(3)
    time = pd.date_range(f"{first}-01-01", f"{first + 11}-12-31", freq="D")
    lat, lon = 10.25 + 0.5 * np.arange(3), -30.25 + 0.5 * np.arange(4)
    base = rng.gamma(0.6, 8.0, size=(time.size, lat.size, lon.size))
    return xr.DataArray(
        base[None] * np.asarray(factors)[:, None, None, None],
        dims=("member", "time", "lat", "lon"),
        coords={"member": ["a", "b"], "time": time, "lat": lat, "lon": lon},
        name="pr",
        attrs={"units": "mm", "step": "day", "standard_name": "lwe_thickness_of_precipitation_amount"},
    )


def test_daily_runs_add_the_design_depth_change():
    from ._data import basins

    hist = _daily(1991, [1.0, 1.0])
    fut = _daily(1991, [1.1, 0.9]).assign_coords(time=pd.date_range("2051-01-01", periods=hist.sizes["time"]))
    w = cw.ScenarioWidget(hist, fut, basins=basins()[:1], n_boot=50, export_dir="unused")
    w.wait()
    assert w.error is None, w.message.value
    ref = basin_depth_signals(hist, fut, basins()[:1], periods=(100,), n_boot=50).compute()
    _close(w.result["depths"]["depth_change_1_mean"].values, ref["depth_change_1_mean"].sel(return_period=100).values)
    assert "change in design depth, ensemble mean [%]" in w.table.columns
    # the depths of a future that is the past times 1.1 and 0.9 (scale-equivariant L-moment fit)
    _close(w.result["depths"]["depth_change_1_lower"].values, [-0.1])
    assert w.design_period.layout.display != "none"
    files = check_every_export(w)
    page = next(iter(files["Report as HTML"].values())).decode("utf-8")
    assert "Change in design depths" in page and "change in design depth, ensemble mean" in page.lower()
