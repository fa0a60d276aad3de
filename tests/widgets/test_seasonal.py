"""SeasonalShareWidget: every control gives the numbers of cw.seasonal_fraction / cw.trend."""

from __future__ import annotations

import io
import json
from datetime import date

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets.compute.seasonal import seasonal_fraction
from climwidgets.compute.trend import trend
from climwidgets.errors import ParameterError
from climwidgets.geo.aggregate import basin_mean
from climwidgets.widgets.seasonal import SeasonalShareWidget, season_months

from ._data import basins, check_every_export, click, monthly_pr


@pytest.fixture(scope="module")
def pr():
    return monthly_pr()


@pytest.fixture(scope="module")
def widget(pr, tmp_path_factory):
    w = SeasonalShareWidget(pr, basins(), export_dir=tmp_path_factory.mktemp("exports"))
    w.wait()
    return w


def _check(w, pr, months, how="ratio_of_sums", years=None, year_start=1):
    w.wait()
    assert w.error is None, w.message.value
    share = seasonal_fraction(pr, months=months, how=how, years=years, year_start=year_start)
    xr.testing.assert_allclose(w.result["share"].reset_coords(drop=True), share.reset_coords(drop=True), rtol=1e-6)
    for b in w.basins:
        series = basin_mean(pr, b)
        one = seasonal_fraction(series, months=months, how=how, years=years, year_start=year_start)
        per = seasonal_fraction(series, months=months, years=years, year_start=year_start, per_year=True)
        assert float(w.result["basin_share"].sel(basin=b.name)) == pytest.approx(float(one), rel=1e-9)
        assert float(w.result["slope"].sel(basin=b.name)) == pytest.approx(float(trend(per)["slope"]), rel=1e-9)
        shown = w.table.loc[b.name, "seasonal share [%]"]
        assert shown == pytest.approx(100 * float(one), rel=1e-9)


def test_season_months_wrap():
    assert season_months(7, 8) == (7, 8)
    assert season_months(11, 3) == (11, 12, 1, 2, 3)
    assert season_months(5, 5) == (5,)


def test_default_is_july_august(widget, pr):
    _check(widget, pr, (7, 8))
    assert widget.chart.value[:4] == b"\x89PNG"
    assert "seasonal share" in widget.map.cbar.ax.get_ylabel()


def test_each_control_updates_the_result(widget, pr):
    widget.first.value, widget.last.value = 11, 3  # over the new year
    _check(widget, pr, (11, 12, 1, 2, 3))
    assert "over the new year" in widget.season_note.value
    widget.how.value = "mean_of_ratios"
    _check(widget, pr, (11, 12, 1, 2, 3), how="mean_of_ratios")
    widget.years.value = (2004, 2010)
    _check(widget, pr, (11, 12, 1, 2, 3), how="mean_of_ratios", years=(2004, 2010))
    widget.year_start.value = 10
    _check(widget, pr, (11, 12, 1, 2, 3), how="mean_of_ratios", years=(2004, 2010), year_start=10)
    widget.chart_basin.value = "North"
    widget.wait()
    assert widget.chart.value[:4] == b"\x89PNG"
    with widget.quiet():
        widget.first.value, widget.last.value, widget.how.value = 7, 8, "ratio_of_sums"
        widget.years.value, widget.year_start.value = (2001, 2012), 1
    widget.refresh()
    _check(widget, pr, (7, 8))


def test_bad_years_for_a_wrapping_season_is_a_message(pr):
    w = SeasonalShareWidget(pr, basins())
    w.wait()
    w.first.value, w.last.value = 11, 3  # season years are labelled 2002..2012: 2001 has none
    w.wait()
    w.years.value = (2001, 2005)
    w.wait()
    assert isinstance(w.error, ParameterError)
    assert "years=(2001, 2005)" in w.message.value and "Traceback" not in w.message.value


def test_whole_year_season_is_refused(pr):
    w = SeasonalShareWidget(pr)
    w.wait()
    w.first.value, w.last.value = 1, 12
    assert isinstance(w.error, ParameterError) and "whole year" in w.message.value


def test_drawn_basin_gets_a_row(pr):
    w = SeasonalShareWidget(pr)
    w.wait()
    assert len(w.table) == 0
    w.tools.draw.value = True
    for lon, lat in [(-29.9, 10.1), (-28.1, 10.1), (-28.1, 11.4), (-29.9, 11.4)]:
        click(w.map, lon, lat)
    w.tools.name.value = "Drawn"
    w.tools.close.click()
    w.wait()
    assert list(w.table.index) == ["Drawn"] and w.chart_basin.value == "Drawn"
    _check(w, pr, (7, 8))


def test_dask_input_same_numbers(pr):
    w = SeasonalShareWidget(pr.chunk({"time": 24}), basins())
    w.wait()
    _check(w, pr, (7, 8))


def test_exports(widget, tmp_path):
    widget.export_dir = tmp_path
    widget.save_copies = True
    for button in widget.exports.children:
        button.click()
    day = date.today().strftime("%Y%m%d")
    tag = "jul-aug_3-basins" if len(widget.basin_set) == 3 else None
    names = sorted(p.name for p in tmp_path.iterdir())
    assert len(names) == 5 and all(n.endswith(("csv", "png", "json")) and day in n for n in names)
    if tag:
        assert all(tag in n for n in names)
    per_year = next(
        p for p in tmp_path.iterdir() if p.name.startswith("seasonal_share_per_year") and p.suffix == ".csv"
    )
    assert np.isfinite(pd.read_csv(per_year).iloc[:, 1]).all()


def test_every_export_reaches_the_browser(widget):
    got = check_every_export(widget)
    assert set(got) == {b.description for b in widget.exports.children}
    per_year = next(v for k, v in got.items() if "Per-year" in k)
    name = next(n for n in per_year if n.endswith(".csv"))
    back = pd.read_csv(io.BytesIO(per_year[name]), index_col=0)
    expected = (100 * widget.result["per_year"]).to_pandas().T
    np.testing.assert_allclose(back.to_numpy(), expected.to_numpy(), atol=1e-4)
    meta = json.loads(per_year[name + "-metadata.json"])
    assert meta["parameters"]["months"] == list(widget.parameters()["months"])


def test_typed_years_set_the_slider_and_compute_once(widget, pr):
    widget.wait()
    gen = widget._gen
    widget.years_first.value = 2003  # typed: one change of the slider, one computation
    assert widget.years.value == (2003, 2012) and widget._gen == gen + 1
    _check(widget, pr, (7, 8), years=(2003, 2012))
    widget.years.value = (2002, 2009)  # the slider rewrites both boxes without a second run
    assert (widget.years_first.value, widget.years_last.value) == (2002, 2009) and widget._gen == gen + 2
    widget.years_last.value = 2001  # typed before the first year: the range is swapped, not refused
    assert widget.years.value == (2001, 2002) and widget._gen == gen + 3
    widget.years.value = (2001, 2012)
    _check(widget, pr, (7, 8))
