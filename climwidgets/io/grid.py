"""Find the time, latitude and longitude of a variable and bring them to the house layout.

Rectilinear grids end up with 1-D ``lat`` ascending and ``lon`` in [-180, 180) sorted, and
carry their cell bounds as 1-D coordinates ``lat_lower``/``lat_upper`` and
``lon_lower``/``lon_upper``.  Curvilinear grids keep their 2-D ``lat(y, x)``/``lon(y, x)``
as they are, with the dims renamed to ``y``/``x``.
"""

from __future__ import annotations

from collections.abc import Hashable
from typing import Any, TypeVar, cast

import numpy as np
import xarray as xr
from numpy.typing import NDArray

from ..errors import GridError

_LAT_NAMES = ("lat", "latitude", "nav_lat", "lat_rho", "xlat", "y_lat")
_LON_NAMES = ("lon", "longitude", "nav_lon", "lon_rho", "xlong", "x_lon")
_TIME_NAMES = ("time", "t", "valid_time", "date", "times")


def _is_lat(var: xr.DataArray) -> bool:
    a = var.attrs
    return (
        a.get("standard_name") == "latitude"
        or str(a.get("units", "")).lower()
        in ("degrees_north", "degree_north", "degree_n", "degrees_n", "degreen", "degreesn")
        or a.get("axis") == "Y"
        and "deg" in str(a.get("units", "")).lower()
    )


def _is_lon(var: xr.DataArray) -> bool:
    a = var.attrs
    return (
        a.get("standard_name") == "longitude"
        or str(a.get("units", "")).lower()
        in ("degrees_east", "degree_east", "degree_e", "degrees_e", "degreee", "degreese")
        or a.get("axis") == "X"
        and "deg" in str(a.get("units", "")).lower()
    )


def _cf_candidates(ds: xr.Dataset, which: str) -> list[Hashable]:
    """Names cf-xarray finds for ``which`` by standard_name, axis, units or _CoordinateAxisType."""
    import cf_xarray  # noqa: F401  (registers the .cf accessor)

    key = {"lat": "latitude", "lon": "longitude", "time": "time"}[which]
    axis = {"lat": "Y", "lon": "X", "time": "T"}[which]
    found = list(ds.cf.coordinates.get(key, []))
    if which == "time":  # an axis "T" is time; "X"/"Y" may be projected metres, not degrees
        found += [n for n in ds.cf.axes.get(axis, []) if n not in found]
    return found


def find_coord(ds: xr.Dataset, da: xr.DataArray | xr.Dataset, which: str) -> str | None:
    """Name of the variable in ``ds`` serving as ``which`` ("lat", "lon", "time") for ``da``.

    CF first, as cf-xarray reads it (standard_name, axis, units); then CF time units
    ("... since ...") and degree units the accessor does not look at on undecoded files;
    then conventional names.

    Parameters
    ----------
    ds : xarray.Dataset
        The opened file (or the object given, as a Dataset).
    da : xarray.DataArray or xarray.Dataset
        The data variable; the coordinate's dims must be among its dims.
    which : {"lat", "lon", "time"}

    Returns
    -------
    str or None
        The variable's name, or None when there is none.

    References
    ----------
    CF Conventions 1.11, sections 4.1 (latitude), 4.2 (longitude) and 4.4 (time).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset({"pr": (("y", "x"), np.zeros((2, 3)))},
    ...                 coords={"y": ("y", [10.0, 11.0], {"units": "degrees_north"}),
    ...                         "x": ("x", [0.0, 1.0, 2.0], {"units": "degrees_east"})})
    >>> find_coord(ds, ds["pr"], "lat"), find_coord(ds, ds["pr"], "lon")
    ('y', 'x')
    """
    test = {"lat": _is_lat, "lon": _is_lon}.get(which)
    names = {"lat": _LAT_NAMES, "lon": _LON_NAMES, "time": _TIME_NAMES}[which]

    def fits(name: Hashable) -> bool:
        # names in files are text; a non-text name in memory is never a CF coordinate
        return (
            isinstance(name, str) and name in ds.variables and set(ds[name].dims) <= set(da.dims) and ds[name].ndim > 0
        )

    for name in _cf_candidates(ds, which):
        if fits(name):
            return str(name)
    candidates = list(da.coords) + list(da.dims) + [n for n in ds.variables if n not in da.coords]
    seen: list[Hashable] = []
    for name in candidates:
        if name in seen or not fits(name):
            continue
        seen.append(name)
        var = ds[name]
        if which == "time":
            units = str(var.attrs.get("units", ""))
            if (
                " since " in units
                or var.attrs.get("standard_name") == "time"
                or var.attrs.get("axis") == "T"
                or np.issubdtype(var.dtype, np.datetime64)
                or var.dtype == object
            ):
                return str(name)
        elif test is not None and test(var):
            return str(name)
    for name in names:  # fall back to conventional names
        if fits(name):
            return str(name)
    return None


def find_projected(ds: xr.Dataset, da: xr.DataArray) -> tuple[Hashable, Hashable, str] | None:
    """``(x, y, grid_mapping)`` names of a projected grid for ``da``, or None.

    A projected grid has 1-D coordinates with standard_name projection_x_coordinate /
    projection_y_coordinate (or axis X / Y, as cf-xarray reads them) and a CF
    ``grid_mapping`` attribute on the data variable that names an existing variable.

    Parameters
    ----------
    ds : xarray.Dataset
    da : xarray.DataArray
        The data variable (its ``grid_mapping`` attribute or encoding).

    Returns
    -------
    tuple or None
        ``(x name, y name, grid-mapping variable name)``.

    References
    ----------
    CF Conventions 1.11, section 5.6 "Horizontal coordinate reference systems, grid
    mappings, and projections".

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> ds = xr.Dataset(
    ...     {"pr": (("y", "x"), np.zeros((2, 2)), {"grid_mapping": "crs"}), "crs": ((), 0)},
    ...     coords={"x": ("x", [0.0, 1e3], {"standard_name": "projection_x_coordinate"}),
    ...             "y": ("y", [0.0, 1e3], {"standard_name": "projection_y_coordinate"})})
    >>> find_projected(ds, ds["pr"])
    ('x', 'y', 'crs')
    """
    import cf_xarray  # noqa: F401

    gm = da.attrs.get("grid_mapping") or da.encoding.get("grid_mapping")
    if not gm or str(gm).split(":")[0].strip() not in ds.variables:
        return None
    gm = str(gm).split(":")[0].strip()
    names: dict[str, Hashable] = {}
    for axis, sn in (("X", "projection_x_coordinate"), ("Y", "projection_y_coordinate")):
        pool = list(ds.cf.standard_names.get(sn, [])) + list(ds.cf.axes.get(axis, []))
        hits = [n for n in pool if n in ds.variables and ds[n].ndim == 1 and ds[n].dims[0] in da.dims]
        if not hits:
            return None
        names[axis] = hits[0]
    return names["X"], names["Y"], gm


def _holds_dates(var: xr.DataArray) -> bool:
    if np.issubdtype(var.dtype, np.datetime64):
        return True
    if var.dtype != object or var.size == 0:
        return False
    import cftime

    return isinstance(var.values.flat[0], cftime.datetime)


_Obj = TypeVar("_Obj")


def canonical_names(obj: _Obj) -> _Obj:
    """Rename CF-identified time, latitude and longitude of an in-memory object to time/lat/lon.

    1-D coordinates that are their own dimension are renamed with it (``valid_time``,
    ``latitude``, ``longitude``), 2-D latitude/longitude coordinates on their own; names
    already canonical, or absent, are left alone.

    Parameters
    ----------
    obj : xarray.DataArray or xarray.Dataset
        Anything else is returned as it is.

    Returns
    -------
    same type as ``obj``
        A new object; the input is not changed.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> da = xr.DataArray(np.zeros(2), dims="latitude",
    ...                   coords={"latitude": ("latitude", [1.0, 2.0], {"units": "degrees_north"})})
    >>> canonical_names(da).dims
    ('lat',)
    """
    if not isinstance(obj, (xr.DataArray, xr.Dataset)):
        return obj
    ds = obj.rename(None).to_dataset(name="__value__") if isinstance(obj, xr.DataArray) else obj
    da = ds["__value__"] if isinstance(obj, xr.DataArray) else ds
    rename: dict[Hashable, str] = {}
    for which in ("time", "lat", "lon"):
        if which in obj.dims or which in obj.coords:
            continue
        name = find_coord(ds, da, which)
        if name is None or name == "__value__":
            continue
        if ds[name].ndim == 2 and which != "time" and name in obj.coords:
            rename[name] = which  # curvilinear lat(y, x)/lon(y, x): the coordinate only
            continue
        if ds[name].ndim != 1 or ds[name].dims[0] != name:
            continue
        if which == "time" and not _holds_dates(ds[name]):
            continue  # an in-memory time axis holds decoded dates; labels such as members do not
        rename[name] = which
    return cast(_Obj, obj.rename(rename)) if rename else obj


def bounds_to_edges(bounds: np.ndarray, centres: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Lower and upper edge of each cell from a CF (n, 2) bounds array, in centre order.

    Parameters
    ----------
    bounds : numpy.ndarray
        Shape (n, 2); either column may hold the lower edge (descending axes).
    centres : numpy.ndarray
        The n cell centres.

    Returns
    -------
    tuple of numpy.ndarray
        ``(lower, upper)``.

    References
    ----------
    CF Conventions 1.11, section 7.1 "Cell boundaries".

    Examples
    --------
    >>> import numpy as np
    >>> bounds_to_edges(np.array([[1.0, 0.0], [2.0, 1.0]]), np.array([0.5, 1.5]))
    (array([0., 1.]), array([1., 2.]))
    """
    b = np.asarray(bounds, dtype=float)
    return np.minimum(b[:, 0], b[:, 1]), np.maximum(b[:, 0], b[:, 1])


def infer_edges(centres: np.ndarray, clip: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Cell edges half-way between centres; the outer edges mirror the first and last gaps.

    Parameters
    ----------
    centres : numpy.ndarray
        Cell centres along one axis (a single cell gets a width of one unit).
    clip : float, optional
        Clip edges to [-clip, clip] (90 for latitudes).

    Returns
    -------
    tuple of numpy.ndarray
        ``(lower, upper)`` of each cell.

    Examples
    --------
    >>> import numpy as np
    >>> infer_edges(np.array([88.0, 89.5]), clip=90.0)
    (array([87.25, 88.75]), array([88.75, 90.  ]))
    """
    c = np.asarray(centres, dtype=float)
    if c.size == 1:
        return c - 0.5, c + 0.5  # a single cell: 1 degree (normalise_rectilinear refuses to guess)
    mid = (c[1:] + c[:-1]) / 2
    edges = np.concatenate([[c[0] - (mid[0] - c[0])], mid, [c[-1] + (c[-1] - mid[-1])]])
    if clip is not None:
        edges = np.clip(edges, -clip, clip)
    lower, upper = np.minimum(edges[:-1], edges[1:]), np.maximum(edges[:-1], edges[1:])
    return lower, upper


def normalise_rectilinear(
    da: xr.DataArray,
    lat_edges: tuple[NDArray[Any], NDArray[Any]] | None = None,
    lon_edges: tuple[NDArray[Any], NDArray[Any]] | None = None,
    *,
    source: object = None,
) -> xr.DataArray:
    """Rename to lat/lon, make lat ascending and lon [-180, 180) sorted, attach bounds.

    Reordering uses ``isel``/``sortby`` so it stays lazy on dask arrays.

    Parameters
    ----------
    da : xarray.DataArray
        With 1-D ``lat`` and ``lon`` coordinates.
    lat_edges, lon_edges : tuple of numpy.ndarray, optional
        ``(lower, upper)`` cell edges from the file's CF bounds; inferred when absent.
    source : optional
        Named in error messages.

    Returns
    -------
    xarray.DataArray
        On ascending lat and lon in [-180, 180), with ``lat_lower`` ... ``lon_upper``.

    Raises
    ------
    GridError
        For NaN coordinates, latitudes beyond ±90, a single cell without bounds, or
        longitudes that repeat after wrapping.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> da = xr.DataArray(np.zeros((2, 2)), dims=("lat", "lon"),
    ...                   coords={"lat": [11.0, 10.0], "lon": [359.0, 1.0]})
    >>> out = normalise_rectilinear(da)
    >>> out["lat"].values, out["lon"].values, out["lon_lower"].values
    (array([10., 11.]), array([-1.,  1.]), array([-2.,  0.]))
    """
    lat = np.asarray(da["lat"].values, dtype=float)
    lon = np.asarray(da["lon"].values, dtype=float)
    if np.any(~np.isfinite(lat)) or np.any(~np.isfinite(lon)):
        raise GridError(
            "has missing (NaN) latitude or longitude values",
            source=source,
            variable="lat/lon",
            expected="finite coordinates",
            fix="repair the coordinate variables in the file",
        )
    if np.any(np.abs(lat) > 90):
        raise GridError(
            f"has latitudes outside -90..90 (min {lat.min():g}, max {lat.max():g})",
            source=source,
            variable="lat",
            expected="degrees_north within -90..90",
            fix="check whether lat and lon are swapped or in radians",
        )
    for which, values, edges in (("latitude", lat, lat_edges), ("longitude", lon, lon_edges)):
        if values.size == 1 and edges is None:
            short = which[:3]
            raise GridError(
                f"has a single {which} ({values[0]:g}) and no {which} bounds, so the size of its cells is unknown",
                source=source,
                variable=short,
                expected=f"two or more {which}s, or CF bounds on {short}",
                fix=f"add a bounds variable ({short}_bnds with the lower and upper edge, and the "
                f"attribute {short}:bounds = '{short}_bnds'); on an in-memory object, "
                f"coordinates {short}_lower and {short}_upper on {short}",
            )
    bounds_from = "file"
    for which, edges in (("latitude", lat_edges), ("longitude", lon_edges)):
        if edges is not None and not (np.all(np.isfinite(edges[0])) and np.all(np.isfinite(edges[1]))):
            bad = int(np.flatnonzero(~(np.isfinite(edges[0]) & np.isfinite(edges[1])))[0])
            raise GridError(
                f"has a missing (NaN) value in its {which} bounds (cell {bad + 1})",
                source=source,
                variable=f"{which[:3]} bounds",
                expected="finite cell bounds for every cell",
                fix=f"repair the {which} bounds variable, or delete the 'bounds' attribute of {which[:3]} "
                "in a copy of the file so that bounds are inferred from the cell centres",
            )
    if lat_edges is None:
        lat_edges = infer_edges(lat, clip=90.0)
        bounds_from = "inferred from cell centres"
    wrapped = ((lon + 180.0) % 360.0) - 180.0
    shift = wrapped - lon
    if lon_edges is None:
        # infer on the unwrapped sequence: 350, 355, 0, 5 is 350, 355, 360, 365, so the
        # cells either side of the jump get their true half-gaps, not a 180-degree span
        steps = (np.diff(lon) + 180.0) % 360.0 - 180.0
        unwrapped = lon[0] + np.concatenate([[0.0], np.cumsum(steps)]) if lon.size else lon
        lon_edges = infer_edges(unwrapped)
        shift = wrapped - unwrapped
        bounds_from = "inferred from cell centres"
    da = da.assign_coords(
        lon=("lon", wrapped, da["lon"].attrs),
        lat_lower=("lat", lat_edges[0]),
        lat_upper=("lat", lat_edges[1]),
        lon_lower=("lon", lon_edges[0] + shift),
        lon_upper=("lon", lon_edges[1] + shift),
    )
    if len(np.unique(wrapped)) != wrapped.size:
        raise GridError(
            "has duplicated longitudes after wrapping to -180..180",
            source=source,
            variable="lon",
            expected="each longitude once",
            fix="drop the repeated (cyclic) column from the grid",
        )
    order_lat = np.argsort(lat, kind="stable")
    order_lon = np.argsort(wrapped, kind="stable")
    if not np.array_equal(order_lat, np.arange(lat.size)):
        da = da.isel(lat=order_lat)
    if not np.array_equal(order_lon, np.arange(lon.size)):
        da = da.isel(lon=order_lon)
    da["lat"].attrs.update(standard_name="latitude", units="degrees_north", axis="Y")
    da["lon"].attrs.update(standard_name="longitude", units="degrees_east", axis="X")
    da.attrs["cell_bounds"] = bounds_from
    return da
