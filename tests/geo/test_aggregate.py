"""Basin means and volumes (climwidgets/geo/aggregate.py)."""

from fractions import Fraction

import dask.array
import numpy as np
import pytest

import climwidgets as cw
from climwidgets.errors import MismatchError, ParameterError, UnitsError

from ._grids import rect_grid, rotated_grid

BASIN = cw.Basin.from_vertices([(-149.3, -34.2), (-146.1, -33.9), (-145.6, -31.2), (-148.8, -30.9)], name="b1")


def _weighted_area(basin, grid):
    return float((cw.cell_area(grid) * cw.coverage_weights(basin, grid)).sum())


def test_acre_foot_factor_is_exact():
    # 1 acre-foot = 43 560 ft² × 1 ft with the international foot 0.3048 m (1959 agreement,
    # from memory); QUDT unit:AC-FT conversion multiplier 1233.4818375475202.
    assert Fraction(cw.ACRE_FOOT_M3) == pytest.approx(Fraction(43560) * Fraction("0.3048") ** 3, rel=1e-15)
    np.testing.assert_allclose(cw.ACRE_FOOT_M3, 1233.4818375475202, rtol=1e-15)


def test_uniform_field_mean_and_volume():
    pr = rect_grid(-35, -30, -150, -144, 0.25, ntime=3, value=10.0)
    mean = cw.basin_mean(pr, BASIN)
    np.testing.assert_allclose(mean.values, 10.0, rtol=1e-12)
    assert mean.dims == ("time",) and mean.attrs["units"] == "mm"
    np.testing.assert_array_equal(mean.covered_fraction.values, 1.0)
    vol = cw.basin_volume(pr, BASIN)
    # 10 mm = 0.01 m of water over the basin area (definition of depth × area); the one basin
    # area is the outline's on the authalic sphere (Basin.area_m2).
    np.testing.assert_allclose(vol.values, 0.01 * BASIN.area_m2, rtol=1e-12)
    assert vol.attrs["units"] == "m3" and "history" in vol.attrs
    # Σ cell area × coverage (planar lon/lat coverage) is that area to a few parts in 1e6
    np.testing.assert_allclose(_weighted_area(BASIN, pr), BASIN.area_m2, rtol=1e-5)
    af = cw.basin_volume(pr, BASIN, units="acre-ft")
    np.testing.assert_allclose(af.values, 0.01 * BASIN.area_m2 / 1233.48183754752, rtol=1e-12)
    assert af.attrs["units"] == "acre-ft"


def test_mean_of_linear_field_is_area_weighted():
    # Second line of checks: a field equal to latitude, aligned box basin, explicit sums.
    pr = rect_grid(-35, -30, -150, -144, 0.5)
    pr = pr.copy(data=np.broadcast_to(pr.lat.values[:, None], pr.shape).copy())
    box = cw.Basin.from_vertices([(-149, -34), (-146, -34), (-146, -31), (-149, -31)])
    sel = pr.sel(lat=slice(-34, -31), lon=slice(-149, -146))
    lat = np.radians(sel.lat.values)
    w = np.sin(lat + np.radians(0.25)) - np.sin(lat - np.radians(0.25))  # R²Δλ(sin φ2 − sin φ1)
    np.testing.assert_allclose(float(cw.basin_mean(pr, box)), np.sum(sel.lat.values * w) / w.sum(), rtol=1e-12)


def test_missing_cells_are_left_out_per_slice():
    pr = rect_grid(-35, -30, -150, -144, 0.5, ntime=3, value=4.0)
    box = cw.Basin.from_vertices([(-149, -34), (-146, -34), (-146, -31), (-149, -31)])
    data = pr.values.copy()
    data[1, 4, 4] = np.nan  # a covered cell missing in the second month
    data[1, 2:8, 2:8] = np.where(np.isnan(data[1, 2:8, 2:8]), np.nan, 6.0)
    data[2] = np.nan  # a whole month missing
    pr = pr.copy(data=data)
    mean = cw.basin_mean(pr, box)
    np.testing.assert_allclose(mean.values[:2], [4.0, 6.0])
    assert np.isnan(mean.values[2])
    cov = mean.covered_fraction.values
    assert cov[0] == 1.0 and 0.95 < cov[1] < 1.0 and cov[2] == 0.0
    vol = cw.basin_volume(pr, box)
    np.testing.assert_allclose(vol.values[1], 0.006 * _weighted_area(box, pr), rtol=1e-12)


def test_dask_input_stays_lazy_and_agrees():
    pr = rect_grid(-35, -30, -150, -144, 0.25, ntime=4, value=1.0)
    rng = np.random.default_rng(3)
    pr = pr.copy(data=rng.gamma(2.0, 20.0, pr.shape))
    lazy = pr.chunk({"time": 2, "lat": 8, "lon": 8})
    for func in (cw.basin_mean, cw.basin_volume):
        eager, out = func(pr, BASIN), func(lazy, BASIN)
        assert isinstance(out.data, dask.array.Array)
        np.testing.assert_allclose(out.values, eager.values, rtol=1e-12)


def test_curvilinear_field():
    grid = rotated_grid()
    pr = grid.copy(data=np.full(grid.shape, 3.0)).assign_attrs(units="mm")
    basin = cw.Basin.from_vertices([(-141, -28), (-139, -28.5), (-139.5, -26), (-141.2, -26.3)])
    np.testing.assert_allclose(float(cw.basin_mean(pr, basin)), 3.0)
    np.testing.assert_allclose(float(cw.basin_volume(pr, basin)), 0.003 * basin.area_m2, rtol=1e-12)


def test_precomputed_weights_and_errors():
    pr = rect_grid(-35, -30, -150, -144, 0.5, ntime=2, value=2.0)
    w = cw.coverage_weights(BASIN, pr)
    np.testing.assert_allclose(cw.basin_mean(pr, None, weights=w).values, cw.basin_mean(pr, BASIN).values)
    with pytest.raises(MismatchError, match="weights have dims"):
        cw.basin_mean(pr, None, weights=w.isel(lat=slice(1, None)))
    with pytest.raises(UnitsError, match="units are 'mm/day'.*Fix: convert to a depth in mm"):
        cw.basin_volume(pr.assign_attrs(units="mm/day"), BASIN)
    with pytest.raises(ParameterError, match="units='gallons' is not supported.*'acre-ft'"):
        cw.basin_volume(pr, BASIN, units="gallons")
    with pytest.raises(ParameterError, match="needs a DataArray"):
        cw.basin_mean(pr.to_dataset(name="pr"), BASIN)


def test_basin_means_equal_basin_mean_of_each_basin():
    pr = rect_grid(-35, -30, -150, -144, 0.25, ntime=3, value=10.0)
    pr = pr + pr["lat"] * 0.1 + pr["lon"] * 0.01  # a field that varies across the basins
    pr.attrs["units"] = "mm"
    other = cw.Basin.from_vertices([(-146.0, -34.5), (-144.5, -34.5), (-145.0, -32.0)], name="b2")
    from climwidgets.geo.aggregate import basin_means

    both = basin_means(pr, [BASIN, other])
    for b in (BASIN, other):
        one = cw.basin_mean(pr, b)
        np.testing.assert_allclose(both.sel(basin=b.name).values, one.values, rtol=1e-12)
        np.testing.assert_allclose(both["covered_fraction"].sel(basin=b.name).values, one["covered_fraction"].values)


# ---- ensemble members, CF names, depth units


def _members(grid):
    rng = np.random.default_rng(5)
    data = rng.gamma(2.0, 3.0, (2,) + grid.shape)
    data[(1,) + (0,) * (grid.ndim - 2) + (3, 4)] = np.nan  # one missing cell in one member
    return grid.expand_dims(member=["a", "b"]).copy(data=data).assign_attrs(units="mm")


@pytest.mark.parametrize(
    "make",
    [lambda: rect_grid(-35, -30, -150, -144, 0.25, ntime=3, value=1.0), lambda: rotated_grid(lat0=-35.0, lon0=-150.0)],
)
def test_members_equal_per_member_basin_means_and_volumes(make):
    field = _members(make())
    for f in (cw.basin_mean, cw.basin_volume):
        together = f(field, BASIN)
        assert together.dims[0] == "member"
        for m in ("a", "b"):
            alone = f(field.sel(member=m, drop=True), BASIN)
            np.testing.assert_allclose(together.sel(member=m).values, alone.values, rtol=1e-12)
            np.testing.assert_allclose(
                together.covered_fraction.sel(member=m).values, alone.covered_fraction.values, rtol=1e-12
            )
    lazy = cw.basin_mean(field.chunk({"member": 1}), BASIN)
    assert isinstance(lazy.data, dask.array.Array)
    np.testing.assert_allclose(lazy.values, cw.basin_mean(field, BASIN).values, rtol=1e-12)


def test_cf_names_and_depth_units():
    pr = rect_grid(-35, -30, -150, -144, 0.25, ntime=2, value=10.0)
    cf = pr.rename(lat="latitude", lon="longitude")
    np.testing.assert_allclose(cw.basin_mean(cf, BASIN).values, cw.basin_mean(pr, BASIN).values)
    in_cm = (pr / 10.0).assign_attrs(units="cm")
    np.testing.assert_allclose(cw.basin_volume(in_cm, BASIN).values, cw.basin_volume(pr, BASIN).values, rtol=1e-12)
    import xarray as xr

    with xr.set_options(keep_attrs=False):
        bare = pr * 1.0
    with pytest.raises(UnitsError, match="no 'units' attribute.*keep_attrs=True"):
        cw.basin_volume(bare, BASIN)


def test_curvilinear_cf_names():
    grid = rotated_grid(lat0=-35.0, lon0=-150.0).assign_attrs(units="mm") + 3.0
    cf = grid.rename(lat="latitude", lon="longitude")
    np.testing.assert_allclose(float(cw.basin_mean(cf, BASIN)), float(cw.basin_mean(grid, BASIN)), rtol=1e-12)
