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
    assert np.allclose(w.result["normals"].sel(basin="South"), basin_mean(normals(pr, baseline=(2001, 2010)), south))
    # the what-if: acre-feet are m³ / 1233.48 (international foot; 43 560 ft² × 1 ft)
    w.percent.value = -12
    w.s_first.value, w.s_last.value = 6, 9
    w.wait()
    ref = scenario_delta(pr, basins(), months=(6, 7, 8, 9), percent=-12.0)
    pd.testing.assert_frame_equal(w.result["scenario"], ref)
    row = w.scenario_table(w.result).loc["South"]
    assert row["change in volume per year [acre-ft]"] == pytest.approx(
        ref.loc["South", "delta_volume_per_year_m3"] / ACRE_FOOT_M3
    )
    assert "acre-ft" in w.scenario_html.value
    w.baseline.value = (2003, 2011)
    w.wait()
    assert np.allclose(w.result["normals"].sel(basin="South"), basin_mean(normals(pr, baseline=(2003, 2011)), south))
    w.first.value, w.last.value = 12, 2
    w.year_start.value = 10
    w.wait()
    pd.testing.assert_frame_equal(
        w.result["summary"], basin_summary(pr, basins(), months=(12, 1, 2), baseline=(2003, 2011), year_start=10)
    )
    assert w.table.loc["North", "seasonal share [%]"] == pytest.approx(
        100 * w.result["summary"].loc["North", "seasonal_share_1"]
    )
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


def test_units_menu_redraws_in_us_customary_without_computing(pr, tmp_path):
    """The Units menu shows the same numbers in inches, acre-feet and square miles (1 in =
    25.4 mm, 1 acre-ft = 1233.48183754752 m³, 1 mi² = 2.589988110336 km²: international yard
    and pound agreement 1959, NIST SP 811; from memory), map and exports alike."""
    import json
    import re

    w = BasinSummaryWidget(pr, basins(), baseline=(2001, 2010), export_dir=tmp_path)
    w.wait()
    si, result, gen = w.table.copy(), w.result, w._gen
    assert "volume per year [million m³]" in si.columns and w.units.value == "SI"
    w.units.value = "US"
    assert w._gen == gen and w.result is result  # redrawn, not recomputed
    us = w.table
    np.testing.assert_allclose(us["mean annual total [in]"], si["mean annual total [mm]"] / 25.4, rtol=1e-13)
    np.testing.assert_allclose(us["area [mi²]"], si["area [km²]"] / 2.589988110336, rtol=1e-13)
    np.testing.assert_allclose(us["volume per year [acre-ft]"], si["volume per year [acre-ft]"], rtol=1e-13)
    np.testing.assert_array_equal(us["seasonal share [%]"], si["seasonal share [%]"])
    assert "million m³" not in w.table_html.value and not re.search(r"\d\.\d+e[+-]\d", w.table_html.value)
    assert "acre-ft" in w.scenario_html.value and "million m³" not in w.scenario_html.value
    # the map's colour bar and hover read inches
    assert w.map.cbar.ax.get_ylabel().endswith("[in]") and w.map._units == "in"
    assert w.chart_figure.axes[0].get_ylabel() == "monthly normal [in]"
    # the CSV holds the numbers shown, its metadata names their units; the file name says US units
    files = w.export_files(w._write_csv, "csv")
    name = next(n for n in files if n.endswith(".csv"))
    meta = json.loads(files[name + "-metadata.json"])
    assert "us-units" in name and meta["units"]["mean annual total [in]"] == "in"
    assert meta["unit_system"].startswith("US customary") and meta["parameters"]["units"].startswith("US")
    report = next(iter(w.export_files(w._write_html, "html").values())).decode()
    assert "(in)" in report and "acre-ft" in report and "US customary" in report
    w.units.value = "SI"
    pd.testing.assert_frame_equal(w.table, si)
    assert w.map.cbar.ax.get_ylabel().endswith("[mm]")
