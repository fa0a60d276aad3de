"""Cell areas on the sphere (climwidgets/geo/area.py)."""

import numpy as np
import pytest
import shapely
import xarray as xr
from pyproj import Geod
from scipy import integrate

import climwidgets as cw
from climwidgets.geo.area import AUTHALIC_RADIUS_M, ring_area

from ._grids import rect_grid, rotated_grid

# IUGG mean radius R1 = (2a + b)/3 of GRS80: Moritz, H. (1980), Geodetic Reference System
# 1980, Bull. Géod. 54(3).
R1 = 6_371_008.7714


def test_global_grid_sums_to_sphere():
    # Whole-sphere area 4πR² (classical); the cell formula telescopes to it exactly.
    g = rect_grid(-90, 90, -180, 180, 1.0)
    area = cw.cell_area(g)
    assert area.attrs["units"] == "m2"
    assert area.attrs["radius_m"] == AUTHALIC_RADIUS_M == 6_371_007.2  # docs/architecture.md
    np.testing.assert_allclose(float(area.sum()), 4 * np.pi * AUTHALIC_RADIUS_M**2, rtol=1e-10)
    assert area.dims == ("lat", "lon") and "history" in area.attrs


@pytest.mark.parametrize(
    ("lat0", "expected"),
    [
        # A = R²·Δλ·(sin φ2 − sin φ1), from the spherical-cap area 2πR²(1 − sin φ)
        # (Snyder 1987, USGS Prof. Paper 1395 — citation from memory), with R = R1;
        # the numbers are the formula evaluated in double precision.
        (0.0, 12_363_718_034.18),
        (60.0, 6_088_417_878.80),
    ],
)
def test_single_cell_matches_cap_formula(lat0, expected):
    g = xr.DataArray(
        np.zeros((2, 2)), dims=("lat", "lon"), coords={"lat": [lat0 + 0.5, lat0 + 1.5], "lon": [-29.5, -28.5]}
    )
    area = cw.cell_area(g, radius=R1)
    np.testing.assert_allclose(float(area[0, 0]), expected, rtol=1e-10)
    assert area.attrs["radius_m"] == R1


def test_explicit_bounds_are_used():
    # Bounds carried as lat_lower/lat_upper/lon_lower/lon_upper (DEVELOPERS.md) win over centres.
    g = xr.DataArray(
        np.zeros((1, 1)),
        dims=("lat", "lon"),
        coords={
            "lat": [0.3],
            "lon": [-29.8],
            "lat_lower": ("lat", [0.0]),
            "lat_upper": ("lat", [1.0]),
            "lon_lower": ("lon", [-30.0]),
            "lon_upper": ("lon", [-29.0]),
        },
    )
    np.testing.assert_allclose(float(cw.cell_area(g, radius=R1)[0, 0]), 12_363_718_034.18, rtol=1e-10)
    ds = xr.Dataset(
        {
            "pr": (("lat", "lon"), np.zeros((1, 1))),
            "lat_bnds": (("lat", "nv"), [[60.0, 61.0]]),
            "lon_bnds": (("lon", "nv"), [[-30.0, -29.0]]),
        },
        coords={"lat": [60.4], "lon": [-29.3]},
    )
    np.testing.assert_allclose(float(cw.cell_area(ds, radius=R1)[0, 0]), 6_088_417_878.80, rtol=1e-10)


def test_curvilinear_copy_of_rectilinear_grid_has_same_areas():
    g = rect_grid(40, 43, -150, -146, 0.5)
    lon2, lat2 = np.meshgrid(g.lon.values, g.lat.values)
    c = xr.DataArray(
        np.zeros(lat2.shape), dims=("y", "x"), coords={"lat": (("y", "x"), lat2), "lon": (("y", "x"), lon2)}
    )
    np.testing.assert_allclose(cw.cell_area(c).values, cw.cell_area(g).values, rtol=1e-12)


def test_skewed_quadrilateral_against_numerical_integration():
    # Area of a lon/lat-straight quadrilateral on the sphere = ∬ R² cos φ dφ dλ over it,
    # checked with scipy.integrate.dblquad (outside numerical oracle).
    lon = np.array([-140.0, -138.0, -137.0, -139.5])
    lat = np.array([50.0, 51.0, 54.0, 53.0])
    quad = shapely.Polygon(np.c_[lon, lat])
    lam_lo, lam_hi = lon.min(), lon.max()

    def phi_range(lam):
        cut = shapely.intersection(quad, shapely.LineString([(lam, -90), (lam, 90)]))
        ys = np.asarray(cut.coords)[:, 1]
        return ys.min(), ys.max()

    val, _ = integrate.dblquad(
        lambda phi, lam: np.cos(np.radians(phi)),
        lam_lo,
        lam_hi,
        lambda lam: phi_range(lam)[0],
        lambda lam: phi_range(lam)[1],
        epsabs=1e-13,
        epsrel=1e-12,
    )
    expected = val * np.radians(1) ** 2 * AUTHALIC_RADIUS_M**2
    np.testing.assert_allclose(ring_area(lon, lat), expected, rtol=1e-8)


def test_curvilinear_areas_sum_like_the_quads():
    g = rotated_grid()
    area = cw.cell_area(g)
    assert area.dims == ("y", "x") and np.all(area > 0)
    # A 0.5° cell rotated stays a 0.5° × 0.5° parallelogram in lon/lat: area ≈ R² (0.5°)² cos φ.
    approx = AUTHALIC_RADIUS_M**2 * np.radians(0.5) ** 2 * np.cos(np.radians(g.lat))
    np.testing.assert_allclose(area.values, approx.values, rtol=2e-3)


def test_basin_area_matches_geodesic_area():
    # Σ cell_area × coverage against pyproj.Geod (WGS84) polygon area: within 0.5 %
    # (the authalic sphere and the WGS84 ellipsoid differ locally by well under 1 % at
    # mid-latitudes; common practice).
    verts = [(-150.00, 40.00), (-149.62, 40.03), (-149.60, 40.28), (-149.80, 40.35), (-150.02, 40.22)]
    basin = cw.Basin.from_vertices(verts, name="test basin")
    g = rect_grid(39.5, 41, -150.5, -149, 0.05)
    weighted = float((cw.cell_area(g) * cw.coverage_weights(basin, g)).sum())
    dense = shapely.segmentize(shapely.Polygon(verts), 0.001)
    geod_area = abs(Geod(ellps="WGS84").geometry_area_perimeter(dense)[0])
    assert 700e6 < geod_area < 1300e6  # about 1000 km²
    np.testing.assert_allclose(weighted, geod_area, rtol=5e-3)
    np.testing.assert_allclose(basin.area_m2, geod_area, rtol=5e-3)
    # Basin.area_m2 is the outline on the authalic sphere: pyproj.Geod on that sphere, with
    # edges densified so they stay straight in lon/lat, gives the same area
    sphere = abs(Geod(a=AUTHALIC_RADIUS_M, b=AUTHALIC_RADIUS_M).geometry_area_perimeter(dense)[0])
    np.testing.assert_allclose(basin.area_m2, sphere, rtol=1e-6)
    np.testing.assert_allclose(weighted, basin.area_m2, rtol=1e-4)
