"""report/content.py: what a basin report holds, taken from the analysis (nothing recomputed).

References: the analysis functions called directly (cw.basin_table, cw.what_if, checked
against outside sources in tests/analyses and tests/compute); hashlib for the checksums.
"""

import hashlib

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses.basins import SUMMARY_COLUMNS
from climwidgets.compute.seasonal import season_label
from climwidgets.errors import ParameterError
from climwidgets.report import content as rc


def _pr(path=None):
    rng = np.random.default_rng(0)
    time = pd.date_range("2001-01-01", "2006-12-01", freq="MS")
    lat, lon = 10.25 + 0.5 * np.arange(4), -30.25 + 0.5 * np.arange(4)
    data = 50 + 30 * rng.random((time.size, lat.size, lon.size))
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": lat, "lon": lon},
        name="pr",
        attrs={"units": "mm", "step": "month", "sources": path or "", "history": "opened for a test"},
    )


BASINS = [
    cw.Basin.from_vertices([(-30.5, 10.0), (-29.5, 10.0), (-29.5, 11.0), (-30.5, 11.0)], name="west"),
    cw.Basin.from_vertices([(-29.5, 10.5), (-28.5, 10.5), (-28.5, 12.0), (-29.5, 12.0)], name="east"),
]


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    path = tmp_path_factory.mktemp("inputs") / "pr.nc"
    path.write_bytes(b"stand-in for a NetCDF file")  # listed and checksummed, not read as data
    pr = _pr(str(path))
    content = rc.build_report_content(pr, BASINS, months=(7, 8), baseline=(2001, 2006), scenario_percent=-10.0)
    return pr, path, content


def test_sections_come_from_the_analysis(built):
    pr, _, content = built
    ds = cw.basin_table(pr, BASINS, months=(7, 8), baseline=(2001, 2006)).compute()
    assert list(content.table.columns) == list(SUMMARY_COLUMNS) and list(content.table.index) == ["west", "east"]
    np.testing.assert_allclose(content.table["seasonal_share_1"], ds["seasonal_share_1"].values)
    np.testing.assert_allclose(content.monthly_normals["west"], ds["monthly_normal"].sel(basin="west").values)
    assert list(content.monthly_normals.index) == list(range(1, 13))
    assert set(content.share_by_year.columns) == {"west", "east"}
    label = season_label((7, 8))
    assert list(content.maps) == [
        "Annual normal precipitation 2001–2006",
        f"Seasonal share ({label}) of the annual total, all complete years",
    ]
    assert content.parameters["normal period (baseline)"] == "2001–2006"
    assert content.parameters["basins"] == 2
    what = cw.what_if(pr, BASINS, months=(7, 8), percent=-10.0).compute()
    assert content.what_if is not None and content.what_if_title.endswith("-10 %")
    np.testing.assert_allclose(content.what_if["delta_volume_per_year_m3"], what["delta_volume_per_year_m3"].values)
    assert content.history == "opened for a test"


def test_inputs_carry_the_sha256_of_each_file(built):
    pr, path, content = built
    files = [i for i in content.inputs if i.kind == "file"]
    # Outside reference: hashlib (stdlib) on the file's bytes.
    assert [f.sha256 for f in files] == [hashlib.sha256(path.read_bytes()).hexdigest()]
    obj = content.inputs[-1]
    assert obj.kind == "object" and obj.name == "pr" and "variable 'pr'" in obj.detail
    assert "units mm per month" in obj.detail and "2001-01-01 to 2006-12-01" in obj.detail


def test_invented_data_notice_only_for_invented_netcdf(tmp_path):
    invented, real = tmp_path / "demo.nc", tmp_path / "obs.nc"
    xr.Dataset({"pr": ("t", [1.0])}, attrs={"institution": "none (invented demo data)"}).to_netcdf(invented)
    xr.Dataset({"pr": ("t", [1.0])}, attrs={"institution": "a survey"}).to_netcdf(real)
    assert rc.invented_data_notice([str(invented)]) == [rc.INVENTED_DATA_NOTICE]
    assert rc.invented_data_notice([str(real), "basins.geojson", str(tmp_path / "absent.nc")]) == []
    (tmp_path / "bad.nc").write_bytes(b"not netcdf")
    assert rc.invented_data_notice([str(tmp_path / "bad.nc")]) == []


def test_report_content_needs_a_table_and_picks_cautions():
    with pytest.raises(ParameterError, match="table"):
        rc.ReportContent(table={"not": "a frame"})
    plain = rc.ReportContent(table=pd.DataFrame({"mean_mm": [1.0]}))
    assert plain.cautions == ()
    volumes = rc.ReportContent(table=pd.DataFrame({"volume_m3": [1.0]}))
    assert volumes.cautions and "runoff" in volumes.cautions[0]


def test_share_years_span(built):
    _, _, content = built
    span = rc.share_years_span(content)
    assert span == (int(content.share_by_year.index.min()), int(content.share_by_year.index.max()))
    assert rc.share_years_span(rc.ReportContent(table=pd.DataFrame())) is None
