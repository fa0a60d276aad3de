"""Projected grids: latitude, longitude and cell corners from a CF grid mapping.

A grid that carries only projected ``x``/``y`` coordinates and a CF ``grid_mapping``
variable (common for radar and regional products) defines its lat/lon exactly: the grid
mapping is read with pyproj (``CRS.from_cf``) and the cell centres and the corners of
every cell (the projected cell edges) are transformed to longitude and latitude on the
mapping's own geodetic datum; the projected edges are the file's CF ``bounds`` of
x and y when present (checked: contiguous, finite, around their centres), else half-way
between centres.  Downstream the grid is curvilinear: 2-D ``lat(y, x)`` and
``lon(y, x)``, with the 1-D projected ``x``/``y`` and a scalar ``crs`` coordinate kept so
that cell corners can be derived again exactly (``climwidgets.geo.grid.cell_bounds``).
The ``crs`` coordinate holds the CRS as WKT text and the CF grid-mapping attributes.
"""

from __future__ import annotations

from collections.abc import Hashable, Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr
from numpy.typing import ArrayLike, NDArray

from ..errors import GridError

if TYPE_CHECKING:
    from pyproj import CRS

__all__ = ["CRS_COORD", "EDGE_COORDS", "crs_from_attrs", "lonlat", "projected_corners", "to_metres"]

CRS_COORD = "crs"  # name of the scalar coordinate that carries the grid-mapping attributes
#: per-cell coordinates holding stored CF bounds (m); 1-D on the axis, so they follow slicing
EDGE_COORDS = {"x": ("x_lower_edge", "x_upper_edge"), "y": ("y_lower_edge", "y_upper_edge")}
_TO_METRES = {
    "m": 1.0,
    "metre": 1.0,
    "meter": 1.0,
    "metres": 1.0,
    "meters": 1.0,
    "km": 1000.0,
    "kilometre": 1000.0,
    "kilometer": 1000.0,
    "kilometres": 1000.0,
    "kilometers": 1000.0,
}


def to_metres(units: object, *, source: object = None, variable: object = None) -> float:
    """Factor from a projection coordinate's units to metres (CF: m by default).

    Parameters
    ----------
    units : str or None
        The x/y coordinate's units attribute.
    source, variable : optional
        Named in the error message.

    Returns
    -------
    float

    Raises
    ------
    GridError
        For units other than metres or kilometres.

    Examples
    --------
    >>> to_metres("km"), to_metres(None)
    (1000.0, 1.0)
    """
    key = str(units or "m").strip().lower()
    if key not in _TO_METRES:
        raise GridError(
            f"has projection coordinates in '{units}'",
            source=source,
            variable=variable,
            expected="projection coordinates in m or km",
            fix="set the units attribute of the x/y coordinates to 'm' or 'km'",
        )
    return _TO_METRES[key]


def crs_from_attrs(attrs: Mapping[Any, Any], *, source: object = None, variable: object = None) -> CRS:
    """A pyproj CRS from CF grid-mapping attributes (``CRS.from_cf``).

    Parameters
    ----------
    attrs : mapping
        The grid-mapping variable's attributes (``grid_mapping_name`` and its parameters,
        or ``crs_wkt``).
    source, variable : optional
        Named in the error message.

    Returns
    -------
    pyproj.CRS

    Raises
    ------
    GridError
        When pyproj cannot build a CRS from them.

    References
    ----------
    CF Conventions 1.11, appendix F "Grid mappings".

    Examples
    --------
    >>> crs = crs_from_attrs({"grid_mapping_name": "lambert_azimuthal_equal_area",
    ...                       "longitude_of_projection_origin": 10.0, "latitude_of_projection_origin": 52.0})
    >>> crs.is_projected
    True
    """
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    try:
        return CRS.from_cf(dict(attrs))
    except (CRSError, KeyError, ValueError, TypeError) as exc:
        raise GridError(
            f"has a grid mapping pyproj cannot read ({type(exc).__name__}: {exc})",
            source=source,
            variable=variable,
            expected="CF grid-mapping attributes (grid_mapping_name and its parameters, or crs_wkt)",
            fix="complete the grid-mapping variable's attributes, or add 2-D lat/lon coordinates to the file",
        ) from None


def lonlat(crs: CRS, x: ArrayLike, y: ArrayLike) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Longitude and latitude (degrees, lon in [-180, 180)) of projected points ``x``, ``y`` (m).

    Parameters
    ----------
    crs : pyproj.CRS
        The projection.
    x, y : array_like
        Projected coordinates in metres.

    Returns
    -------
    tuple of numpy.ndarray
        ``(lon, lat)`` on the projection's own geodetic datum.

    Examples
    --------
    >>> crs = crs_from_attrs({"grid_mapping_name": "lambert_azimuthal_equal_area",
    ...                       "longitude_of_projection_origin": 10.0, "latitude_of_projection_origin": 52.0})
    >>> lon, lat = lonlat(crs, [0.0], [0.0])
    >>> float(lon[0]), float(lat[0])
    (10.0, 52.0)
    """
    from pyproj import Transformer

    to_geo = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
    lon, lat = to_geo.transform(np.asarray(x, dtype=float), np.asarray(y, dtype=float))
    lon = (np.asarray(lon) + 180.0) % 360.0 - 180.0
    return lon, np.asarray(lat)


def _edges(centres: NDArray[np.float64]) -> NDArray[np.float64]:
    """The n + 1 edges along an axis, in the order of its centres (the loader's one inference)."""
    from .grid import infer_edges

    if centres.size == 1:
        raise GridError(
            "cannot infer the cell edges of a single projected cell",
            expected="at least two cells along x and y, or CF bounds variables",
            fix="add x_bounds/y_bounds variables (CF 'bounds' attribute) to the file",
        )
    lower, upper = infer_edges(centres)
    return np.append(lower, upper[-1]) if centres[-1] > centres[0] else np.append(upper, lower[-1])


def _axis_edges(grid: xr.DataArray | xr.Dataset, axis: str) -> NDArray[np.float64]:
    """Cell edges along ``axis`` (m): the stored bounds when the grid carries them, else
    half-way between centres."""
    low, high = EDGE_COORDS[axis]
    if low in grid.coords and high in grid.coords and grid[low].dims == (axis,):
        lo, hi = np.asarray(grid[low].values, float), np.asarray(grid[high].values, float)
        return np.append(lo, hi[-1])
    return _edges(np.asarray(grid[axis].values, float))


def _stored_edges(
    ds: xr.Dataset, name: Hashable, centres: NDArray[np.float64], factor: float, *, source: object = None
) -> tuple[NDArray[np.float64], NDArray[np.float64]] | None:
    """``(lower, upper)`` edges (m, along the axis direction) of each cell from the CF
    ``bounds`` variable of coordinate ``name``, checked; None when there is none."""
    bname = ds[name].attrs.get("bounds")
    if not bname or bname not in ds.variables:
        return None
    b = np.asarray(ds[bname].values, dtype=float)
    n = centres.size
    if b.shape != (n, 2):
        raise GridError(
            f"has a bounds variable '{bname}' of shape {b.shape}",
            source=source,
            variable=bname,
            expected=f"shape ({n}, 2): two edges per cell of '{name}'",
            fix=f"repair '{bname}' or delete its name from the bounds attribute of '{name}'",
        )
    if not np.isfinite(b).all():
        raise GridError(
            f"has missing values in the bounds variable '{bname}'",
            source=source,
            variable=bname,
            expected="finite edges for every cell",
            fix=f"repair '{bname}' or delete its name from the bounds attribute of '{name}'",
        )
    b = b * factor
    rising = n < 2 or centres[-1] > centres[0]
    lower, upper = (b.min(axis=1), b.max(axis=1)) if rising else (b.max(axis=1), b.min(axis=1))
    tol = 1e-6 * max(float(np.abs(np.diff(b, axis=1)).max()), 1.0)
    if n > 1 and not np.allclose(upper[:-1], lower[1:], rtol=0.0, atol=tol):
        k = int(np.flatnonzero(~np.isclose(upper[:-1], lower[1:], rtol=0.0, atol=tol))[0])
        raise GridError(
            f"has bounds in '{bname}' that are not contiguous (cell {k} ends at {upper[k] / factor:g}, "
            f"cell {k + 1} starts at {lower[k + 1] / factor:g})",
            source=source,
            variable=bname,
            expected="each cell starting where the previous one ends",
            fix=f"repair '{bname}' or delete its name from the bounds attribute of '{name}'",
        )
    inside = (np.minimum(lower, upper) - tol <= centres) & (centres <= np.maximum(lower, upper) + tol)
    if not inside.all():
        k = int(np.flatnonzero(~inside)[0])
        raise GridError(
            f"has the centre of cell {k} of '{name}' ({centres[k] / factor:g}) outside its bounds in '{bname}'",
            source=source,
            variable=bname,
            expected="every cell centre between its two edges",
            fix=f"check the units of '{bname}' and '{name}' (they must agree)",
        )
    return lower, upper


def projected_corners(grid: xr.DataArray | xr.Dataset) -> tuple[NDArray[np.float64], NDArray[np.float64]] | None:
    """``(lat_corners, lon_corners)`` of shape (ny, nx, 4) for a grid carrying the ``crs``
    coordinate and 1-D projected ``x``/``y`` (m), or None for any other grid.

    Edges are the file's CF ``bounds`` of x and y when it has them (kept as the per-cell
    :data:`EDGE_COORDS`), else half-way between projected centres (exact for regular
    grids); each corner is transformed with pyproj; corners are in ring order.

    Parameters
    ----------
    grid : xarray.DataArray or xarray.Dataset
        A field as :func:`~climwidgets.io.loader.open_precip` returns it.

    Returns
    -------
    tuple of numpy.ndarray or None

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> projected_corners(xr.DataArray(np.zeros((2, 2)), dims=("lat", "lon"))) is None
    True
    """
    if CRS_COORD not in grid.coords or "x" not in grid.coords or "y" not in grid.coords:
        return None
    if grid["x"].ndim != 1 or grid["y"].ndim != 1 or min(grid.sizes["x"], grid.sizes["y"]) < 2:
        return None
    attrs = grid[CRS_COORD].attrs
    if attrs.get("grid_mapping_name") or attrs.get("crs_wkt"):
        crs = crs_from_attrs(attrs, variable=CRS_COORD)
    else:  # attributes lost through arithmetic: the coordinate's value is the WKT
        from pyproj import CRS

        crs = CRS.from_wkt(str(grid[CRS_COORD].values))
    xe, ye = (_axis_edges(grid, axis) for axis in ("x", "y"))
    gx, gy = np.meshgrid(xe, ye)
    lon, lat = lonlat(crs, gx, gy)
    # unwrap each row and column so a cell never jumps across the antimeridian
    lon = np.unwrap(np.unwrap(lon, period=360.0, axis=1), period=360.0, axis=0)
    corners = [
        (slice(None, -1), slice(None, -1)),
        (slice(None, -1), slice(1, None)),
        (slice(1, None), slice(1, None)),
        (slice(1, None), slice(None, -1)),
    ]
    lat_c = np.stack([lat[r, c] for r, c in corners], axis=-1)
    lon_c = np.stack([lon[r, c] for r, c in corners], axis=-1)
    return np.clip(lat_c, -90.0, 90.0), lon_c


def _projected_axes(
    ds: xr.Dataset, xname: Hashable, yname: Hashable, *, source: object = None
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    fx = to_metres(ds[xname].attrs.get("units"), source=source, variable=xname)
    fy = to_metres(ds[yname].attrs.get("units"), source=source, variable=yname)
    return np.asarray(ds[xname].values, float) * fx, np.asarray(ds[yname].values, float) * fy


def attach_mapping(
    da: xr.DataArray, ds: xr.Dataset, xname: Hashable, yname: Hashable, gm: str, *, source: object = None
) -> tuple[xr.DataArray, CRS]:
    """``da`` on dims (…, y, x) with metres ``x``/``y`` and the scalar ``crs`` coordinate, which
    let cell corners be derived exactly from the grid mapping."""
    crs = crs_from_attrs(ds[gm].attrs, source=source, variable=gm)
    x, y = _projected_axes(ds, xname, yname, source=source)
    da = da.rename({k: v for k, v in ((ds[yname].dims[0], "y"), (ds[xname].dims[0], "x")) if k != v and k in da.dims})
    gm_attrs = dict(ds[gm].attrs)
    gm_attrs.setdefault("crs_wkt", crs.to_wkt())
    edges: dict[Hashable, Any] = {}
    for axis, name, centres in (("x", xname, x), ("y", yname, y)):
        factor = to_metres(ds[name].attrs.get("units"), source=source, variable=name)
        stored = _stored_edges(ds, name, centres, factor, source=source)
        if stored is not None:
            low, high = EDGE_COORDS[axis]
            attrs = {"units": "m", "long_name": f"cell edges along {axis} from '{ds[name].attrs['bounds']}'"}
            edges[low] = (axis, stored[0], attrs)
            edges[high] = (axis, stored[1], attrs)
    axes: dict[Hashable, Any] = {
        "x": ("x", x, {"standard_name": "projection_x_coordinate", "units": "m", "axis": "X"}),
        "y": ("y", y, {"standard_name": "projection_y_coordinate", "units": "m", "axis": "Y"}),
        CRS_COORD: ((), crs.to_wkt(), gm_attrs),  # the value survives where attrs are dropped
    }
    return da.assign_coords(edges).assign_coords(axes), crs


def attach_latlon(
    da: xr.DataArray, ds: xr.Dataset, xname: Hashable, yname: Hashable, gm: str, *, source: object = None
) -> xr.DataArray:
    """``da`` on dims (…, y, x) with 2-D lat/lon from the grid mapping, metres x/y and ``crs``."""
    da, crs = attach_mapping(da, ds, xname, yname, gm, source=source)
    gx, gy = np.meshgrid(da["x"].values, da["y"].values)
    lon, lat = lonlat(crs, gx, gy)
    return da.assign_coords(
        lat=(("y", "x"), lat, {"standard_name": "latitude", "units": "degrees_north"}),
        lon=(("y", "x"), lon, {"standard_name": "longitude", "units": "degrees_east"}),
    )
