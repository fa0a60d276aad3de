"""Basin means and volumes from gridded fields.

Weights are cell area × coverage (``cell_area`` on the authalic sphere, ``coverage_weights``
planar in lon/lat, DESIGN.md §3).  Only the basin's bounding box of the field is touched,
so on a dask-backed field only the chunks under the basin are ever read.  The weights are
small numpy arrays; the reduction is xarray arithmetic and stays lazy.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from ..errors import BasinError, MismatchError, ParameterError, UnitsError
from ..provenance import with_history
from .area import AUTHALIC_RADIUS_M, cell_area
from .coverage import coverage_block
from .grid import horizontal_dims

__all__ = ["ACRE_FOOT_M3", "basin_mean", "basin_volume", "basin_weights"]

#: One acre-foot in m³ with the international foot: 43 560 ft² × 1 ft × 0.3048³ m³/ft³.
ACRE_FOOT_M3 = 43_560 * 0.3048**3  # = 1233.48183754752

_VOLUME_UNITS = {"m3": 1.0, "acre-ft": ACRE_FOOT_M3}


def basin_weights(basin, grid, weights=None):
    """Area × coverage weights (m²) on the basin's bounding box of ``grid``.

    Returns ``(isel, w)``: the dict of slices to apply to the grid and the DataArray of
    weights on that block.  ``weights``, when given, is a precomputed
    :func:`coverage_weights` DataArray on the same grid (its bounding box is found again).
    """
    dims = horizontal_dims(grid)
    if weights is None:
        if basin is None:
            raise ParameterError("neither a basin nor weights were given", expected="a Basin",
                                 fix="pass a Basin (or weights=coverage_weights(basin, grid))")
        (j0, j1, i0, i1), block = coverage_block(basin, grid)
    else:
        if tuple(weights.dims) != dims or any(weights.sizes[d] != grid.sizes[d] for d in dims):
            raise MismatchError(
                f"weights have dims {dict(weights.sizes)} but the field's grid is "
                f"{ {d: grid.sizes[d] for d in dims} }",
                source="weights", expected="coverage weights computed on the field's own grid",
                fix="compute weights with coverage_weights(basin, field)")
        for d in dims:
            if d in weights.coords and d in grid.coords and not np.allclose(weights[d], grid[d]):
                raise MismatchError(f"weights and field differ along '{d}'", source="weights",
                                    expected="the same coordinates", fix="compute weights on the field's grid")
        full = np.asarray(weights.values, dtype=float)
        if np.any(~np.isfinite(full)) or np.any(full < 0) or np.any(full > 1):
            raise ParameterError("weights must be finite fractions in [0, 1]", source="weights",
                                 expected="coverage fractions", fix="use coverage_weights(basin, field)")
        rows, cols = np.nonzero(full.any(axis=1))[0], np.nonzero(full.any(axis=0))[0]
        if rows.size == 0:
            raise BasinError("the weights are zero everywhere", source="weights",
                             expected="a basin that overlaps the grid", fix="check the basin and the grid")
        j0, j1, i0, i1 = rows[0], rows[-1] + 1, cols[0], cols[-1] + 1
        block = full[j0:j1, i0:i1]
    isel = {dims[0]: slice(int(j0), int(j1)), dims[1]: slice(int(i0), int(i1))}
    area = cell_area(grid).isel(isel).values
    w = xr.DataArray(area * block, dims=dims)
    return isel, w


def _check_field(field, func):
    if not isinstance(field, xr.DataArray):
        raise ParameterError(f"{func} needs a DataArray, got {type(field).__name__}",
                             expected="a DataArray on a lat/lon grid", fix="select one variable, e.g. ds['pr']")


def _reduce(field, basin, weights):
    """(weighted mean, covered fraction, total weighted area m²) over the basin."""
    dims = horizontal_dims(field)
    isel, w = basin_weights(basin, field, weights)
    sub = field.isel(isel)
    # Drop the block's coordinates from the weights so alignment is positional.
    sub = sub.drop_vars([c for c in sub.coords if set(sub[c].dims) & set(dims)])
    total = float(w.sum())
    valid = sub.notnull()
    num = xr.dot(sub.fillna(0.0), w, dim=list(dims))
    den = xr.dot(valid.astype(float), w, dim=list(dims))
    mean = num / den.where(den > 0)
    covered = (den / total).clip(0.0, 1.0)  # rounding can push a full slice to 1 + 1e-16
    return mean, covered, total


def _finish(out, field, covered, name, units, func, basin, **params):
    out = out.assign_coords(covered_fraction=covered)
    out["covered_fraction"].attrs.update(
        units="1", long_name="fraction of the basin's weighted area with data in this slice")
    out.name = name
    out.attrs = {k: v for k, v in field.attrs.items() if k in ("standard_name", "step", "cell_methods")}
    out.attrs.update(
        units=units,
        basin=getattr(basin, "name", "weights"),
        weighting="cell area on a sphere of radius %.1f m × planar lon/lat coverage" % AUTHALIC_RADIUS_M,
        missing_data="cells with NaN are left out per slice; see the covered_fraction coordinate",
    )
    return with_history(out, func, field.attrs, basin=getattr(basin, "name", "weights"), **params)


def basin_mean(field: xr.DataArray, basin, weights=None) -> xr.DataArray:
    """Area-weighted mean of ``field`` over ``basin``, keeping every other dimension.

    Weights are cell area × coverage.  Cells with NaN are left out slice by slice; the
    ``covered_fraction`` coordinate gives the share of the basin's weighted area that had
    data (1 when complete).  A slice with no data at all is NaN.  ``weights`` may be a
    precomputed ``coverage_weights(basin, field)`` to skip the geometry.
    Lazy on dask input.
    """
    _check_field(field, "basin_mean")
    mean, covered, _ = _reduce(field, basin, weights)
    return _finish(mean, field, covered, field.name or "basin_mean", field.attrs.get("units", ""),
                   "basin_mean", basin)


def basin_volume(field: xr.DataArray, basin, units: str = "m3", weights=None) -> xr.DataArray:
    """Volume of water over ``basin`` from a depth field in mm: Σ depth/1000 × area × coverage.

    ``units`` is "m3" or "acre-ft" (international foot, :data:`ACRE_FOOT_M3`).  Where some
    cells are NaN in a slice, the volume is the basin mean times the basin area (missing
    cells take the mean of the rest); ``covered_fraction`` says how much had data.  With
    complete data this is exactly the sum above.  Lazy on dask input.
    """
    _check_field(field, "basin_volume")
    if units not in _VOLUME_UNITS:
        raise ParameterError(f"units={units!r} is not supported", expected="'m3' or 'acre-ft'",
                             fix="pass units='m3' or units='acre-ft'")
    fu = field.attrs.get("units")
    if fu != "mm":
        raise UnitsError(f"units are {fu!r}", source=field.name or "field", variable=field.name,
                         expected="a depth in 'mm' (per step, a total, or a normal)",
                         fix="convert to a depth in mm first (e.g. with cw.open_precip or annual_totals)")
    mean, covered, total = _reduce(field, basin, weights)
    volume = mean / 1000.0 * total / _VOLUME_UNITS[units]
    out = _finish(volume, field, covered, "volume", units, "basin_volume", basin, volume_units=units)
    out.attrs["long_name"] = f"water volume over basin {getattr(basin, 'name', '')}".strip()
    out.attrs.pop("standard_name", None)
    if units == "acre-ft":
        out.attrs["acre_foot_m3"] = ACRE_FOOT_M3
    return out
