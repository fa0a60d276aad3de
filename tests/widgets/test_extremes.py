"""ExtremesWidget: each control gives the numbers of the public compute functions.

References are the public functions called directly with the same parameters
(cw.annual_maxima, cw.return_levels, cw.warming_scaling, cw.basin_mean), which are checked
against outside sources in tests/compute; the warming factor is also checked by hand
against (1 + rate) ** delta_t, the Clausius-Clapeyron-type scaling (about 7 % per degC,
common practice).
"""

import html

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.widgets.extremes import PERIODS
from ._data import check_every_export

pytest.importorskip("ipympl")

N_BOOT = 50


def _pr(years=(2001, 2020), freq="D", step="day", seed=2):
    rng = np.random.default_rng(seed)
    time = pd.date_range(f"{years[0]}-01-01", f"{years[1]}-12-31 23:00", freq=freq)
    lat = np.array([20.125, 20.375, 20.625])
    lon = np.array([40.125, 40.375, 40.625])
    wet = rng.random((time.size, 3, 3)) < 0.3
    data = np.where(wet, rng.gamma(0.8, 12.0, size=(time.size, 3, 3)), 0.0)
    return xr.DataArray(
        data,
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm", "step": step},
    )


@pytest.fixture(scope="module")
def setup():
    pr = _pr()
    basin = cw.Basin.from_vertices([(40.0, 20.0), (40.5, 20.0), (40.5, 20.5), (40.0, 20.5)], name="upper")
    w = cw.ExtremesWidget(pr, basins=[basin], n_boot=N_BOOT, export_dir="unused")
    w.wait()
    return pr, basin, w


def _levels(pr, ci=0.9, **kw):
    return cw.return_levels(cw.annual_maxima(pr, **kw), periods=PERIODS, ci=ci, n_boot=N_BOOT)


def test_default_levels_and_cautions(setup):
    pr, basin, w = setup
    assert w.error is None
    expected = _levels(pr, duration_days=1)
    xr.testing.assert_allclose(w.levels, expected)
    xr.testing.assert_allclose(w.result, cw.warming_scaling(expected, 0.0))
    for caution in cw.DESIGN_DEPTH_CAUTIONS:
        assert html.escape(caution) in w.cautions.value
    assert w.cautions in w.children
    assert "not point" in w.areal_note.value or "point (gauge)" in w.areal_note.value
    # the first table: design depths of the basin by duration (rows) and return period,
    # the same numbers as cw.depth_duration_frequency of the basin (checked against
    # lmoments3 and scipy in tests/compute/test_ddf.py)
    assert w.table_kind.value == "ddf" and w.table_basin.value == "upper"
    from climwidgets.compute.extremes import DAY_DURATIONS

    ddf = cw.depth_duration_frequency(
        pr, durations=list(DAY_DURATIONS), periods=PERIODS, ci=0.9, basins=[basin], n_boot=N_BOOT
    ).sel(basin="upper")
    assert list(w.table.index) == ["1 day"] + [f"{d} days" for d in DAY_DURATIONS[1:]]
    for t in PERIODS:
        np.testing.assert_allclose(w.table[f"{t} years"], ddf["estimate"].sel(period=t).values, rtol=1e-9)
        np.testing.assert_allclose(w.table[f"{t} years lower 90%"], ddf["lower"].sel(period=t).values, rtol=1e-9)
        np.testing.assert_allclose(w.table[f"{t} years upper 90%"], ddf["upper"].sel(period=t).values, rtol=1e-9)
    one = ddf.sel(duration=3, period=100)
    shown = f"{float(one['estimate']):.1f} ({float(one['lower']):.1f}–{float(one['upper']):.1f})"
    assert shown in w.table_html.value and "100 years [mm]" in w.table_html.value
    assert "e+0" not in w.table_html.value
    # the wording is plain: no agency-style phrasing
    assert "frequency estimate" not in (w.title + w.areal_note.value).lower()
    # map shows the 100-year estimate
    np.testing.assert_allclose(
        np.asarray(w.map.mesh.get_array()).reshape(3, 3), expected["estimate"].sel(period=100).values
    )
    assert w.map.cbar.ax.get_ylabel().endswith("[mm]")


def test_duration_year_and_level_refit(setup):
    pr, basin, w = setup
    w.table_kind.value = "areal"  # the areal depths of all basins at one return period
    w.duration.value = 3
    w.year.value = 10
    w.level.value = 0.95
    w.wait()
    xr.testing.assert_allclose(w.levels, _levels(pr, ci=0.95, duration_days=3, year_start=10))
    areal = _levels(cw.basin_mean(pr, basin), ci=0.95, duration_days=3, year_start=10)
    row = w.table.loc["upper"]
    assert row["areal depth [mm]"] == pytest.approx(float(areal["estimate"].sel(period=100)))
    assert row["lower 95% [mm]"] == pytest.approx(float(areal["lower"].sel(period=100)))
    assert row["upper 95% [mm]"] == pytest.approx(float(areal["upper"].sel(period=100)))


def test_period_and_warming_redraw_without_refit(setup):
    pr, basin, w = setup
    gen, levels = w._gen, w.levels
    w.period.value = 25
    w.delta_t.value = 2.0
    w.rate.value = 6.0
    assert w._gen == gen and w.levels is levels
    xr.testing.assert_allclose(w.result, cw.warming_scaling(levels, 2.0, rate=0.06))
    factor = 1.06**2  # (1 + rate) ** delta_t
    np.testing.assert_allclose(w.result["estimate"].values, levels["estimate"].values * factor)
    areal = w.basin_levels["areal_estimate_mm"].sel(basin="upper", return_period=25)
    assert w.table.loc["upper", "areal depth [mm]"] == pytest.approx(float(areal) * factor)
    w.layer.value = "upper"
    np.testing.assert_allclose(
        np.asarray(w.map.mesh.get_array()).reshape(3, 3), levels["upper"].sel(period=25).values * factor
    )
    w.delta_t.value = 0.0


def test_short_record_is_a_message_and_cautions_stay():
    pr = _pr(years=(2001, 2006))
    w = cw.ExtremesWidget(pr, n_boot=N_BOOT, export_dir="unused")
    w.wait()
    assert isinstance(w.error, cw.InputError)
    assert "10" in w.message.value and "Traceback" not in w.message.value
    assert w.result is None and w.cautions in w.children


def test_monthly_input_is_refused():
    pr = _pr(years=(2001, 2002)).resample(time="MS").sum()
    pr.attrs = {"units": "mm", "step": "month"}
    with pytest.raises(cw.InputError, match="daily or hourly"):
        cw.ExtremesWidget(pr)


def test_hourly_durations():
    pr = _pr(years=(2001, 2012), freq="h", step="hour").isel(lat=[0, 1], lon=[0, 1])
    w = cw.ExtremesWidget(pr, n_boot=N_BOOT, export_dir="unused")
    assert [v for _, v in w.duration.options] == [1, 3, 6, 12, 24] and w.duration.value == 24
    assert w.duration.label == "24 hours"
    w.wait()
    xr.testing.assert_allclose(w.levels, _levels(pr, duration_hours=24))


def test_every_export_reaches_the_browser(setup):
    """Each button gives a download link whose bytes are the result (CSV read by plain pandas)."""
    w = setup[-1]
    import json

    for kind in ("ddf", "areal"):
        w.table_kind.value = kind
        w.wait()
        got = check_every_export(w)
        assert set(got) == {b.description for b in w.exports.children}
        # the design-depth cautions travel with the table of every kind
        meta = next(json.loads(v) for k, v in got["Table as CSV"].items() if k.endswith("-metadata.json"))
        assert all(c in json.dumps(meta, ensure_ascii=False) for c in cw.DESIGN_DEPTH_CAUTIONS)
    w.table_kind.value = "ddf"
    w.wait()


def test_design_table_follows_the_warming_and_the_chart_draws(setup):
    pr, basin, w = setup
    w.table_kind.value = "ddf"
    w.wait()
    gen = w._gen
    before = w.table.copy()
    w.delta_t.value = 2.0
    w.rate.value = 7.0
    assert w._gen == gen  # a redraw
    np.testing.assert_allclose(w.table.to_numpy(), before.to_numpy() * 1.07**2, rtol=1e-12)
    assert w.chart.value[:4] == b"\x89PNG"
    w.delta_t.value = 0.0


def test_at_site_and_regional_side_by_side(setup):
    """The point table and the regional map are those of the analysis functions
    (analyses.extremes.point_design_depths, regional_depth_field), themselves checked
    against lmoments3 and the Hosking & Wallis tables in tests/analyses and tests/compute."""
    from climwidgets.analyses.extremes import point_design_depths, regional_depth_field

    pr, basin, w = setup
    w.wait()
    assert w.point is None and w.regional is None  # fitted only once asked for
    w.table_kind.value = "point"
    w.wait()
    ci, year = w.level.value, w.year.value
    kw = dict(periods=PERIODS, ci=ci, n_boot=N_BOOT, n_sim=500, year_start=year, duration_days=w.duration.value)
    expected = point_design_depths(pr, [basin], **kw).compute()
    xr.testing.assert_allclose(w.point, expected)
    t = w.period.value
    row = w.table.loc["upper"]
    assert row["point depth, at-site [mm]"] == pytest.approx(
        float(expected["point_at_site_mm"].sel(basin="upper", return_period=t))
    )
    assert row["point depth, regional [mm]"] == pytest.approx(
        float(expected["point_regional_mm"].sel(basin="upper", return_period=t))
    )
    assert "heterogeneity H1" in w.table.columns and "H1 &gt;= 2" in w.areal_note.value
    gen = w._gen
    w.layer.value = "regional"
    assert w._gen == gen  # already fitted with the point table: a redraw
    field = regional_depth_field(pr, [basin], **kw)["estimate"].sel(period=t)
    np.testing.assert_allclose(np.asarray(w.map.mesh.get_array()).reshape(3, 3), field.values)
    w.layer.value = "estimate"
    np.testing.assert_allclose(
        np.asarray(w.map.mesh.get_array()).reshape(3, 3), w.levels["estimate"].sel(period=t).values
    )
    w.table_kind.value = "ddf"
    w.wait()
