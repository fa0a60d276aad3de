"""Basin means and volumes from gridded fields.

Weights are cell area × coverage (``cell_area`` on the authalic sphere, ``coverage_weights``
planar in lon/lat, see docs/architecture.md).  Only the basin's bounding box of the field is touched,
so on a dask-backed field only the chunks under the basin are ever read.  The weights are
small numpy arrays; the reduction is xarray arithmetic and stays lazy.
"""

from __future__ import annotations

from collections.abc import Hashable, Iterable
from typing import TYPE_CHECKING, Any

import numpy as np
import xarray as xr

from ..errors import BasinError, MismatchError, ParameterError, UnitsError
from ..io.grid import canonical_names
from ..io.units import parse_units
from ..provenance import with_history
from .area import AUTHALIC_RADIUS_M, cell_area
from .coverage import coverage_block
from .grid import horizontal_dims

if TYPE_CHECKING:
    from .basin import Basin

__all__ = ["ACRE_FOOT_M3", "basin_mean", "basin_means", "basin_volume", "basin_weights"]

#: One acre-foot in m³ with the international foot: 43 560 ft² × 1 ft × 0.3048³ m³/ft³.
ACRE_FOOT_M3 = 43_560 * 0.3048**3  # = 1233.48183754752

_VOLUME_UNITS = {"m3": 1.0, "acre-ft": ACRE_FOOT_M3}


def basin_weights(
    basin: Basin | None, grid: xr.DataArray | xr.Dataset, weights: xr.DataArray | None = None
) -> tuple[dict[str, slice], xr.DataArray]:
    """Area × coverage weights (m²) on the basin's bounding box of ``grid``.

    Returns ``(isel, w)``: the dict of slices to apply to the grid and the DataArray of
    weights on that block.  ``weights``, when given, is a precomputed
    :func:`coverage_weights` DataArray on the same grid (its bounding box is found again).

    Parameters
    ----------
    basin : Basin or None
        The basin; may be None when ``weights`` is given.
    grid : xarray.DataArray or xarray.Dataset
        Any object on the grid (see :func:`climwidgets.geo.grid.cell_bounds`).
    weights : xarray.DataArray, optional
        Precomputed coverage fractions in [0, 1] on the whole grid.

    Returns
    -------
    isel : dict of str to slice
        The basin's bounding box as positional slices of the grid's two dims.
    w : xarray.DataArray
        Cell area (m²) × coverage on that block, without coordinates.

    Raises
    ------
    climwidgets.errors.ParameterError
        When neither a basin nor weights are given, or weights are not fractions.
    climwidgets.errors.MismatchError
        When ``weights`` are on another grid.
    climwidgets.errors.BasinError
        When the weights are zero everywhere or the basin misses the grid.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> rain = xr.DataArray([[10.0, 20.0, 30.0], [10.0, 20.0, 30.0]], dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                     name="pr", attrs={"units": "mm"})
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> from climwidgets.geo.aggregate import basin_weights
    >>> isel, w = basin_weights(west, rain)
    >>> isel, w.shape
    ({'lat': slice(0, 2, None), 'lon': slice(0, 2, None)}, (2, 2))
    """
    dims = horizontal_dims(grid)
    if weights is None:
        if basin is None:
            raise ParameterError(
                "neither a basin nor weights were given",
                expected="a Basin",
                fix="pass a Basin (or weights=coverage_weights(basin, grid))",
            )
        (j0, j1, i0, i1), block = coverage_block(basin, grid)
    else:
        if tuple(weights.dims) != dims or any(weights.sizes[d] != grid.sizes[d] for d in dims):
            raise MismatchError(
                f"weights have dims {dict(weights.sizes)} but the field's grid is { {d: grid.sizes[d] for d in dims} }",
                source="weights",
                expected="coverage weights computed on the field's own grid",
                fix="compute weights with coverage_weights(basin, field)",
            )
        for d in dims:
            if d in weights.coords and d in grid.coords and not np.allclose(weights[d], grid[d]):
                raise MismatchError(
                    f"weights and field differ along '{d}'",
                    source="weights",
                    expected="the same coordinates",
                    fix="compute weights on the field's grid",
                )
        full = np.asarray(weights.values, dtype=float)
        if np.any(~np.isfinite(full)) or np.any(full < 0) or np.any(full > 1):
            raise ParameterError(
                "weights must be finite fractions in [0, 1]",
                source="weights",
                expected="coverage fractions",
                fix="use coverage_weights(basin, field)",
            )
        rows, cols = np.nonzero(full.any(axis=1))[0], np.nonzero(full.any(axis=0))[0]
        if rows.size == 0:
            raise BasinError(
                "the weights are zero everywhere",
                source="weights",
                expected="a basin that overlaps the grid",
                fix="check the basin and the grid",
            )
        j0, j1, i0, i1 = rows[0], rows[-1] + 1, cols[0], cols[-1] + 1
        block = full[j0:j1, i0:i1]
    isel = {dims[0]: slice(int(j0), int(j1)), dims[1]: slice(int(i0), int(i1))}
    area = cell_area(grid).isel(isel).values
    w = xr.DataArray(area * block, dims=dims)
    return isel, w


def _check_field(field: Any, func: str) -> xr.DataArray:
    """The field under the house names (CF ``latitude``/``longitude`` renamed to lat/lon)."""
    if not isinstance(field, xr.DataArray):
        raise ParameterError(
            f"{func} needs a DataArray, got {type(field).__name__}",
            expected="a DataArray on a lat/lon grid",
            fix="select one variable, e.g. ds['pr']",
        )
    return canonical_names(field)


def _weighted_mean(sub: xr.DataArray, w: xr.DataArray, dims: Iterable[Hashable]) -> tuple[xr.DataArray, xr.DataArray]:
    """(weighted mean, weight with data) of ``sub`` over ``dims`` with weights ``w`` (positional)."""
    valid = sub.notnull()
    num = xr.dot(sub.fillna(0.0), w, dim=list(dims))
    den = xr.dot(valid.astype(float), w, dim=list(dims))
    return num / den.where(den > 0), den


def _reduce(
    field: xr.DataArray, basin: Basin | None, weights: xr.DataArray | None
) -> tuple[xr.DataArray, xr.DataArray, float]:
    """(weighted mean, covered fraction, total weighted area m²) over the basin."""
    dims = horizontal_dims(field)
    isel, w = basin_weights(basin, field, weights)
    sub = field.isel(isel)
    # Drop the block's coordinates from the weights so alignment is positional.
    sub = sub.drop_vars([c for c in sub.coords if set(sub[c].dims) & set(dims)])
    total = float(w.sum())
    mean, den = _weighted_mean(sub, w, dims)
    order = [d for d in field.dims if d not in dims]  # other dims (members, time) in the field's order
    mean = mean.transpose(*order)
    covered = (den / total).clip(0.0, 1.0).transpose(*order)  # rounding can push a full slice to 1 + 1e-16
    return mean, covered, total


def basin_means(field: xr.DataArray, basins: Iterable[Basin]) -> xr.DataArray:
    """Area-weighted means of ``field`` over several basins at once, on a ``basin`` dimension.

    The same numbers as :func:`basin_mean` for each basin, from one selection of the
    field (the block covering every basin) and one weighted sum, so a lazy field is read
    once for all basins.  ``covered_fraction`` (basin, ...) is as in :func:`basin_mean`.

    Parameters
    ----------
    field : xarray.DataArray
        A field on a lat/lon (or curvilinear) grid, any other dims (time, members).
    basins : iterable of Basin
        The basins; their names label the ``basin`` dimension.

    Returns
    -------
    xarray.DataArray
        Means on ``basin`` first, then the field's other dims, with the
        ``covered_fraction`` coordinate, the field's units and a history line.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``field`` is not a DataArray.
    climwidgets.errors.BasinError
        When a basin does not touch the grid.

    References
    ----------
    Weights as in Jones, P. W. (1999). First- and second-order conservative remapping
    schemes for grids in spherical coordinates. Monthly Weather Review, 127(9),
    2204-2210 (area-weighted overlap means).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> rain = xr.DataArray([[10.0, 20.0, 30.0], [10.0, 20.0, 30.0]], dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                     name="pr", attrs={"units": "mm"})
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> from climwidgets.geo.aggregate import basin_means
    >>> east = cw.Basin.from_vertices([(2, 0), (3, 0), (3, 2), (2, 2)], name="east")
    >>> means = basin_means(rain, [west, east])
    >>> means.basin.values.tolist(), means.round(3).values.tolist()
    (['west', 'east'], [15.0, 30.0])
    """
    _check_field(field, "basin_means")
    basins = list(basins)
    dims = horizontal_dims(field)
    blocks = [basin_weights(b, field) for b in basins]
    lo = {d: min(isel[d].start for isel, _ in blocks) for d in dims}
    hi = {d: max(isel[d].stop for isel, _ in blocks) for d in dims}
    shape = tuple(hi[d] - lo[d] for d in dims)
    w = np.zeros((len(basins),) + shape)
    for k, (isel, block) in enumerate(blocks):
        rows = slice(isel[dims[0]].start - lo[dims[0]], isel[dims[0]].stop - lo[dims[0]])
        cols = slice(isel[dims[1]].start - lo[dims[1]], isel[dims[1]].stop - lo[dims[1]])
        w[k, rows, cols] = block.values
    weights = xr.DataArray(w, dims=("basin",) + dims, coords={"basin": [b.name for b in basins]})
    sub = field.isel({d: slice(lo[d], hi[d]) for d in dims})
    sub = sub.drop_vars([c for c in sub.coords if set(sub[c].dims) & set(dims)])
    mean, den = _weighted_mean(sub, weights, dims)
    total = weights.sum(dims)
    covered = (den / total).clip(0.0, 1.0)
    out = mean.assign_coords(covered_fraction=covered)
    out["covered_fraction"].attrs.update(
        units="1", long_name="fraction of the basin's weighted area with data in this slice"
    )
    out.name = field.name or "basin_mean"
    out.attrs = {k: v for k, v in field.attrs.items() if k in ("standard_name", "step", "cell_methods", "units")}
    out.attrs.update(
        weighting="cell area on a sphere of radius %.1f m × planar lon/lat coverage" % AUTHALIC_RADIUS_M,
        missing_data="cells with NaN are left out per slice; see the covered_fraction coordinate",
    )
    return with_history(out, "basin_means", field.attrs, basins=[b.name for b in basins])


def _finish(
    out: xr.DataArray,
    field: xr.DataArray,
    covered: xr.DataArray,
    name: Hashable,
    units: str,
    func: str,
    basin: Basin | None,
    **params: Any,
) -> xr.DataArray:
    out = out.assign_coords(covered_fraction=covered)
    out["covered_fraction"].attrs.update(
        units="1", long_name="fraction of the basin's weighted area with data in this slice"
    )
    out.name = name
    out.attrs = {k: v for k, v in field.attrs.items() if k in ("standard_name", "step", "cell_methods")}
    out.attrs.update(
        units=units,
        basin=getattr(basin, "name", "weights"),
        weighting="cell area on a sphere of radius %.1f m × planar lon/lat coverage" % AUTHALIC_RADIUS_M,
        missing_data="cells with NaN are left out per slice; see the covered_fraction coordinate",
    )
    return with_history(out, func, field.attrs, basin=getattr(basin, "name", "weights"), **params)


def _depth_to_mm(field: xr.DataArray) -> float:
    """Factor from the field's depth units (mm, cm, in, m, kg m-2 …) to mm, or a clear error."""
    fu = field.attrs.get("units")
    src = field.name or "field"
    if fu is None or str(fu).strip() == "":
        raise UnitsError(
            "has no 'units' attribute (xarray arithmetic such as field * 1.05 drops attributes)",
            source=src,
            variable=field.name,
            expected="a depth such as 'mm' (per step, a total, or a normal)",
            fix="keep the attributes: `with xr.set_options(keep_attrs=True): ...`, or "
            "`.assign_attrs(units='mm')` when the values are mm",
        )
    info = parse_units(fu, source=src, variable=field.name)
    if info.kind != "depth":
        raise UnitsError(
            f"units are {fu!r}, a rate",
            source=src,
            variable=field.name,
            expected="a depth in 'mm' (per step, a total, or a normal)",
            fix="convert to a depth in mm first (cw.open_precip, or a total such as cw.annual_totals)",
        )
    return info.to_mm


def basin_mean(field: xr.DataArray, basin: Basin | None, weights: xr.DataArray | None = None) -> xr.DataArray:
    """Area-weighted mean of ``field`` over ``basin``, keeping every other dimension.

    Weights are cell area × coverage.  Cells with NaN are left out slice by slice; the
    ``covered_fraction`` coordinate gives the share of the basin's weighted area that had
    data (1 when complete).  A slice with no data at all is NaN.  ``weights`` may be a
    precomputed ``coverage_weights(basin, field)`` to skip the geometry.
    Lazy on dask input.

    Parameters
    ----------
    field : xarray.DataArray
        A field on a lat/lon (or curvilinear) grid, any other dims (time, members).
    basin : Basin
        The basin (:class:`climwidgets.Basin`), in lon/lat degrees.
    weights : xarray.DataArray, optional
        Precomputed :func:`climwidgets.geo.coverage.coverage_weights` on the field's grid.

    Returns
    -------
    xarray.DataArray
        The mean over the basin, on the field's other dims, with the
        ``covered_fraction`` coordinate, the field's units and a history line.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``field`` is not a DataArray (or bad ``weights``).
    climwidgets.errors.BasinError
        When the basin does not touch the grid.
    climwidgets.errors.MismatchError
        When ``weights`` are on another grid.

    References
    ----------
    Weights as in Jones, P. W. (1999). First- and second-order conservative remapping
    schemes for grids in spherical coordinates. Monthly Weather Review, 127(9),
    2204-2210 (area-weighted overlap means).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> rain = xr.DataArray([[10.0, 20.0, 30.0], [10.0, 20.0, 30.0]], dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                     name="pr", attrs={"units": "mm"})
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> mean = cw.basin_mean(rain, west)  # the two western columns: 10 and 20 mm
    >>> round(float(mean), 3), float(mean.covered_fraction), mean.attrs["units"]
    (15.0, 1.0, 'mm')
    """
    field = _check_field(field, "basin_mean")
    mean, covered, _ = _reduce(field, basin, weights)
    return _finish(mean, field, covered, field.name or "basin_mean", field.attrs.get("units", ""), "basin_mean", basin)


def basin_volume(
    field: xr.DataArray, basin: Basin | None, units: str = "m3", weights: xr.DataArray | None = None
) -> xr.DataArray:
    """Volume of water over ``basin`` from a depth field in mm: basin mean depth × basin area.

    The area is :attr:`cw.Basin.area_m2` (the outline on the authalic sphere), the one area
    every table shows; with only ``weights`` it is Σ cell area × coverage.

    ``units`` is "m3" or "acre-ft" (international foot, :data:`ACRE_FOOT_M3`).  Where some
    cells are NaN in a slice, missing cells take the mean of the rest; ``covered_fraction``
    says how much had data.  Lazy on dask input.

    Parameters
    ----------
    field : xarray.DataArray
        A depth field (mm, or another depth unit it is converted from; not a rate).
    basin : Basin
        The basin (:class:`climwidgets.Basin`), in lon/lat degrees.
    units : {"m3", "acre-ft"}, default "m3"
        Volume units.
    weights : xarray.DataArray, optional
        Precomputed coverage weights on the field's grid.

    Returns
    -------
    xarray.DataArray
        ``volume`` on the field's other dims, with ``covered_fraction`` and a history line.

    Raises
    ------
    climwidgets.errors.UnitsError
        When the field has no units or a rate unit.
    climwidgets.errors.ParameterError
        When ``units`` is not "m3" or "acre-ft", or ``field`` is not a DataArray.
    climwidgets.errors.BasinError
        When the basin does not touch the grid.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> rain = xr.DataArray([[10.0, 20.0, 30.0], [10.0, 20.0, 30.0]], dims=("lat", "lon"),
    ...                     coords={"lat": [0.5, 1.5], "lon": [0.5, 1.5, 2.5]},
    ...                     name="pr", attrs={"units": "mm"})
    >>> west = cw.Basin.from_vertices([(0, 0), (2, 0), (2, 2), (0, 2)], name="west")
    >>> vol = cw.basin_volume(rain, west)  # 15 mm over 2 x 2 degrees at the equator
    >>> vol.attrs["units"], round(float(vol) / 1e9, 3)  # km³
    ('m3', 0.742)
    """
    field = _check_field(field, "basin_volume")
    if units not in _VOLUME_UNITS:
        raise ParameterError(
            f"units={units!r} is not supported", expected="'m3' or 'acre-ft'", fix="pass units='m3' or units='acre-ft'"
        )
    to_mm = _depth_to_mm(field)
    mean, covered, total = _reduce(field, basin, weights)
    # one area per basin: the outline's (Basin.area_m2), so volumes match every table
    area = basin.area_m2 if hasattr(basin, "area_m2") else total  # type: ignore[union-attr]
    volume = mean * (to_mm / 1000.0) * area / _VOLUME_UNITS[units]
    out = _finish(volume, field, covered, "volume", units, "basin_volume", basin, volume_units=units)
    out.attrs["long_name"] = f"water volume over basin {getattr(basin, 'name', '')}".strip()
    out.attrs.pop("standard_name", None)
    if units == "acre-ft":
        out.attrs["acre_foot_m3"] = ACRE_FOOT_M3
    return out
