"""Cell areas on the sphere.

All areas use a sphere of the authalic radius R = 6 371 007.2 m (the sphere with the
surface of the WGS84 ellipsoid, docs/architecture.md); ``radius=`` changes it.

* Rectilinear cell between parallels φ1 < φ2 and meridians Δλ apart:
  A = R²·Δλ·(sin φ2 − sin φ1), from the spherical-cap area 2πR²(1 − sin φ).
  Evaluated as 2R²·Δλ·cos φm·sin(Δφ/2), which is the same number without cancellation.
* Any polygon whose edges are straight lines in lon/lat (a curvilinear cell, a piece of a
  basin): the area of the region on the sphere is ∬ R² cos φ dφ dλ, which Green's theorem
  turns into −R² ∮ sin φ dλ.  Along a straight lon/lat edge φ is linear in λ, so each edge
  contributes exactly Δλ·sin φm·sin(Δφ/2)/(Δφ/2).  This is exact (no densification) and
  agrees with the rectilinear formula on rectangles, so Σ cell_area × coverage is the
  spherical area of the basin's lon/lat polygon.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import xarray as xr

from ..io.grid import canonical_names
from ..provenance import with_history
from ._cache import area_cache
from .grid import GridBounds, cell_bounds, grid_token, horizontal_dims

__all__ = ["AUTHALIC_RADIUS_M", "cell_area", "ring_area", "lonlat_polygon_area"]

AUTHALIC_RADIUS_M = 6_371_007.2


def ring_area(lon: Any, lat: Any, radius: float = AUTHALIC_RADIUS_M) -> np.ndarray:
    """Spherical area (m²) enclosed by rings with straight lon/lat edges.

    The area ∬ R² cos φ dφ dλ is turned by Green's theorem into −R² ∮ sin φ dλ and
    integrated exactly along each straight lon/lat edge (see the module docstring).

    Parameters
    ----------
    lon, lat : array_like
        Vertex longitudes and latitudes in degrees, the ring's vertices on the last axis
        (the closing vertex is optional); leading axes are vectorised.  Orientation does
        not matter.
    radius : float, default AUTHALIC_RADIUS_M
        Sphere radius in metres (default: the authalic radius of WGS84).

    Returns
    -------
    numpy.ndarray
        Area in m² of each ring, of the shape of the leading axes (a 0-d array for one ring).

    References
    ----------
    Authalic radius of WGS84 from Moritz, H. (2000). Geodetic Reference System 1980.
    Journal of Geodesy, 74, 128-133. https://doi.org/10.1007/s001900050278

    Bevis, M. and Cambareri, G. (1987). Computing the area of a spherical polygon of
    arbitrary shape. Mathematical Geology, 19(4), 335-346.

    Examples
    --------
    >>> import numpy as np
    >>> from climwidgets.geo.area import AUTHALIC_RADIUS_M, ring_area
    >>> square = ring_area([0, 1, 1, 0], [0, 0, 1, 1])  # 1 x 1 degree at the equator
    >>> exact = AUTHALIC_RADIUS_M**2 * np.radians(1) * np.sin(np.radians(1))  # R² Δλ (sin φ2 - sin φ1)
    >>> round(float(square) / 1e6, 1), round(float(exact) / 1e6, 1)  # km²
    (12363.7, 12363.7)
    """
    lam = np.radians(np.asarray(lon, dtype=float))
    phi = np.radians(np.asarray(lat, dtype=float))
    dlam = np.roll(lam, -1, axis=-1) - lam
    dphi = np.roll(phi, -1, axis=-1) - phi
    phim = phi + 0.5 * dphi
    # sin(Δφ/2)/(Δφ/2) = np.sinc(Δφ/(2π)); stable for horizontal edges.
    contrib = dlam * np.sin(phim) * np.sinc(dphi / (2.0 * np.pi))
    area: np.ndarray = np.abs(contrib.sum(axis=-1)) * radius**2
    return area


def lonlat_polygon_area(geometry: Any, radius: float = AUTHALIC_RADIUS_M) -> float:
    """Spherical area (m²) of a shapely (Multi)Polygon with straight lon/lat edges.

    Holes are subtracted; parts that are not polygons (points, lines) and empty parts
    contribute nothing.

    Parameters
    ----------
    geometry : shapely.Polygon or shapely.MultiPolygon
        Polygon(s) in lon/lat degrees.
    radius : float, default AUTHALIC_RADIUS_M
        Sphere radius in metres.

    Returns
    -------
    float
        Area in m² (each ring by :func:`ring_area`).

    Examples
    --------
    >>> from shapely.geometry import Polygon
    >>> from climwidgets.geo.area import lonlat_polygon_area
    >>> outer = [(0, 0), (2, 0), (2, 2), (0, 2)]
    >>> hole = [(0.5, 0.5), (1.5, 0.5), (1.5, 1.5), (0.5, 1.5)]
    >>> full = lonlat_polygon_area(Polygon(outer))
    >>> holed = lonlat_polygon_area(Polygon(outer, [hole]))
    >>> round(full / 1e6), round((full - holed) / 1e6)  # km²; the hole is a 1 x 1 degree cell
    (49447, 12362)
    """
    total = 0.0
    for poly in getattr(geometry, "geoms", [geometry]):
        if poly.is_empty or poly.geom_type != "Polygon":
            continue
        ext = np.asarray(poly.exterior.coords)
        total += float(ring_area(ext[:, 0], ext[:, 1], radius))
        for hole in poly.interiors:
            h = np.asarray(hole.coords)
            total -= float(ring_area(h[:, 0], h[:, 1], radius))
    return total


def _area_values(bounds: GridBounds, radius: float) -> np.ndarray:
    if bounds.kind == "rectilinear":
        assert bounds.lat_lower is not None and bounds.lat_upper is not None
        assert bounds.lon_lower is not None and bounds.lon_upper is not None
        dlam = np.radians(bounds.lon_upper - bounds.lon_lower)
        p1, p2 = np.radians(bounds.lat_lower), np.radians(bounds.lat_upper)
        band = 2.0 * np.cos(0.5 * (p1 + p2)) * np.sin(0.5 * (p2 - p1))  # sin φ2 − sin φ1
        rect: np.ndarray = radius**2 * band[:, None] * dlam[None, :]
        return rect
    return ring_area(bounds.lon_corners, bounds.lat_corners, radius)


def cell_area(grid: xr.DataArray | xr.Dataset, radius: float = AUTHALIC_RADIUS_M) -> xr.DataArray:
    """Area of every grid cell in m² on a sphere of radius ``radius`` (default authalic).

    Rectilinear cells use A = R²·Δλ·(sin φ2 − sin φ1); curvilinear cells the exact ring
    area of their corners (:func:`ring_area`).  Bounds come from
    :func:`climwidgets.geo.grid.cell_bounds`; results are cached per grid and radius.

    Parameters
    ----------
    grid : xarray.DataArray or xarray.Dataset
        Any object on the grid: 1-D ``lat``/``lon`` or 2-D ``lat(y, x)``/``lon(y, x)``
        coordinates in degrees.  CF-named grids (``latitude``/``longitude``) are read
        under the house names lat/lon.
    radius : float, default AUTHALIC_RADIUS_M
        Sphere radius in metres.

    Returns
    -------
    xarray.DataArray
        ``cell_area`` on the grid's (lat, lon) or curvilinear (y, x) dims, with
        ``units="m2"``, the radius in ``attrs["radius_m"]`` and a history line.

    Raises
    ------
    climwidgets.errors.GridError
        When the object has no usable lat/lon coordinates or its bounds cannot be found
        (see :func:`climwidgets.geo.grid.cell_bounds`).

    References
    ----------
    Snyder, J. P. (1987). Map Projections: A Working Manual. U.S. Geological Survey
    Professional Paper 1395. https://doi.org/10.3133/pp1395 (area of a spherical zone).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> grid = xr.DataArray(np.zeros((2, 2)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5]})  # 1-degree cells
    >>> area = cw.cell_area(grid)
    >>> area.attrs["units"], (area.values / 1e6).round(1)  # km²; cells shrink towards the pole
    ('m2', array([[12363.7, 12363.7],
           [12359.9, 12359.9]]))
    """
    grid = canonical_names(grid)
    key = (grid_token(grid), float(radius))
    values = area_cache.get(key)
    if values is None:
        bounds = cell_bounds(grid)
        values = _area_values(bounds, float(radius))
        values.setflags(write=False)
        area_cache.put(key, values)
    bounds_dims = horizontal_dims(grid)
    coords = {k: v.variable for k, v in grid.coords.items() if set(v.dims) <= set(bounds_dims)}
    out = xr.DataArray(values.copy(), dims=bounds_dims, coords=coords, name="cell_area")
    out.attrs.update(
        units="m2",
        long_name="cell area on the sphere",
        radius_m=float(radius),
        radius_note="authalic sphere of WGS84" if radius == AUTHALIC_RADIUS_M else "user radius",
    )
    return with_history(out, "cell_area", radius=float(radius))
