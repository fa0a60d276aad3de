"""Cell bounds and a cheap identity token for lat/lon grids.

A grid is any DataArray or Dataset with 1-D ``lat``/``lon`` coordinates (rectilinear) or
2-D ``lat(y, x)``/``lon(y, x)`` coordinates (curvilinear), see docs/architecture.md.

Rectilinear bounds are taken, in this order, from the 1-D coordinates ``lat_lower``,
``lat_upper``, ``lon_lower``, ``lon_upper``; from CF bounds variables of shape (n, 2)
(``lat_bnds``/``lon_bnds`` or whatever ``lat.attrs["bounds"]`` names) on a Dataset; else
they are inferred from the centres (midpoints, edge cells extrapolated by half a step,
latitudes clipped to ±90).  Curvilinear corners come from CF (y, x, 4) bounds variables
when a Dataset carries them; on a projected grid (1-D ``x``/``y`` and the scalar ``crs``
coordinate that ``open_precip`` attaches) from the grid mapping, exactly, with pyproj; else
from the centres: each corner is the mean of the four surrounding centres after
extrapolating one row/column outwards.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from typing import Any

import numpy as np
import xarray as xr

from ..errors import GridError
from ..io.projected import CRS_COORD, projected_corners

__all__ = ["GridBounds", "cell_bounds", "grid_token", "horizontal_dims", "is_curvilinear"]


@dataclass(frozen=True)
class GridBounds:
    """Cell bounds of a grid.

    Rectilinear (``kind == "rectilinear"``): 1-D ``lat_lower``, ``lat_upper`` (one per row)
    and ``lon_lower``, ``lon_upper`` (one per column), degrees.

    Curvilinear (``kind == "curvilinear"``): ``lat_corners``/``lon_corners`` of shape
    (ny, nx, 4), corners in ring order; longitudes are unwrapped so that a cell never
    jumps across the antimeridian (its corners may then lie outside [-180, 180)).

    Parameters
    ----------
    kind : {"rectilinear", "curvilinear"}
        Which set of fields is filled in.
    dims : tuple of str
        The grid's (row, column) dimension names.
    lat_lower, lat_upper, lon_lower, lon_upper : numpy.ndarray, optional
        Rectilinear bounds in degrees, one per row (lat) or column (lon).
    lat_corners, lon_corners : numpy.ndarray, optional
        Curvilinear corners in degrees, shape (ny, nx, 4), in ring order.

    Examples
    --------
    >>> import numpy as np
    >>> from climwidgets.geo.grid import GridBounds
    >>> b = GridBounds("rectilinear", ("lat", "lon"), np.array([0.0]), np.array([1.0]),
    ...                np.array([10.0, 11.0]), np.array([11.0, 12.0]))
    >>> b.shape
    (1, 2)
    """

    kind: str
    dims: tuple[str, ...]
    lat_lower: np.ndarray | None = None
    lat_upper: np.ndarray | None = None
    lon_lower: np.ndarray | None = None
    lon_upper: np.ndarray | None = None
    lat_corners: np.ndarray | None = None
    lon_corners: np.ndarray | None = None

    @property
    def shape(self) -> tuple[int, int]:
        """The number of (rows, columns) of the grid."""
        if self.kind == "rectilinear":
            assert self.lat_lower is not None and self.lon_lower is not None
            return (self.lat_lower.size, self.lon_lower.size)
        assert self.lat_corners is not None
        return (self.lat_corners.shape[0], self.lat_corners.shape[1])


def _name(grid: Any) -> str:
    return str(getattr(grid, "name", None) or type(grid).__name__)


def _latlon(grid: Any) -> tuple[xr.DataArray, xr.DataArray]:
    if not isinstance(grid, (xr.DataArray, xr.Dataset)):
        raise GridError(
            f"a grid must be an xarray DataArray or Dataset, got {type(grid).__name__}",
            expected="an object with 'lat' and 'lon' coordinates",
            fix="pass the precipitation DataArray (or any DataArray on the same grid)",
        )
    missing = [c for c in ("lat", "lon") if c not in grid.coords and c not in getattr(grid, "data_vars", {})]
    if missing:
        raise GridError(
            f"no {' and '.join(missing)} coordinate",
            source=_name(grid),
            expected="1-D lat/lon coordinates or 2-D lat(y, x)/lon(y, x) coordinates in degrees",
            fix="rename the coordinates to 'lat' and 'lon' (e.g. da.rename(latitude='lat', longitude='lon'))",
        )
    lat, lon = grid["lat"], grid["lon"]
    if lat.ndim != lon.ndim or lat.ndim not in (1, 2) or (lat.ndim == 2 and lat.dims != lon.dims):
        raise GridError(
            f"lat has dims {lat.dims} and lon has dims {lon.dims}",
            source=_name(grid),
            expected="both 1-D (rectilinear) or both 2-D on the same (y, x) dims (curvilinear)",
            fix="check the grid's coordinates",
        )
    if lat.ndim == 1 and lat.dims == lon.dims:
        raise GridError(
            "lat and lon share one dimension (a list of points, not a grid)",
            source=_name(grid),
            expected="lat and lon on separate dimensions",
            fix="unstack the points onto a lat/lon grid",
        )
    return lat, lon


def is_curvilinear(grid: xr.DataArray | xr.Dataset) -> bool:
    """True when the grid has 2-D lat/lon coordinates.

    Parameters
    ----------
    grid : xarray.DataArray or xarray.Dataset
        Any object on the grid: 1-D ``lat``/``lon`` or 2-D ``lat(y, x)``/``lon(y, x)``
        coordinates in degrees.

    Returns
    -------
    bool
        True for 2-D ``lat(y, x)``/``lon(y, x)``, False for 1-D ``lat``/``lon``.

    Raises
    ------
    climwidgets.errors.GridError
        When ``grid`` is not an xarray object or has no usable lat/lon coordinates.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.geo.grid import is_curvilinear
    >>> rect = xr.DataArray(np.zeros((2, 3)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]})
    >>> curv = xr.DataArray(np.zeros((2, 2)), dims=("y", "x"),
    ...                     coords={"lat": (("y", "x"), [[0.0, 0.1], [1.0, 1.1]]),
    ...                             "lon": (("y", "x"), [[10.0, 11.0], [10.1, 11.1]])})
    >>> is_curvilinear(rect), is_curvilinear(curv)
    (False, True)
    """
    return _latlon(grid)[0].ndim == 2


def horizontal_dims(grid: xr.DataArray | xr.Dataset) -> tuple[str, ...]:
    """The (row, column) dimension names: ``(lat, lon)`` or the curvilinear ``(y, x)``.

    Parameters
    ----------
    grid : xarray.DataArray or xarray.Dataset
        Any object on the grid: 1-D ``lat``/``lon`` or 2-D ``lat(y, x)``/``lon(y, x)``
        coordinates in degrees.

    Returns
    -------
    tuple of str
        The two horizontal dimension names, row first.

    Raises
    ------
    climwidgets.errors.GridError
        When ``grid`` is not an xarray object or has no usable lat/lon coordinates.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.geo.grid import horizontal_dims
    >>> rect = xr.DataArray(np.zeros((2, 3)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]})
    >>> curv = xr.DataArray(np.zeros((2, 2)), dims=("y", "x"),
    ...                     coords={"lat": (("y", "x"), [[0.0, 0.1], [1.0, 1.1]]),
    ...                             "lon": (("y", "x"), [[10.0, 11.0], [10.1, 11.1]])})
    >>> horizontal_dims(rect), horizontal_dims(curv)
    (('lat', 'lon'), ('y', 'x'))
    """
    lat, lon = _latlon(grid)
    dims = lat.dims if lat.ndim == 2 else (lat.dims[0], lon.dims[0])
    return tuple(str(d) for d in dims)


def _values(obj: Any) -> np.ndarray:
    return np.asarray(obj.values if hasattr(obj, "values") else obj, dtype=float)


def _bounds_var(grid: Any, coord: str) -> np.ndarray | None:
    """A CF bounds variable for ``coord`` on a Dataset, or None."""
    if not isinstance(grid, xr.Dataset):
        return None
    for candidate in (grid[coord].attrs.get("bounds"), f"{coord}_bnds", f"{coord}_bounds"):
        if candidate and candidate in grid.variables:
            return _values(grid[candidate])
    return None


def _edges_from_centres(centres: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The loader's one edge inference (midpoints, outer edges mirrored); a single centre
    without bounds is an error here, since there is no file to state an assumed width."""
    from ..io.grid import infer_edges

    if centres.size == 1:
        raise GridError(
            "cannot infer cell bounds from a single centre",
            expected="at least two cells along each axis, or explicit bounds",
            fix="add lat_lower/lat_upper/lon_lower/lon_upper coordinates",
        )
    return infer_edges(centres)


def _rect_axis(grid: Any, coord: str) -> tuple[np.ndarray, np.ndarray]:
    centres = _values(grid[coord])
    if not np.all(np.isfinite(centres)):
        raise GridError(
            "coordinate holds NaN or infinite values",
            source=_name(grid),
            variable=coord,
            expected="finite degrees",
            fix="drop or fill the bad coordinate values",
        )
    lo_name, hi_name = f"{coord}_lower", f"{coord}_upper"
    if lo_name in grid.coords and hi_name in grid.coords:
        lo, hi = _values(grid[lo_name]), _values(grid[hi_name])
    else:
        bnds = _bounds_var(grid, coord)
        if bnds is not None and bnds.shape == (centres.size, 2):
            lo, hi = bnds[:, 0], bnds[:, 1]
        else:
            diffs = np.diff(centres)
            if diffs.size and not (np.all(diffs > 0) or np.all(diffs < 0)):
                raise GridError(
                    "coordinate is not strictly monotonic",
                    source=_name(grid),
                    variable=coord,
                    expected="sorted, unique cell centres",
                    fix=f"sort the grid with .sortby('{coord}') and drop duplicates",
                )
            lo, hi = _edges_from_centres(centres)
    lower, upper = np.minimum(lo, hi), np.maximum(lo, hi)
    if coord == "lat":
        lower, upper = np.clip(lower, -90.0, 90.0), np.clip(upper, -90.0, 90.0)
    return lower, upper


def _pad_extrapolate(a: np.ndarray) -> np.ndarray:
    """Add one row/column on every side by linear extrapolation."""
    a = np.concatenate([2 * a[:1] - a[1:2], a, 2 * a[-1:] - a[-2:-1]], axis=0)
    return np.concatenate([2 * a[:, :1] - a[:, 1:2], a, 2 * a[:, -1:] - a[:, -2:-1]], axis=1)


def _corners_from_centres(lat: np.ndarray, lon: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    if min(lat.shape) < 2:
        raise GridError(
            "cannot infer corners of a curvilinear grid with a single row or column",
            expected="at least 2 × 2 cells, or CF lat_bnds/lon_bnds of shape (y, x, 4)",
            fix="pass a Dataset with bounds variables",
        )
    # Unwrap so that neighbours never differ by ~360 degrees before averaging.
    lon = np.unwrap(np.unwrap(lon, period=360.0, axis=1), period=360.0, axis=0)
    out = []
    for a in (lat, lon):
        p = _pad_extrapolate(a)
        c = 0.25 * (p[:-1, :-1] + p[1:, :-1] + p[:-1, 1:] + p[1:, 1:])  # (ny+1, nx+1)
        out.append(np.stack([c[:-1, :-1], c[:-1, 1:], c[1:, 1:], c[1:, :-1]], axis=-1))
    clat, clon = out
    return np.clip(clat, -90.0, 90.0), clon


def cell_bounds(grid: xr.DataArray | xr.Dataset) -> GridBounds:
    """Cell bounds of ``grid`` (see the module docstring for where they come from).

    Parameters
    ----------
    grid : xarray.DataArray or xarray.Dataset
        Any object on the grid: 1-D ``lat``/``lon`` or 2-D ``lat(y, x)``/``lon(y, x)``
        coordinates in degrees.

    Returns
    -------
    GridBounds
        Rectilinear bounds (one pair per row and column) or curvilinear corners
        (ny, nx, 4), in degrees, latitudes clipped to ±90.

    Raises
    ------
    climwidgets.errors.GridError
        When ``grid`` has no usable lat/lon coordinates, holds NaN coordinates, a
        rectilinear axis is not strictly monotonic, or bounds cannot be inferred (a single
        centre, a curvilinear grid with one row or column).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.geo.grid import cell_bounds
    >>> rect = xr.DataArray(np.zeros((2, 3)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]})
    >>> curv = xr.DataArray(np.zeros((2, 2)), dims=("y", "x"),
    ...                     coords={"lat": (("y", "x"), [[0.0, 0.1], [1.0, 1.1]]),
    ...                             "lon": (("y", "x"), [[10.0, 11.0], [10.1, 11.1]])})
    >>> b = cell_bounds(rect)  # inferred from the centres: midpoints, edges mirrored
    >>> b.kind, b.lat_lower.tolist(), b.lat_upper.tolist(), b.lon_lower.tolist()
    ('rectilinear', [0.0, 1.0], [1.0, 2.0], [10.0, 11.0, 12.0])
    >>> cell_bounds(curv).lat_corners.shape
    (2, 2, 4)
    """
    lat, lon = _latlon(grid)
    dims = horizontal_dims(grid)
    if lat.ndim == 1:
        lat_lo, lat_hi = _rect_axis(grid, "lat")
        lon_lo, lon_hi = _rect_axis(grid, "lon")
        return GridBounds("rectilinear", dims, lat_lo, lat_hi, lon_lo, lon_hi)
    lat2, lon2 = _values(lat), _values(lon)
    if not (np.all(np.isfinite(lat2)) and np.all(np.isfinite(lon2))):
        raise GridError(
            "2-D lat/lon coordinates hold NaN values",
            source=_name(grid),
            expected="finite degrees at every cell",
            fix="mask the data instead of the coordinates",
        )
    projected = projected_corners(grid)
    if projected is not None and projected[0].shape == lat2.shape + (4,):
        clat, clon = projected  # exact corners from the grid mapping (io.projected)
        shift = np.round((clon.mean(axis=-1) - lon2) / 360.0) * 360.0
        return GridBounds("curvilinear", dims, lat_corners=clat, lon_corners=clon - shift[..., None])
    blat, blon = _bounds_var(grid, "lat"), _bounds_var(grid, "lon")
    if blat is not None and blon is not None and blat.shape == lat2.shape + (4,) == blon.shape:
        # Unwrap each cell's corners around its centre.
        blon = lon2[..., None] + ((blon - lon2[..., None] + 180.0) % 360.0 - 180.0)
        return GridBounds("curvilinear", dims, lat_corners=np.clip(blat, -90, 90), lon_corners=blon)
    clat, clon = _corners_from_centres(lat2, lon2)
    # Re-centre each cell on its own centre so a cell's lon matches the input frame.
    shift = np.round((clon.mean(axis=-1) - lon2) / 360.0) * 360.0
    return GridBounds("curvilinear", dims, lat_corners=clat, lon_corners=clon - shift[..., None])


def grid_token(grid: xr.DataArray | xr.Dataset) -> str:
    """A hash of the grid's coordinates and bounds (not its data): equal grids, equal tokens.

    The token keys the caches of cell areas and coverage weights.

    Parameters
    ----------
    grid : xarray.DataArray or xarray.Dataset
        Any object on the grid: 1-D ``lat``/``lon`` or 2-D ``lat(y, x)``/``lon(y, x)``
        coordinates in degrees.

    Returns
    -------
    str
        A 32-character hexadecimal BLAKE2b digest of the dims, coordinates, explicit
        bounds and grid mapping.

    Raises
    ------
    climwidgets.errors.GridError
        When ``grid`` is not an xarray object or has no usable lat/lon coordinates.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.geo.grid import grid_token
    >>> rect = xr.DataArray(np.zeros((2, 3)), dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [10.5, 11.5, 12.5]})
    >>> curv = xr.DataArray(np.zeros((2, 2)), dims=("y", "x"),
    ...                     coords={"lat": (("y", "x"), [[0.0, 0.1], [1.0, 1.1]]),
    ...                             "lon": (("y", "x"), [[10.0, 11.0], [10.1, 11.1]])})
    >>> grid_token(rect) == grid_token(rect + 1.0)  # the data does not count
    True
    >>> grid_token(rect) == grid_token(rect.assign_coords(lon=rect.lon + 0.25))
    False
    """
    lat, lon = _latlon(grid)
    h = hashlib.blake2b(digest_size=16)
    h.update(repr(horizontal_dims(grid)).encode())
    parts: list[xr.DataArray | np.ndarray] = [lat, lon]
    for name in ("lat_lower", "lat_upper", "lon_lower", "lon_upper", "x", "y"):
        if name in grid.coords and grid[name].ndim == 1 and grid[name].dtype.kind in "fiu":
            parts.append(grid[name])
    if CRS_COORD in grid.coords:
        h.update(str(grid[CRS_COORD].values).encode())
    for coord in ("lat", "lon"):
        bnds = _bounds_var(grid, coord)
        if bnds is not None:
            parts.append(bnds)
    for part in parts:
        arr = np.ascontiguousarray(_values(part))
        h.update(repr(arr.shape).encode())
        h.update(arr.tobytes())
    return h.hexdigest()
