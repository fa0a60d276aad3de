"""Regridding between precipitation grids: conservative (area-exact) and bilinear.

Conservative remapping keeps the area-weighted total of a depth field.  Between two
rectilinear lat/lon grids the spherical overlap of two cells is separable,

    area(i ∩ j) = R² · overlap_in_longitude(rad) · overlap_in_sin(latitude),

because a lat/lon cell has area R²·Δλ·(sin φ₂ − sin φ₁).  So the remap is two small sparse
matrices, ``out = Wlat · field · Wlonᵀ``.  Missing source cells are handled by remapping
the valid mask with the same weights and dividing, so no zeros leak into the mean; the
fraction of each target cell covered by valid source data is the ``coverage``.

Curvilinear sources (2-D ``lat(y, x)``, ``lon(y, x)``) use exact polygon overlaps of the
source quadrilaterals with the target rectangles, computed with shapely in the cylindrical
equal-area plane (x = λ in radians, y = sin φ), where a lat/lon rectangle has exactly its
spherical area.  The quadrilateral edges are straight in that plane (a convention: the
corners are inferred from the centres anyway).
"""

from __future__ import annotations

from collections import OrderedDict
from collections.abc import Callable, Hashable
from functools import partial
from typing import Any

import numpy as np
import scipy.sparse as sp
import xarray as xr

from ..errors import GridError, ParameterError
from ..geo.grid import cell_bounds, grid_token
from ..provenance import with_history

__all__ = ["regrid"]

_METHODS = ("conservative", "bilinear")
_COVERAGE = ("renormalise", "strict")
# a "full" cell may fall short of 1 by rounding in the overlap sums
_FULL_TOL = 1e-9
_CACHE: OrderedDict[Any, sp.csr_matrix] = OrderedDict()
_CACHE_SIZE = 16


# ---------------------------------------------------------------- grid description
def _bounds(obj: xr.DataArray | xr.Dataset) -> tuple[Any, Any, Any, Any]:
    """Rectilinear (lat_lo, lat_hi, lon_lo, lon_hi) in degrees, via geo.grid.cell_bounds."""
    b = cell_bounds(obj)
    return b.lat_lower, b.lat_upper, b.lon_lower, b.lon_upper


def _target_grid(target: Any, need_bounds: bool = True) -> tuple[Any, ...]:
    """(lat, lon, lat_lo, lat_hi, lon_lo, lon_hi) of a rectilinear target."""
    if isinstance(target, dict):
        if "lat" not in target or "lon" not in target:
            raise GridError(
                "the target grid has no lat/lon",
                source="target",
                expected="a dict with 1-D 'lat' and 'lon' arrays",
                fix="pass {'lat': [...], 'lon': [...]} or a DataArray on the target grid",
            )
        lat = np.atleast_1d(np.asarray(target["lat"], dtype=float))
        lon = np.atleast_1d(np.asarray(target["lon"], dtype=float))
        obj: xr.DataArray | xr.Dataset = xr.Dataset(coords={"lat": lat, "lon": lon})
    elif isinstance(target, (xr.DataArray, xr.Dataset)):
        if "lat" not in target.coords or "lon" not in target.coords:
            raise GridError(
                "the target grid has no lat/lon coordinates",
                source="target",
                expected="coordinates 'lat' and 'lon'",
                fix="pass a DataArray or Dataset with lat/lon coordinates",
            )
        obj = target
        lat = np.asarray(target["lat"].values, dtype=float)
        lon = np.asarray(target["lon"].values, dtype=float)
    else:
        raise GridError(
            f"the target grid is a {type(target).__name__}",
            source="target",
            expected="a DataArray, Dataset or dict with 1-D lat/lon",
            fix="pass a DataArray on the target grid",
        )
    if lat.ndim != 1 or lon.ndim != 1:
        raise GridError(
            "the target grid is curvilinear",
            source="target",
            expected="1-D lat and lon (a rectilinear target)",
            fix="regrid onto a regular lat/lon grid",
        )
    if not need_bounds:  # bilinear needs centres only; bounds are a courtesy
        try:
            return (lat, lon, *_bounds(obj))
        except GridError:
            return (lat, lon, None, None, None, None)
    return (lat, lon, *_bounds(obj))


# ---------------------------------------------------------------- separable weights
def _overlap_matrix(
    s_lo: np.ndarray,
    s_hi: np.ndarray,
    t_lo: np.ndarray,
    t_hi: np.ndarray,
    measure: Callable[[np.ndarray], np.ndarray],
    period: float | None = None,
) -> sp.csr_matrix:
    """Sparse (n_target, n_source) overlap of 1-D intervals, in ``measure`` units.

    ``measure`` is monotonic (sin∘radians for latitude, radians for longitude), so the
    overlap of [a, b] ∩ [c, d] is measure(min(b, d)) − measure(max(a, c)).  With a
    ``period`` the target intervals are also tried shifted by ±period (longitude wrap).
    """
    order = np.argsort(s_lo, kind="stable")
    slo, shi = s_lo[order], s_hi[order]
    if np.any(np.diff(shi) < 0):
        raise GridError(
            "source cell bounds overlap or are not sorted",
            source="field",
            expected="non-overlapping cells along each axis",
            fix="sort lat/lon and check the *_lower/*_upper coordinates",
        )
    rows: Any
    cols: Any
    vals: Any  # lists of pieces, then their concatenation
    rows, cols, vals = [], [], []
    shifts = (0.0,) if period is None else (-period, 0.0, period)
    if period is not None:  # bring targets into [min source edge, + period)
        base = slo[0]
        k = np.floor((t_lo - base) / period)
        t_lo, t_hi = t_lo - k * period, t_hi - k * period
    for shift in shifts:
        a, b = t_lo + shift, t_hi + shift
        first = np.searchsorted(shi, a, side="right")
        last = np.searchsorted(slo, b, side="left")
        count = np.maximum(last - first, 0)
        if not count.any():
            continue
        r = np.repeat(np.arange(a.size), count)
        offs = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
        c = np.repeat(first, count) + offs
        v = measure(np.minimum(b[r], shi[c])) - measure(np.maximum(a[r], slo[c]))
        keep = v > 0
        rows.append(r[keep]), cols.append(order[c[keep]]), vals.append(v[keep])
    if rows:
        rows, cols, vals = map(np.concatenate, (rows, cols, vals))
    m = sp.coo_matrix((vals, (rows, cols)), shape=(t_lo.size, s_lo.size))
    return m.tocsr()


def _sin_deg(x: Any) -> Any:
    return np.sin(np.deg2rad(x))


def separable_weights(
    src_lat_bounds: Any, src_lon_bounds: Any, tgt_lat_bounds: Any, tgt_lon_bounds: Any
) -> tuple[sp.csr_matrix, sp.csr_matrix]:
    """Overlap matrices ``(Wlat, Wlon)`` between two rectilinear grids.

    ``Wlat[i, j]`` is the overlap of target row i and source row j in sin φ, ``Wlon[k, l]``
    the overlap in longitude in radians (periodic), so that R²·Wlat[i, j]·Wlon[k, l] is the
    spherical area shared by target cell (i, k) and source cell (j, l).
    """
    wlat = _overlap_matrix(
        *map(np.asarray, src_lat_bounds),  # type: ignore[arg-type, call-arg]
        *map(np.asarray, tgt_lat_bounds),
        _sin_deg,
    )
    wlon = _overlap_matrix(
        *map(np.asarray, src_lon_bounds),  # type: ignore[arg-type, call-arg, misc]
        *map(np.asarray, tgt_lon_bounds),
        np.deg2rad,
        period=360.0,
    )
    return wlat, wlon


def _finish(
    num: np.ndarray, den: np.ndarray, tgt_area: np.ndarray, min_coverage: float, strict: bool
) -> tuple[np.ndarray, np.ndarray]:
    cov = den / tgt_area
    with np.errstate(invalid="ignore", divide="ignore"):
        out = num / den
    short = cov < (1.0 - _FULL_TOL) if strict else cov < min_coverage - _FULL_TOL
    out[short | (den <= 0)] = np.nan
    return out, np.clip(cov, 0.0, 1.0)


def _apply_separable(
    wlat: Any, wlonT: Any, tgt_area: np.ndarray, min_coverage: float, strict: bool, x: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    """Block function: x (..., nlat, nlon) -> value and coverage (..., ntlat, ntlon)."""
    lead = x.shape[:-2]
    x = x.reshape((-1,) + x.shape[-2:]).astype(float, copy=False)
    valid = np.isfinite(x)

    def remap(a: np.ndarray) -> np.ndarray:
        n, ny, nx = a.shape
        a = (a.reshape(n * ny, nx) @ wlonT) if nx else a  # lon: (n*ny, ntx)
        a = np.asarray(a).reshape(n, ny, -1).transpose(1, 0, 2).reshape(ny, -1)
        a = np.asarray(wlat @ a)  # lat: (nty, n*ntx)
        return a.reshape(a.shape[0], n, -1).transpose(1, 0, 2)

    num = remap(np.where(valid, x, 0.0))
    den = remap(valid.astype(float))
    out, cov = _finish(num, den, tgt_area, min_coverage, strict)
    shape = lead + out.shape[-2:]
    return out.reshape(shape), cov.reshape(shape)


# ---------------------------------------------------------------- curvilinear weights
def _curvilinear_matrix(
    field: xr.DataArray, t_lat_b: tuple[np.ndarray, np.ndarray], t_lon_b: tuple[np.ndarray, np.ndarray], key: Any
) -> sp.csr_matrix:
    """Sparse (n_target_cells, n_source_cells) overlap areas on the unit sphere."""
    import shapely

    if key in _CACHE:
        _CACHE.move_to_end(key)
        return _CACHE[key]
    b: Any = cell_bounds(field)  # curvilinear: the corner fields are set
    ny, nx = b.lat_corners.shape[:2]
    qlat = b.lat_corners.reshape(-1, 4)
    # corners come unwrapped per cell, so no quad edge spans the antimeridian
    qlon = b.lon_corners.reshape(-1, 4)
    xy = np.stack([np.deg2rad(qlon), _sin_deg(qlat)], -1)
    quads = shapely.polygons(xy)

    (tlo_lat, thi_lat), (tlo_lon, thi_lon) = t_lat_b, t_lon_b
    nty, ntx = tlo_lat.size, tlo_lon.size
    ylo = np.repeat(_sin_deg(tlo_lat), ntx)
    yhi = np.repeat(_sin_deg(thi_lat), ntx)
    xlo = np.tile(np.deg2rad(tlo_lon), nty)
    xhi = np.tile(np.deg2rad(thi_lon), nty)
    ids: Any
    boxes: Any  # lists of pieces, then their concatenation
    ids, boxes = [], []
    for k in (-1, 0, 1):  # target copies one turn either side catch wrapped quads
        boxes.append(shapely.box(xlo + 2 * np.pi * k, ylo, xhi + 2 * np.pi * k, yhi))
        ids.append(np.arange(nty * ntx))
    boxes, ids = np.concatenate(boxes), np.concatenate(ids)
    tree = shapely.STRtree(boxes)
    src, tgt = tree.query(quads, predicate="intersects")
    area = shapely.area(shapely.intersection(quads[src], boxes[tgt]))
    keep = area > 0
    m = sp.coo_matrix((area[keep], (ids[tgt[keep]], src[keep])), shape=(nty * ntx, ny * nx)).tocsr()
    _CACHE[key] = m
    while len(_CACHE) > _CACHE_SIZE:
        _CACHE.popitem(last=False)
    return m


def _apply_matrix(
    w: Any, tgt_area: np.ndarray, shape_out: tuple[int, ...], min_coverage: float, strict: bool, x: np.ndarray
) -> tuple[np.ndarray, np.ndarray]:
    lead = x.shape[:-2]
    x = x.reshape((-1, x.shape[-2] * x.shape[-1])).astype(float, copy=False)
    valid = np.isfinite(x)
    num = np.asarray(w @ np.where(valid, x, 0.0).T).T
    den = np.asarray(w @ valid.astype(float).T).T
    out, cov = _finish(num, den, tgt_area.ravel(), min_coverage, strict)
    shape = lead + shape_out
    return out.reshape(shape), cov.reshape(shape)


# ---------------------------------------------------------------- public function
def _check_params(method: str, coverage: str, min_coverage: float) -> None:
    if method not in _METHODS:
        raise ParameterError(
            f"unknown regridding method {method!r}",
            source="regrid",
            expected=" or ".join(repr(m) for m in _METHODS),
            fix="use method='conservative' for depths (keeps totals)",
        )
    if coverage not in _COVERAGE:
        raise ParameterError(
            f"unknown coverage rule {coverage!r}",
            source="regrid",
            expected="'renormalise' or 'strict'",
            fix="use coverage='renormalise' with min_coverage, or 'strict'",
        )
    if not (0.0 < float(min_coverage) <= 1.0):
        raise ParameterError(
            f"min_coverage={min_coverage} is outside (0, 1]",
            source="regrid",
            expected="a fraction of the target cell in (0, 1]",
            fix="use e.g. min_coverage=0.5",
        )


def _source_kind(field: xr.DataArray) -> str:
    if "lat" not in field.coords or "lon" not in field.coords:
        raise GridError(
            "the field has no lat/lon coordinates",
            source=field.name or "field",
            expected="coordinates 'lat' and 'lon' (1-D or 2-D)",
            fix="open the file with cw.open_precip or add lat/lon coordinates",
        )
    if field["lat"].ndim == 1 and field["lon"].ndim == 1:
        if "lat" not in field.dims or "lon" not in field.dims:
            raise GridError(
                "lat/lon are not dimensions of the field",
                source=field.name or "field",
                expected="dims (..., lat, lon)",
                fix="swap_dims to lat/lon",
            )
        return "rect"
    if field["lat"].ndim == 2 and field["lat"].dims == field["lon"].dims:
        return "curv"
    raise GridError(
        "lat/lon coordinates have an unexpected shape",
        source=field.name or "field",
        expected="1-D lat and lon, or 2-D lat(y, x) and lon(y, x)",
        fix="check the grid coordinates of the file",
    )


def regrid(
    field: xr.DataArray,
    target: Any,
    method: str = "conservative",
    coverage: str = "renormalise",
    min_coverage: float = 0.5,
    return_coverage: bool = False,
) -> Any:  # a DataArray, or (regridded, coverage)
    """Remap a precipitation field onto the lat/lon grid of ``target``.

    Parameters
    ----------
    field
        Depth per step (mm), dims (..., lat, lon) rectilinear or (..., y, x) with 2-D
        lat/lon.  Cell bounds are read from ``lat_lower``/``lat_upper``/``lon_lower``/
        ``lon_upper`` coordinates where present, else inferred from the centres.
    target
        DataArray or Dataset with lat/lon coordinates (and optional bounds), or a dict of
        1-D ``lat`` and ``lon`` arrays.
    method
        ``"conservative"`` (area-weighted mean over exact spherical overlaps; keeps the
        area-weighted total) or ``"bilinear"`` (linear in lat and lon, as
        ``DataArray.interp``; periodic in longitude for a global source).
    coverage
        ``"renormalise"``: the mean over the valid part of each target cell, NaN where the
        valid part covers less than ``min_coverage`` of the cell.  ``"strict"``: NaN
        wherever the cell is not fully covered by valid source cells.
    min_coverage
        With ``coverage="renormalise"``: the least fraction of a target cell, in (0, 1],
        that valid source data must cover (default 0.5).
    return_coverage
        If True return ``(regridded, coverage)``; ``coverage`` is the fraction (units "1")
        of each target cell covered by valid source data, per time step.

    Returns
    -------
    xarray.DataArray or tuple of xarray.DataArray
        The field on the target's (lat, lon) grid (with the target's bounds as
        ``lat_lower`` ... coordinates where known), the field's attrs and a history line;
        with ``return_coverage`` the pair ``(regridded, coverage)``.  Lazy on dask input
        (one task per time chunk).

    Raises
    ------
    climwidgets.errors.ParameterError
        An unknown method or coverage rule, ``min_coverage`` outside (0, 1], a field that
        is not a DataArray, or bilinear regridding of a curvilinear source.
    climwidgets.errors.GridError
        A field or target without usable lat/lon, or grids that do not overlap.

    References
    ----------
    Jones, P. W. (1999). First- and second-order conservative remapping schemes for grids
    in spherical coordinates. Monthly Weather Review, 127(9), 2204-2210.
    https://doi.org/10.1175/1520-0493(1999)127<2204:FASOCR>2.0.CO;2

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> field = xr.DataArray(np.tile([1.0, 3.0, 5.0, 7.0], (4, 1)), dims=("lat", "lon"),
    ...                      coords={"lat": [0.5, 1.5, 2.5, 3.5], "lon": [10.5, 11.5, 12.5, 13.5]},
    ...                      attrs={"units": "mm"})  # 1-degree cells
    >>> coarse = {"lat": np.array([1.0, 3.0]), "lon": np.array([11.0, 13.0])}  # 2-degree cells
    >>> cw.regrid(field, coarse).values  # each coarse cell: the mean of its four
    array([[2., 6.],
           [2., 6.]])
    >>> field[0, 0] = np.nan  # a missing cell: the mean of the valid part, and its coverage
    >>> out, cov = cw.regrid(field, coarse, return_coverage=True)
    >>> out.values.round(3), cov.values.round(2)
    (array([[2.333, 6.   ],
           [2.   , 6.   ]]), array([[0.75, 1.  ],
           [1.  , 1.  ]]))
    """
    _check_params(method, coverage, min_coverage)
    if not isinstance(field, xr.DataArray):
        raise ParameterError(
            f"field is a {type(field).__name__}",
            source="regrid",
            expected="an xarray.DataArray",
            fix="select one variable first",
        )
    kind = _source_kind(field)
    lat, lon, tlat_lo, tlat_hi, tlon_lo, tlon_hi = _target_grid(target, method != "bilinear")
    params = dict(
        method=method, coverage=coverage, min_coverage=float(min_coverage), target=f"{lat.size}x{lon.size} lat/lon"
    )
    tcoords = {"lat": lat, "lon": lon}
    if tlat_lo is not None:
        tcoords.update(
            lat_lower=("lat", tlat_lo),
            lat_upper=("lat", tlat_hi),
            lon_lower=("lon", tlon_lo),
            lon_upper=("lon", tlon_hi),
        )

    if method == "bilinear":
        if kind != "rect":
            raise ParameterError(
                "bilinear regridding needs a rectilinear source",
                source=field.name or "field",
                expected="1-D lat and lon",
                fix="use method='conservative' for curvilinear grids",
            )
        out = _bilinear(field, lat, lon).assign_coords(tcoords)
        out.attrs = dict(field.attrs)
        out = with_history(out, "regrid", field.attrs, **params)
        cov = xr.ones_like(out).where(out.notnull(), 0.0) if return_coverage else None
        return (out, cov) if return_coverage else out

    strict = coverage == "strict"
    core: list[Hashable]
    func: Callable[..., tuple[np.ndarray, np.ndarray]]
    args: tuple[Any, ...]
    tgt_area = np.outer(_sin_deg(tlat_hi) - _sin_deg(tlat_lo), np.deg2rad(tlon_hi - tlon_lo))
    if kind == "rect":
        slat_lo, slat_hi, slon_lo, slon_hi = _bounds(field)
        wlat, wlon = separable_weights((slat_lo, slat_hi), (slon_lo, slon_hi), (tlat_lo, tlat_hi), (tlon_lo, tlon_hi))
        if wlat.nnz == 0 or wlon.nnz == 0:
            _no_overlap(field)
        core = ["lat", "lon"]
        func, args = _apply_separable, (wlat, wlon.T.tocsr(), tgt_area, float(min_coverage), strict)
    else:
        ydim, xdim = field["lat"].dims
        key = (
            grid_token(field),
            lat.tobytes(),
            lon.tobytes(),
            tlat_lo.tobytes(),
            tlat_hi.tobytes(),
            tlon_lo.tobytes(),
            tlon_hi.tobytes(),
        )
        w = _curvilinear_matrix(field, (tlat_lo, tlat_hi), (tlon_lo, tlon_hi), key)
        if w.nnz == 0:
            _no_overlap(field)
        core = [ydim, xdim]
        func, args = _apply_matrix, (w, tgt_area, tgt_area.shape, float(min_coverage), strict)

    src = field.drop_vars([c for c in field.coords if c not in field.dims and set(field[c].dims) & set(core)])
    if src.chunks is not None:
        src = src.chunk({d: -1 for d in core})
    val, cov = xr.apply_ufunc(
        partial(func, *args),
        src,
        input_core_dims=[core],
        output_core_dims=[["lat", "lon"], ["lat", "lon"]],
        exclude_dims=set(core),
        dask="parallelized",
        output_dtypes=[float, float],
        dask_gufunc_kwargs={"output_sizes": {"lat": lat.size, "lon": lon.size}},
    )
    val = val.assign_coords(tcoords)
    val.attrs = dict(field.attrs)
    val.name = field.name
    val = with_history(val, "regrid", field.attrs, **params)
    if not return_coverage:
        return val
    cov = cov.assign_coords(tcoords)
    cov.name = "coverage"
    cov.attrs = {"units": "1", "long_name": "fraction of the target cell covered by valid source data"}
    return val, with_history(cov, "regrid", field.attrs, **params)


def _no_overlap(field: xr.DataArray) -> None:
    raise GridError(
        "the source and target grids do not overlap",
        source=field.name or "field",
        expected="a target grid that shares area with the source grid",
        fix="check the target's lat/lon ranges and the source's longitude convention",
    )


def _bilinear(field: xr.DataArray, lat: np.ndarray, lon: np.ndarray) -> xr.DataArray:
    """Linear in lat and lon as DataArray.interp, with longitude wrap for global sources."""
    src = field.drop_vars([c for c in ("lat_lower", "lat_upper", "lon_lower", "lon_upper") if c in field.coords])
    slon = np.asarray(src["lon"].values, dtype=float)
    try:
        _, _, lo, hi = _bounds(field)
    except GridError:  # a single column: no wrap to worry about
        lo, hi = np.zeros(1), np.zeros(1)
    if slon.size > 1 and np.isclose(hi.max() - lo.min(), 360.0):
        # pad one column each side so points between the last and first centre interpolate
        left = src.isel(lon=[-1]).assign_coords(lon=[slon[-1] - 360.0])
        right = src.isel(lon=[0]).assign_coords(lon=[slon[0] + 360.0])
        src = xr.concat([left, src, right], dim="lon")
        if src.chunks is not None:
            src = src.chunk({"lon": -1})
        lon = (lon - slon[0]) % 360.0 + slon[0]
    return src.interp(lat=lat, lon=lon, method="linear")
