"""Basin tables over an ensemble (climwidgets/analyses/ensemble.py)."""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses.basins import basin_table
from climwidgets.analyses.ensemble import ensemble_basin_table
from climwidgets.analyses.meta import frame
from climwidgets.errors import ParameterError

WEST = cw.Basin.from_vertices([(-149.0, -34.0), (-147.0, -34.0), (-147.0, -32.0), (-149.0, -32.0)], name="west")
EAST = cw.Basin.from_vertices([(-147.0, -33.0), (-145.0, -33.0), (-145.0, -31.0), (-147.0, -31.0)], name="east")
FACTORS = np.array([0.8, 1.0, 1.1, 1.6])


def _members():
    lat = np.arange(-34.75, -30.0, 0.5)
    lon = np.arange(-149.75, -144.0, 0.5)
    time = pd.date_range("1991-01-01", periods=12 * 30, freq="MS")
    rng = np.random.default_rng(7)
    base = rng.gamma(2.0, 20.0, size=(time.size, lat.size, lon.size))
    data = FACTORS[:, None, None, None] * base[None]
    # a member-specific summer boost so the shares differ between members too
    summer = np.isin(time.month, (7, 8))[None, :, None, None]
    data = np.where(summer, data * (1.0 + 0.3 * np.arange(4))[:, None, None, None], data)
    return xr.DataArray(
        data,
        dims=("member", "time", "lat", "lon"),
        coords={"member": ["m1", "m2", "m3", "m4"], "time": time, "lat": lat, "lon": lon},
        attrs={"units": "mm", "step": "month", "standard_name": "lwe_thickness_of_precipitation_amount"},
    )


@pytest.fixture(scope="module")
def tables():
    pr = _members()
    table = basin_table(pr, [WEST, EAST], baseline=(1991, 2020)).compute()
    return table, ensemble_basin_table(table).compute(), ensemble_basin_table(table, spread=(0.1, 0.9)).compute()


def test_mean_and_range_equal_numpy_on_the_stacked_members(tables):
    table, ens, _ = tables
    for name in ("annual_mean_mm", "seasonal_share_1", "normal_annual_mm", "volume_per_year_m3"):
        stacked = table[name].transpose("basin", "member").values
        np.testing.assert_allclose(ens[f"{name}_mean"].values, stacked.mean(axis=1), rtol=1e-12)
        np.testing.assert_allclose(ens[f"{name}_lower"].values, stacked.min(axis=1), rtol=1e-12)
        np.testing.assert_allclose(ens[f"{name}_upper"].values, stacked.max(axis=1), rtol=1e-12)
    assert (ens["n_members"].values == 4).all()


def test_percentile_spread_equals_numpy_quantile(tables):
    table, _, ens = tables
    stacked = table["normal_annual_mm"].transpose("basin", "member").values
    # numpy.quantile's default "linear" is Hyndman & Fan (1996) type 7
    np.testing.assert_allclose(ens["normal_annual_mm_lower"].values, np.quantile(stacked, 0.1, axis=1), rtol=1e-12)
    np.testing.assert_allclose(ens["normal_annual_mm_upper"].values, np.quantile(stacked, 0.9, axis=1), rtol=1e-12)
    assert "10%" in ens["normal_annual_mm_lower"].attrs["label"]


def test_per_member_rows_equal_single_member_tables(tables):
    table, _, _ = tables
    pr = _members()
    single = basin_table(pr.sel(member="m3", drop=True).assign_attrs(pr.attrs), [WEST, EAST]).compute()
    np.testing.assert_allclose(
        table["annual_mean_mm"].sel(member="m3").values, single["annual_mean_mm"].values, rtol=1e-12
    )


def test_annual_mean_scales_with_the_known_member_factors(tables):
    # outside the summer boost every member is the base times its factor: the ratio of two
    # members' non-summer normals is the ratio of their factors (analytic)
    table, ens, _ = tables
    normal = table["monthly_normal"].sel(month=[1, 2, 3, 4, 5, 6, 9, 10, 11, 12]).sum("month")
    np.testing.assert_allclose((normal.sel(member="m4") / normal.sel(member="m2")).values, 1.6, rtol=1e-12)


def test_the_table_shows_mean_and_spread_under_the_column_labels(tables):
    _, ens, _ = tables
    shown = frame(ens, display=True)
    assert "annual normal, ensemble mean [mm]" in shown.columns
    assert "annual normal, lowest member [mm]" in shown.columns
    assert "seasonal share, highest member [%]" in shown.columns
    assert "area [km²]" in shown.columns
    assert list(shown.index) == ["west", "east"]


def test_errors():
    ds = xr.Dataset({"a": ("basin", [1.0])}, coords={"basin": ["x"]})
    with pytest.raises(ParameterError, match="member"):
        ensemble_basin_table(ds)
    table = xr.Dataset({"a": (("basin", "member"), [[1.0, 2.0]])}, coords={"basin": ["x"], "member": ["p", "q"]})
    with pytest.raises(ParameterError, match="spread"):
        ensemble_basin_table(table, spread=(0.9, 0.1))


# ------------------------------------------------------------------ member_view
from climwidgets.analyses.ensemble import member_choices, member_view  # noqa: E402
from climwidgets.analyses.meta import describe  # noqa: E402


def _three():
    # hand-made: three members at two cells, one missing value
    values = np.array([[1.0, 10.0], [4.0, np.nan], [7.0, 16.0]])
    return xr.DataArray(
        values,
        dims=("member", "cell"),
        coords={"member": ["r1", "r2", "r3"]},
        name="depth",
        attrs={"units": "mm", "long_name": "depth"},
    )


def test_member_view_by_hand():
    da = _three()
    np.testing.assert_array_equal(member_view(da, "r2").values, [4.0, np.nan])
    # mean by hand: (1 + 4 + 7) / 3 = 4; the missing member is left out: (10 + 16) / 2 = 13
    np.testing.assert_allclose(member_view(da, "mean").values, [4.0, 13.0])
    # spread by hand: highest minus lowest member, 7 - 1 = 6 and 16 - 10 = 6
    np.testing.assert_allclose(member_view(da, "spread").values, [6.0, 6.0])
    assert "member" not in member_view(da, "spread").dims
    assert member_view(da, "spread").attrs["units"] == "mm"
    assert member_view(da, "mean").attrs["long_name"] == "depth, ensemble mean"
    assert member_view(da, "r2").attrs["long_name"] == "depth"
    assert member_view(da, "r2").attrs["ensemble_member"] == "member r2"
    assert "member_view" in member_view(da, "mean").attrs["history"]
    assert member_choices(da) == ["r1", "r2", "r3", "mean", "spread"]


def test_member_view_equals_numpy_on_the_basin_table(tables):
    table, _, _ = tables
    stacked = table["seasonal_share_1"].transpose("basin", "member").values
    spread = member_view(table, "spread")
    np.testing.assert_allclose(spread["seasonal_share_1"].values, np.ptp(stacked, axis=1), rtol=1e-12)
    np.testing.assert_allclose(member_view(table, "mean")["seasonal_share_1"].values, stacked.mean(axis=1), rtol=1e-12)
    np.testing.assert_array_equal(
        member_view(table, "m3")["seasonal_share_1"].values, table["seasonal_share_1"].sel(member="m3").values
    )
    # the area has no member dimension: kept as it is, not a spread of zero
    np.testing.assert_array_equal(spread["area_km2"].values, table["area_km2"].values)
    assert spread["seasonal_share_1"].attrs["label"] == "seasonal share, spread between members"
    assert spread["seasonal_share_1"].attrs["display_units"] == "%"
    assert "seasonal share, ensemble mean [%]" in frame(member_view(table, "mean"), display=True).columns


def test_member_view_stays_lazy_and_skips_labels():
    da = _three().chunk({"member": 1})
    mean = member_view(da, "mean")
    assert mean.chunks is not None
    np.testing.assert_allclose(mean.values, [4.0, 13.0])
    ds = xr.Dataset({"depth": _three(), "label": (("member",), np.array(["dry", "wet", "wet"]))})
    out = member_view(ds, "mean")
    assert "label" not in out and "depth" in out
    assert str(member_view(ds, "r3")["label"].values) == "wet"
    # positions stand for labels when the dimension has no coordinate
    plain = _three().drop_vars("member")
    np.testing.assert_array_equal(member_view(plain, 2).values, [7.0, 16.0])


def test_member_view_errors():
    da = _three()
    with pytest.raises(ParameterError, match="not a member"):
        member_view(da, "r9")
    with pytest.raises(ParameterError, match="member"):
        member_view(da.isel(member=0), "mean")
    with pytest.raises(ParameterError, match="not numbers"):
        member_view(xr.DataArray(np.array(["a", "b"]), dims="member"), "spread")
    named = describe(da, "annual_mean_mm")
    assert member_view(named, "mean").attrs["label"] == "mean annual total, ensemble mean"
