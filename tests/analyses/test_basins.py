"""Basin table, summary and seasonal what-if (climwidgets/analyses/basins.py)."""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.errors import ParameterError

# Two box basins aligned with the 0.5° cells, so their weights are whole cells and the
# expected numbers follow from the cell-area formula A ∝ Δλ·(sin φ2 − sin φ1).
WEST = cw.Basin.from_vertices([(-149.0, -34.0), (-147.0, -34.0), (-147.0, -32.0), (-149.0, -32.0)], name="west")
EAST = cw.Basin.from_vertices([(-147.0, -33.0), (-145.0, -33.0), (-145.0, -31.0), (-147.0, -31.0)], name="east")
YEARS = np.arange(1991, 2023)


def _pr():
    lat = np.arange(-34.75, -30.0, 0.5)
    lon = np.arange(-149.75, -144.0, 0.5)
    time = pd.date_range("1991-01-01", periods=12 * YEARS.size, freq="MS")
    month = time.month.values
    year = time.year.values
    # Base 10 mm a month, July-August 40 mm scaled by a cell factor (wetter eastwards),
    # and the last year 1.5 times wetter.
    factor = 1.0 + 0.2 * np.arange(lon.size)[None, :] + 0.0 * lat[:, None]
    summer = np.isin(month, (7, 8))[:, None, None]
    data = np.where(summer, 40.0 * factor[None], 10.0) * np.where(year == 2022, 1.5, 1.0)[:, None, None]
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "month", "standard_name": "lwe_thickness_of_precipitation_amount"},
    )


def _expected(pr, basin):
    """Area-weighted sums over the basin's whole cells, written out with numpy."""
    w0, s0, e0, n0 = basin.bounds
    sub = pr.sel(lat=slice(s0, n0), lon=slice(w0, e0))
    lat = np.radians(sub.lat.values)
    w = (np.sin(lat + np.radians(0.25)) - np.sin(lat - np.radians(0.25)))[:, None] * np.ones(sub.lon.size)
    factor = 1.0 + 0.2 * ((sub.lon.values + 149.75) / 0.5)
    summer = (w * 80.0 * factor).sum() / w.sum()
    annual = 100.0 + summer
    area = (6_371_007.2**2 * np.radians(0.5) * w).sum()
    return annual, summer, area


def test_summary_table_against_hand_sums():
    pr = _pr()
    table = cw.basin_summary(pr, [WEST, EAST], months=(7, 8), baseline=(1991, 2020))
    assert list(table.index) == ["west", "east"]
    for basin in (WEST, EAST):
        row = table.loc[basin.name]
        annual, summer, area = _expected(pr, basin)
        mean_annual = (31 * annual + 1.5 * annual) / 32
        np.testing.assert_allclose(row["area_km2"], area / 1e6, rtol=1e-12)
        np.testing.assert_allclose(row["annual_mean_mm"], mean_annual, rtol=1e-12)
        np.testing.assert_allclose(row["seasonal_share_1"], summer / annual, rtol=1e-12)
        np.testing.assert_allclose(row["normal_annual_mm"], annual, rtol=1e-12)
        np.testing.assert_allclose(row["volume_per_year_m3"], mean_annual / 1000 * area, rtol=1e-12)
        # acre-foot = 43 560 ft² × 0.3048³ m³/ft³ (international foot; QUDT unit:AC-FT)
        np.testing.assert_allclose(
            row["volume_per_year_acre_ft"], mean_annual / 1000 * area / 1233.48183754752, rtol=1e-12
        )
        assert row["latest_year"] == 2022 and row["n_years"] == 32
        np.testing.assert_allclose(row["latest_year_percent_of_normal"], 150.0, rtol=1e-12)
        assert row["data_coverage_1"] == 1.0
    # The eastern basin sits on wetter cells: a larger summer share.
    assert table.loc["east", "seasonal_share_1"] > table.loc["west", "seasonal_share_1"]


def test_summary_on_dask_matches_and_reports_coverage():
    pr = _pr()
    data = pr.values.copy()
    data[:, 2, 3] = np.nan  # one cell inside the west basin never has data
    pr = pr.copy(data=data)
    eager = cw.basin_summary(pr, WEST)
    lazy = cw.basin_summary(pr.chunk({"time": 120, "lat": 5, "lon": 6}), [WEST])
    pd.testing.assert_frame_equal(eager, lazy, rtol=1e-12)
    assert 0.9 < eager.loc["west", "data_coverage_1"] < 1.0


def test_summary_errors():
    with pytest.raises(ParameterError, match="non-empty list of Basin"):
        cw.basin_summary(_pr(), [])


def test_scenario_delta():
    pr = _pr()
    out = cw.scenario_delta(pr, [WEST, EAST], months=(11, 12, 1, 2, 3), percent=5.0)
    for basin in (WEST, EAST):
        _, _, area = _expected(pr, basin)
        row = out.loc[basin.name]
        # Nov-Mar seasons complete from Nov 1991-Mar 1992 to Nov 2021-Mar 2022 (31 seasons);
        # the last one has its Jan-Mar in the wetter 2022: (30 × 50 + (20 + 45)) / 31 mm.
        seasonal_mm = (30 * 50.0 + 65.0) / 31
        assert row["n_seasons"] == 31
        np.testing.assert_allclose(row["seasonal_volume_per_year_m3"], seasonal_mm / 1000 * area, rtol=1e-12)
        np.testing.assert_allclose(row["delta_volume_per_year_m3"], 0.05 * seasonal_mm / 1000 * area, rtol=1e-12)
        np.testing.assert_allclose(
            row["delta_volume_per_year_acre_ft"], 0.05 * seasonal_mm / 1000 * area / 1233.48183754752, rtol=1e-12
        )
    with pytest.raises(ParameterError, match="percent=-150.0 is not a usable change"):
        cw.scenario_delta(pr, WEST, percent=-150)


def test_summary_with_cftime_noleap_calendar():
    pr = _pr()
    time = xr.date_range("1991-01-01", periods=pr.sizes["time"], freq="MS", calendar="noleap", use_cftime=True)
    table = cw.basin_summary(pr.assign_coords(time=time), EAST)
    annual, summer, _ = _expected(pr, EAST)
    np.testing.assert_allclose(table.loc["east", "seasonal_share_1"], summer / annual, rtol=1e-12)
    np.testing.assert_allclose(table.loc["east", "latest_year_percent_of_normal"], 150.0, rtol=1e-12)
    assert "basin_summary" in table.attrs["history"]


def test_a_member_dimension_passes_through_as_an_index_level():
    pr = _pr()
    members = xr.concat([pr, 2.0 * pr], dim="member").assign_coords(member=["a", "b"])
    members.attrs = pr.attrs
    table = cw.basin_summary(members, [WEST, EAST])
    assert table.index.names == ["basin", "member"]
    single = cw.basin_summary(pr, [WEST, EAST])
    np.testing.assert_allclose(table.xs("a", level="member")["annual_mean_mm"], single["annual_mean_mm"], rtol=1e-12)
    np.testing.assert_allclose(
        table.xs("b", level="member")["annual_mean_mm"], 2 * single["annual_mean_mm"], rtol=1e-12
    )
    # the share does not change when every month doubles
    np.testing.assert_allclose(
        table.xs("b", level="member")["seasonal_share_1"], single["seasonal_share_1"], rtol=1e-12
    )


def test_field_means_of_whole_cells_follow_the_cell_area_formula():
    """Mean of a map over whole 0.5° cells: weights Δλ·(sin φ2 − sin φ1), written out with numpy."""
    from climwidgets.analyses.basins import field_means

    pr = _pr()
    field = pr.isel(time=6).drop_vars("time").assign_attrs(units="mm")
    ds = field_means(field, [WEST, EAST])
    for basin in (WEST, EAST):
        w0, s0, e0, n0 = basin.bounds
        sub = field.sel(lat=slice(s0, n0), lon=slice(w0, e0))
        lat = np.radians(sub.lat.values)
        w = (np.sin(lat + np.radians(0.25)) - np.sin(lat - np.radians(0.25)))[:, None] * np.ones(sub.lon.size)
        expected = float((w * sub.values).sum() / w.sum())
        assert float(ds["mean"].sel(basin=basin.name)) == pytest.approx(expected, rel=1e-12)
        assert float(ds["area_km2"].sel(basin=basin.name)) == pytest.approx(basin.area_m2 / 1e6)
    assert ds["mean"].attrs["units"] == "mm" and ds["area_km2"].attrs["label"] == "area"


def test_summary_maps_and_share_map_are_the_public_functions():
    from climwidgets.analyses.basins import share_map, summary_maps

    pr = _pr()
    maps = summary_maps(pr, months=(7, 8), baseline=(1991, 2020))
    xr.testing.assert_allclose(
        maps["seasonal_share_map"], cw.seasonal_fraction(pr, months=(7, 8)).reset_coords(drop=True)
    )
    xr.testing.assert_allclose(
        maps["annual_normal_map"],
        cw.normals(pr, baseline=(1991, 2020)).sum("month", skipna=False).reset_coords(drop=True),
    )
    xr.testing.assert_allclose(
        share_map(pr, months=(7, 8), how="mean_of_ratios"),
        cw.seasonal_fraction(pr, months=(7, 8), how="mean_of_ratios"),
    )
