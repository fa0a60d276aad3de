"""Grid and crest geometry shared by the orographic functions (private).

Geometry here works on coordinates and on the (static, 2-D) terrain only, never on the
precipitation data, so it may use numpy freely without breaking laziness.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import xarray as xr

from ..errors import GridError, InsufficientDataError, MismatchError, ParameterError

EARTH_RADIUS_M = 6_371_007.2  # authalic radius used for cell areas (docs/architecture.md)
# Two grids "match" when their coordinates agree to this fraction of a grid step.
_GRID_RTOL = 1e-3


def check_wind_from(wind_from: Any, func: str) -> float:
    """Meteorological wind direction (blowing from, clockwise from north) in [0, 360]."""
    try:
        value = float(wind_from)
    except (TypeError, ValueError):
        value = float("nan")
    if not np.isfinite(value) or value < 0.0 or value > 360.0:
        raise ParameterError(
            f"wind_from={wind_from!r} is outside 0-360 degrees",
            source=func,
            variable="wind_from",
            expected="the direction the wind blows FROM, in degrees clockwise from north, "
            "0 to 360 (270 = westerly, 90 = easterly)",
            fix="pass a direction such as wind_from=270.0; a direction the wind blows "
            "TOWARD becomes wind_from by adding 180 (modulo 360)",
        )
    return value % 360.0


def grid_coords(da: Any, func: str, what: str = "field") -> tuple[np.ndarray, np.ndarray]:
    """1-D lat and lon of a rectilinear DataArray (lat ascending, lon in [-180, 180))."""
    if not isinstance(da, xr.DataArray):
        raise ParameterError(
            f"{what} must be an xarray.DataArray, got {type(da).__name__}",
            source=func,
            variable=what,
            expected="DataArray with 1-D 'lat' and 'lon' dimensions",
            fix="build the array with xr.DataArray(values, coords={'lat': ..., 'lon': ...})",
        )
    missing = [d for d in ("lat", "lon") if d not in da.dims]
    if missing:
        raise GridError(
            f"{what} has dims {tuple(da.dims)}, missing {missing}",
            source=func,
            variable=da.name or what,
            expected="a rectilinear grid with dimensions 'lat' and 'lon' (curvilinear y/x "
            "grids are not supported here)",
            fix="rename the grid dimensions to lat/lon or regrid onto a lat/lon grid",
        )
    lat = np.asarray(da["lat"].values, dtype=float)
    lon = np.asarray(da["lon"].values, dtype=float)
    if lat.size > 1 and np.any(np.diff(lat) <= 0):
        raise GridError(
            "lat is not strictly ascending",
            source=func,
            variable=da.name or what,
            expected="lat ascending, as open_precip returns it",
            fix="sort with da.sortby('lat')",
        )
    if lon.size > 1 and np.any(np.diff(lon) <= 0):
        raise GridError(
            "lon is not strictly ascending",
            source=func,
            variable=da.name or what,
            expected="lon in [-180, 180), sorted ascending",
            fix="wrap with ((lon + 180) % 360) - 180 and sort with da.sortby('lon')",
        )
    return lat, lon


def check_same_grid(field: xr.DataArray, other: xr.DataArray, func: str, what: str = "elevation") -> None:
    """Raise MismatchError naming the coordinate that differs and by how much."""
    for coord in ("lat", "lon"):
        a = np.asarray(field[coord].values, dtype=float)
        b = np.asarray(other[coord].values, dtype=float)
        fix = (
            f"regrid the {what} onto the precipitation grid first, for example "
            f"climwidgets.regrid({what}, field, method='bilinear')"
        )
        if a.size != b.size:
            raise MismatchError(
                f"the {what} grid has {b.size} {coord} values, the precipitation grid has {a.size}",
                source=func,
                variable=coord,
                expected=f"the {what} on exactly the precipitation grid",
                fix=fix,
            )
        step = np.min(np.abs(np.diff(a))) if a.size > 1 else 1.0
        worst = float(np.max(np.abs(a - b))) if a.size else 0.0
        if worst > _GRID_RTOL * step:
            raise MismatchError(
                f"the {what} {coord} coordinate differs from the precipitation grid by up to {worst:.6g} degrees",
                source=func,
                variable=coord,
                expected=f"the {what} on exactly the precipitation grid",
                fix=fix,
            )


def _edges(
    centres: np.ndarray, lower: Any = None, upper: Any = None, limit: float | None = None
) -> tuple[np.ndarray, np.ndarray]:
    if lower is not None and upper is not None:
        return np.asarray(lower, float), np.asarray(upper, float)
    if centres.size == 1:
        raise GridError(
            "cannot infer cell bounds from a single coordinate value",
            expected="at least two cells along lat and lon, or lat_lower/"
            "lat_upper and lon_lower/lon_upper bound coordinates",
            fix="add bound coordinates to the grid",
        )
    from ..io.grid import infer_edges  # the loader's one edge inference

    return infer_edges(centres, clip=limit)


def cell_area(da: xr.DataArray) -> xr.DataArray:
    """Per-cell area in m² on the (lat, lon) grid of ``da`` as a numpy-backed DataArray.

    Uses ``climwidgets.geo.area.cell_area`` when that module is installed; otherwise the
    same formula here: A = R²·Δλ·(sin φ2 − sin φ1), R = 6 371 007.2 m, bounds from
    lat_lower/lat_upper and lon_lower/lon_upper coordinates or midway between centres.
    """
    try:
        from ..geo.area import cell_area as shared_cell_area
    except ImportError:
        shared_cell_area = None  # type: ignore[assignment]
    grid = xr.DataArray(
        np.zeros((da.sizes["lat"], da.sizes["lon"])), coords={"lat": da["lat"], "lon": da["lon"]}, dims=("lat", "lon")
    )
    for name in ("lat_lower", "lat_upper", "lon_lower", "lon_upper"):
        if name in da.coords:
            grid = grid.assign_coords({name: da.coords[name]})
    if shared_cell_area is not None:
        area = shared_cell_area(grid)
        return grid.copy(data=np.asarray(area.transpose("lat", "lon"), dtype=float))
    lat, lon = np.asarray(grid["lat"], float), np.asarray(grid["lon"], float)
    c = grid.coords
    la0, la1 = _edges(lat, c.get("lat_lower"), c.get("lat_upper"), limit=90.0)
    lo0, lo1 = _edges(lon, c.get("lon_lower"), c.get("lon_upper"))
    band = np.sin(np.deg2rad(la1)) - np.sin(np.deg2rad(la0))
    area = EARTH_RADIUS_M**2 * np.outer(band, np.deg2rad(lo1 - lo0))
    return grid.copy(data=area)


def check_ridge(ridge: Any, func: str) -> np.ndarray:
    """Crest polyline as an (n, 2) float array of (lon, lat); at least two points."""
    try:
        pts = np.asarray(ridge, dtype=float)
    except (TypeError, ValueError):
        pts = None
    if pts is None or pts.ndim != 2 or pts.shape[1] != 2:
        raise ParameterError(
            "ridge is not a list of (lon, lat) pairs",
            source=func,
            variable="ridge",
            expected="a crest polyline [(lon, lat), (lon, lat), ...] with at least 2 points",
            fix="pass e.g. ridge=[(10.0, -5.0), (10.0, 5.0)], or elevation=... to derive the crest from the terrain",
        )
    if pts.shape[0] < 2:
        raise ParameterError(
            f"ridge has {pts.shape[0]} point(s); a crest line needs at least 2",
            source=func,
            variable="ridge",
            expected="a crest polyline [(lon, lat), ...] with at least 2 points",
            fix="add a second (lon, lat) point, or pass elevation=... instead of ridge",
        )
    if not np.all(np.isfinite(pts)) or np.any(np.abs(pts[:, 1]) > 90) or np.any(np.abs(pts[:, 0]) > 360):
        raise ParameterError(
            "ridge holds non-finite or out-of-range coordinates",
            source=func,
            variable="ridge",
            expected="(lon, lat) pairs in degrees, lon in [-180, 180), lat in [-90, 90]",
            fix="check the order of the pairs: longitude first, then latitude",
        )
    return pts


def wind_axes(wind_from: float) -> tuple[float, float]:
    """East and north components of the unit vector the wind blows toward."""
    toward = np.deg2rad(wind_from + 180.0)
    return float(np.sin(toward)), float(np.cos(toward))


def to_plane(lon: Any, lat: Any, lat0: float) -> tuple[np.ndarray, np.ndarray]:
    """Local tangent plane (equirectangular at lat0), metres east and north."""
    x = EARTH_RADIUS_M * np.deg2rad(np.asarray(lon, float)) * np.cos(np.deg2rad(lat0))
    y = EARTH_RADIUS_M * np.deg2rad(np.asarray(lat, float))
    return x, y


def from_plane(x: Any, y: Any, lat0: float) -> tuple[Any, Any]:
    lon = np.rad2deg(x / (EARTH_RADIUS_M * np.cos(np.deg2rad(lat0))))
    return lon, np.rad2deg(y / EARTH_RADIUS_M)


def rotate(x: Any, y: Any, ex: float, ny: float) -> tuple[Any, Any]:
    """(cross-wind p, along-wind q) from plane (x, y) for the wind unit vector (ex, ny)."""
    return x * ny - y * ex, x * ex + y * ny


def unrotate(p: Any, q: Any, ex: float, ny: float) -> tuple[Any, Any]:
    return p * ny + q * ex, -p * ex + q * ny


def crest_points(
    z: np.ndarray,
    lat: np.ndarray,
    lon: np.ndarray,
    wind_from: float,
    min_height: float | None = None,
    func: str = "crest_from_elevation",
) -> list[tuple[float, float]]:
    """Highest cell of every line parallel to the wind; see crest_from_elevation."""
    ex, ny = wind_axes(wind_from)
    lon2, lat2 = np.meshgrid(lon, lat)
    valid = np.isfinite(z)
    if min_height is not None:
        valid &= z >= float(min_height)
    if abs(ny) < 1e-9 or abs(ex) < 1e-9:
        # Wind along a grid axis: the lines are the grid rows (W/E) or columns (N/S).
        line = (
            np.broadcast_to(np.arange(lat.size)[:, None], z.shape)
            if abs(ny) < 1e-9
            else np.broadcast_to(np.arange(lon.size)[None, :], z.shape)
        )
    else:
        lat0 = float(np.mean(lat))
        x, y = to_plane(lon2, lat2, lat0)
        p, _ = rotate(x, y, ex, ny)
        dx = EARTH_RADIUS_M * np.deg2rad(np.mean(np.diff(lon))) * np.cos(np.deg2rad(lat0)) if lon.size > 1 else 0.0
        dy = EARTH_RADIUS_M * np.deg2rad(np.mean(np.diff(lat))) if lat.size > 1 else 0.0
        # Lines one cell apart across the wind: dy for W/E winds, dx for N/S, dx/√2 on a
        # square grid for diagonal winds.
        width = max(abs(dx * ny), abs(dy * ex))
        line = np.round((p - p.min()) / width).astype(int)
    line = line[valid]
    zz, lo, la = z[valid], lon2[valid], lat2[valid]
    if zz.size == 0:
        raise InsufficientDataError(
            "the elevation holds no usable cell",
            source=func,
            variable="elevation",
            expected="finite elevations (m), some at or above min_height",
            fix="check the elevation grid and min_height",
        )
    # Highest cell per line (first in grid order on a tie), lines ordered across the wind.
    order = np.lexsort((-zz, line))
    first = np.r_[True, np.diff(line[order]) != 0]
    pick = order[first]
    pts = [(float(a), float(b)) for a, b in zip(lo[pick], la[pick])]
    if len(pts) < 2:
        raise InsufficientDataError(
            f"only {len(pts)} crest point found",
            source=func,
            variable="elevation",
            expected="terrain spanning at least two lines parallel to the wind",
            fix="use a larger elevation domain or pass ridge=[(lon, lat), ...] by hand",
        )
    return pts


def signed_distance_km(
    lat: np.ndarray, lon: np.ndarray, ridge: np.ndarray, wind_from: float, beyond_ends: str = "exclude"
) -> np.ndarray:
    """Signed along-wind geodesic distance (km) of every cell from the crest.

    For every cell the straight line through it parallel to the wind (in the local tangent
    plane at the grid's mean latitude) is intersected with each crest segment; of several
    crossings the one nearest the cell along the wind is taken.  The distance from that
    crest point to the cell is the WGS84 geodesic length (pyproj.Geod.inv), negative when
    the cell lies upwind (windward), positive downwind (leeward).  Cells whose line misses
    the crest are NaN (``beyond_ends="exclude"``) or measured from the crest extended
    straight across the wind from its nearer end (``"nearest"``).
    """
    from pyproj import Geod

    ex, ny = wind_axes(wind_from)
    lat0 = float(np.mean(lat))
    lon2, lat2 = np.meshgrid(lon, lat)
    pc, qc = rotate(*to_plane(lon2, lat2, lat0), ex, ny)
    pr, qr = rotate(*to_plane(ridge[:, 0], ridge[:, 1], lat0), ex, ny)
    best_q = np.full(pc.shape, np.nan)
    best_gap = np.full(pc.shape, np.inf)
    # Loop over crest segments (few), vectorised over cells.
    for i in range(len(pr) - 1):
        p1, p2, q1, q2 = pr[i], pr[i + 1], qr[i], qr[i + 1]
        if p1 == p2:  # segment along the wind: its ends are met through the neighbours
            continue
        s = (pc - p1) / (p2 - p1)
        qi = q1 + s * (q2 - q1)
        gap = np.abs(qc - qi)
        better = (s >= -1e-12) & (s <= 1 + 1e-12) & (gap < best_gap)
        best_q = np.where(better, qi, best_q)
        best_gap = np.where(better, gap, best_gap)
    if beyond_ends == "nearest":
        miss = ~np.isfinite(best_q)
        ends = np.array([0, len(pr) - 1])
        nearer = ends[np.argmin(np.abs(pc[..., None] - pr[ends]), axis=-1)]
        best_q = np.where(miss, qr[nearer], best_q)
    xs, ys = unrotate(pc, best_q, ex, ny)
    clon, clat = from_plane(xs, ys, lat0)
    hit = np.isfinite(best_q)
    out = np.full(pc.shape, np.nan)
    if hit.any():
        _, _, dist = Geod(ellps="WGS84").inv(clon[hit], clat[hit], lon2[hit], lat2[hit])
        out[hit] = np.sign(qc[hit] - best_q[hit]) * np.asarray(dist) / 1000.0
    return out
