"""One number everywhere: for the demo basins, the area and the seasonal share are the same in
every widget's table, the command line's CSV, the HTML report and the NetCDF export, and the
area is Basin.area_m2 (the outline on the authalic sphere)."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.cli import main
from climwidgets.report.tables import read_csv

FLOAT = 1e-12  # float precision: the same analysis, summed in another order at most


@pytest.fixture(scope="module")
def demo(demo_files):
    pr = cw.open_precip(demo_files["daily"])
    return pr, cw.Basin.from_geojson(demo_files["basins"]), demo_files


def test_area_and_share_agree_everywhere(demo, tmp_path):
    from climwidgets.widgets.drawer import BasinDrawer
    from climwidgets.widgets.seasonal import SeasonalShareWidget
    from climwidgets.widgets.summary import BasinSummaryWidget

    pr, basins, files = demo
    names = [b.name for b in basins]
    area = np.array([b.area_m2 / 1e6 for b in basins])

    # the command line: CSV and HTML report
    assert (
        main(
            [
                "--quiet",
                "summary",
                "--data",
                str(files["daily"]),
                "--basins",
                str(files["basins"]),
                "--months",
                "7,8",
                "--baseline",
                "1991-2020",
                "--out",
                str(tmp_path / "cli"),
            ]
        )
        == 0
    )
    csv = read_csv(tmp_path / "cli" / "basin_summary.csv").set_index("basin").loc[names]
    np.testing.assert_allclose(csv["area_km2"], area, rtol=FLOAT)
    share = csv["seasonal_share_1"].to_numpy()
    html = (tmp_path / "cli" / "basin_report.html").read_text()
    for a, s in zip(area, share):  # as the report formats them (analyses.meta)
        assert f"{a:,.1f}" in html and f"{100 * s:.1f}" in html
    assert "authalic" in html  # the area definition is stated

    # the widgets: summary, seasonal share, drawer
    summary = BasinSummaryWidget(pr, basins, export_dir=tmp_path / "w")
    seasonal = SeasonalShareWidget(pr, basins, export_dir=tmp_path / "w")
    drawer = BasinDrawer(pr.isel(time=0), basins, export_dir=tmp_path / "w")
    for w in (summary, seasonal, drawer):
        w.wait()
        assert w.error is None, w.message.value
    for table in (summary.table, seasonal.table):
        np.testing.assert_allclose(table.loc[names, "area [km²]"], area, rtol=FLOAT)
        np.testing.assert_allclose(table.loc[names, "seasonal share [%]"], 100 * share, rtol=FLOAT)
    np.testing.assert_allclose(drawer.table.loc[names, "area [km²]"], area, rtol=FLOAT)

    # the NetCDF export of the summary widget
    path = summary.export(summary._write_netcdf, "nc")
    with xr.open_dataset(path) as ds:
        np.testing.assert_allclose(ds["area_km2"].sel(basin=names), area, rtol=FLOAT)
        np.testing.assert_allclose(ds["seasonal_share_1"].sel(basin=names), share, rtol=FLOAT)
        assert ds["area_km2"].attrs["units"] == "km2" and "authalic" in ds["area_km2"].attrs["description"]

    # volumes are the mean depth times that one area
    np.testing.assert_allclose(csv["volume_per_year_m3"], csv["annual_mean_mm"] / 1000 * area * 1e6, rtol=FLOAT)
