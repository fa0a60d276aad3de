"""BasinSummaryWidget: its numbers are those of cw.basin_summary, cw.normals + cw.basin_mean
and cw.scenario_delta for the same parameters."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from climwidgets.compute.normals import normals
from climwidgets.geo.aggregate import ACRE_FOOT_M3, basin_mean
from climwidgets.analyses.basins import basin_summary, scenario_delta
from climwidgets.widgets.summary import BasinSummaryWidget

from ._data import check_every_export, basins, monthly_pr


@pytest.fixture(scope="module")
def pr():
    return monthly_pr()


def test_numbers_follow_the_controls(pr, tmp_path):
    w = BasinSummaryWidget(pr, basins(), baseline=(2001, 2010), export_dir=tmp_path)
    w.wait()
    assert w.error is None, w.message.value
    pd.testing.assert_frame_equal(w.result["summary"], basin_summary(pr, basins(), baseline=(2001, 2010)))
    pd.testing.assert_frame_equal(w.result["scenario"], scenario_delta(pr, basins(), percent=5.0))
    south = basins()[0]
    assert np.allclose(w.result["normals"].sel(basin="South"),
                       basin_mean(normals(pr, baseline=(2001, 2010)), south))
    # the what-if: acre-feet are m³ / 1233.48 (international foot; 43 560 ft² × 1 ft)
    w.percent.value = -12
    w.s_first.value, w.s_last.value = 6, 9
    w.wait()
    ref = scenario_delta(pr, basins(), months=(6, 7, 8, 9), percent=-12.0)
    pd.testing.assert_frame_equal(w.result["scenario"], ref)
    row = w.scenario_table(w.result).loc["South"]
    assert row["change in volume per year [acre-ft]"] == pytest.approx(ref.loc["South", "delta_volume_per_year_m3"]
                                                                / ACRE_FOOT_M3)
    assert "acre-ft" in w.scenario_html.value
    w.baseline.value = (2003, 2011)
    w.wait()
    assert np.allclose(w.result["normals"].sel(basin="South"),
                       basin_mean(normals(pr, baseline=(2003, 2011)), south))
    w.first.value, w.last.value = 12, 2
    w.year_start.value = 10
    w.wait()
    pd.testing.assert_frame_equal(w.result["summary"], basin_summary(pr, basins(), months=(12, 1, 2),
                                                                     baseline=(2003, 2011), year_start=10))
    assert w.table.loc["North", "seasonal share [%]"] == pytest.approx(
        100 * w.result["summary"].loc["North", "seasonal_share_1"])
    assert w.chart.value[:4] == b"\x89PNG"


def test_exports(pr, tmp_path):
    w = BasinSummaryWidget(pr, basins(), baseline=(2001, 2010), export_dir=tmp_path)
    w.wait()
    for button in w.exports.children:
        button.click()
    written = sorted(p.suffix for p in tmp_path.iterdir())
    expected = {"csv": ".csv", "netcdf": ".nc", "html": ".html"}
    meta = [".json"] if "csv" in w.export_formats else []  # the CSV's metadata file
    assert written == sorted([".png"] + meta + [expected[f] for f in w.export_formats])
    assert "Traceback" not in w.message.value and w.error is None


def test_baseline_outside_the_record_is_clipped(pr):
    w = BasinSummaryWidget(pr, basins())
    assert w.baseline.value == (2001, 2012)


def test_every_export_reaches_the_browser(pr):
    w = BasinSummaryWidget(pr, basins(), baseline=(2001, 2010), export_dir="unused")
    w.wait()
    got = check_every_export(w)
    assert set(got) == {b.description for b in w.exports.children}
