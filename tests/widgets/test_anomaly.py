"""AnomalyWidget: each control gives the numbers of the public compute function.

The widget holds no science, so the reference for every check is the public function
called directly with the same parameters (cw.anomaly, cw.spi, cw.spi_category,
cw.basin_mean); those functions are checked against outside sources in tests/compute.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.widgets.anomaly import season_months, step_labels
from ._data import check_every_export

pytest.importorskip("ipympl")


def _pr(years=(2001, 2012), seed=1):
    rng = np.random.default_rng(seed)
    time = pd.date_range(f"{years[0]}-01-01", f"{years[1]}-12-01", freq="MS")
    lat = np.arange(10.125, 11.0, 0.25)
    lon = np.arange(-30.125, -28.9, 0.25)
    data = rng.gamma(2.0, 30.0, size=(time.size, lat.size, lon.size))
    return xr.DataArray(
        data,
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm", "step": "month"},
    )


BASE = (2002, 2011)  # inside the complete water years of the record


@pytest.fixture(scope="module")
def setup():
    pr = _pr()
    basin = cw.Basin.from_vertices([(-30.2, 10.0), (-29.5, 10.0), (-29.5, 10.7), (-30.2, 10.7)], name="west")
    w = cw.AnomalyWidget(pr, basins=[basin], baseline=BASE, export_dir="unused")
    w.wait()
    return pr, basin, w


def test_default_is_percent_of_monthly_normal(setup):
    pr, basin, w = setup
    assert w.error is None
    base = BASE
    xr.testing.assert_allclose(w.result, cw.anomaly(pr, baseline=base, kind="percent", period="month"))
    expected = cw.anomaly(cw.basin_mean(pr, basin), baseline=base, kind="percent", period="month")
    np.testing.assert_allclose(w.basin_series["west"].to_numpy(), expected.values)
    assert w.step.value == "2012-12" and len(w.step.options) == 144


@pytest.mark.parametrize("kind", ["absolute", "standardized", "percent"])
def test_kind_and_period(setup, kind):
    pr, basin, w = setup
    w.kind.value = kind
    w.period.value = "water_year"
    w.wait()
    xr.testing.assert_allclose(w.result, cw.anomaly(pr, baseline=BASE, kind=kind, period="water_year"))
    assert w.step.options[-1] == "2012"  # water years are labelled by the year they end
    w.period.value = "month"
    w.wait()


def test_season_wraps_over_year_end(setup):
    pr, basin, w = setup
    assert season_months(12, 2) == (12, 1, 2) and season_months(7, 8) == (7, 8)
    w.kind.value = "percent"
    w.period.value = "season"
    w.season_from.value, w.season_to.value = 11, 3
    w.wait()
    expected = cw.anomaly(pr, baseline=BASE, kind="percent", period="season", months=(11, 12, 1, 2, 3))
    xr.testing.assert_allclose(w.result, expected)
    w.period.value = "month"
    w.wait()


def test_spi_scale_and_classes(setup):
    pr, basin, w = setup
    w.kind.value = "spi"
    w.scale.value = 6
    w.baseline.value = (2002, 2011)
    w.wait()
    xr.testing.assert_allclose(w.result, cw.spi(pr, scale=6, baseline=(2002, 2011)))
    series = cw.spi(cw.basin_mean(pr, basin), scale=6, baseline=(2002, 2011))
    w.step.value = "2010-07"
    row = w.table.loc["west"]
    assert row["SPI class"] == str(cw.spi_category(series).sel(time="2010-07-01").item())
    np.testing.assert_allclose(row["2010-07 [standard deviations]"], float(series.sel(time="2010-07-01")))
    assert w.period.disabled and not w.scale.disabled
    w.kind.value = "percent"
    w.baseline.value = BASE
    w.wait()


def test_time_step_redraws_without_recomputing(setup):
    pr, basin, w = setup
    gen = w._gen
    w.step.value = "2005-03"
    assert w._gen == gen  # no new computation
    np.testing.assert_allclose(
        np.asarray(w.map.mesh.get_array()).reshape(w.result.shape[1:]), w.result.sel(time="2005-03-01").values
    )
    assert w.map.cbar.ax.get_ylabel().endswith("[%]")
    lo, hi = w.map.mesh.get_clim()
    assert lo + hi == pytest.approx(200.0)  # centred on 100 % of normal


def test_bad_baseline_is_a_message(setup):
    pr, basin, w = setup
    before = w.result
    w.baseline.value = (2005, 2005)
    assert isinstance(w.error, cw.InputError)
    assert "single year" in w.message.value and "Traceback" not in w.message.value
    assert w.result is before
    w.baseline.value = BASE
    w.wait()
    assert w.error is None


def test_without_basins_uses_whole_grid():
    pr = _pr((2001, 2010), seed=3)
    w = cw.AnomalyWidget(pr, export_dir="unused")
    w.wait()
    assert list(w.basin_series.columns) == ["whole grid"]
    # the whole grid's area-weighted mean (cell areas from cw.cell_area)
    area = cw.cell_area(pr)
    mean = (pr * area).sum(("lat", "lon")) / area.sum()
    mean.attrs = pr.attrs
    expected = cw.anomaly(mean, baseline=(2001, 2010), kind="percent")
    np.testing.assert_allclose(w.basin_series["whole grid"].to_numpy(), expected.values, rtol=1e-9)
    assert step_labels(w.result)[0] == "2001-01"


def test_every_export_reaches_the_browser(setup):
    """Each button gives a download link whose bytes are the result (CSV read by plain pandas)."""
    w = setup[-1]
    got = check_every_export(w)
    assert set(got) == {b.description for b in w.exports.children}


def test_chart_shows_one_basin_or_all_without_recomputing(setup):
    pr, basin, w = setup
    assert [v for _, v in w.chart_basin.options] == [None, "west"]
    gen = w._gen
    w.chart_basin.value = "west"
    assert w._gen == gen  # a redraw only
    lines = [ln for ln in w.chart_figure.axes[0].get_lines() if ln.get_label() == "west"]
    assert len(lines) == 1
    np.testing.assert_allclose(lines[0].get_ydata(), w.basin_series["west"].to_numpy(dtype=float))
    w.chart_basin.value = None


def test_typed_step_and_buttons_move_the_map_without_recomputing(setup):
    pr, basin, w = setup
    w.wait()
    gen = w._gen
    w.step_box.value = "2010-07"
    assert w.step.value == "2010-07" and w._gen == gen  # a redraw, no computation
    np.testing.assert_allclose(w.map.mesh.get_array().ravel(), w.result.isel(time=114).values.ravel())
    w.step_prev.click()
    assert w.step.value == "2010-06" and w.step_box.value == "2010-06"
    w.step_next.click()
    w.step_next.click()
    assert w.step.value == "2010-08"
    w.step_box.value = "1890-01"  # not in the record: the slider stays, the note says why
    assert w.step.value == "2010-08" and "2001-01 to 2012-12" in w.step_note.value
    w.step_box.value = "2012-12"
    assert w.step.value == "2012-12" and w.step_note.value == ""
    assert w._gen == gen


def test_typed_baseline_years_compute_once(setup):
    pr, basin, w = setup
    w.wait()
    gen = w._gen
    w.baseline_first.value = 2003
    assert w.baseline.value == (2003, 2011) and w._gen == gen + 1
    w.wait()
    xr.testing.assert_allclose(
        w.result, cw.anomaly(pr, baseline=(2003, 2011), kind=w.kind.value, period=w.period.value)
    )
    w.baseline.value = BASE
    assert (w.baseline_first.value, w.baseline_last.value) == BASE and w._gen == gen + 2
    w.wait()
