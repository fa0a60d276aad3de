"""Windward/leeward contrast across a mountain crest, and precipitation-elevation gradients.

``rain_shadow`` compares area-weighted mean precipitation on the windward and leeward
sides of a crest, by along-wind distance from it; ``elevation_gradient`` fits the change
of precipitation with height (mm per 100 m).  Crest geometry (derived from the terrain or
drawn by hand) and along-wind distances come from :mod:`climwidgets.compute._crest`.

Distances and crest geometry use coordinates and the static terrain only; the
precipitation field stays lazy on dask input.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr
from scipy import stats

from ..errors import InsufficientDataError, ParameterError
from ..provenance import with_history
from . import _crest

__all__ = ["crest_from_elevation", "rain_shadow", "elevation_gradient", "side_mask"]

_BOOT_DIM = "year"


def crest_from_elevation(
    elevation: xr.DataArray, wind_from: float = 270.0, min_height: float | None = None
) -> list[tuple[float, float]]:
    """Crest polyline ``[(lon, lat), ...]`` derived from the terrain.

    Method: the grid is cut into lines parallel to the wind and the highest cell of each
    line is a crest point.  For winds exactly along a grid axis the lines are the grid
    rows (westerly or easterly winds) or columns (northerly or southerly winds).  For any
    other direction, cells are grouped by their cross-wind coordinate in the local
    tangent plane at the grid's mean latitude, in strips one cell apart across the wind
    (the row spacing for a W/E wind, about dx/√2 on a square grid for a diagonal wind).
    Points are returned in order across the wind.

    Limits: one crest only — with several ranges the highest wins line by line and the
    polyline may jump between them; on a plateau or flat top the first cell in grid
    order (the westmost or southmost) is taken; for winds oblique to the grid the strips
    hold a staircase of cells, so the crest is only as smooth as the grid.  Lines whose
    highest cell is below ``min_height`` (m) are skipped, which trims the crest where the
    range ends; draw the ridge by hand when the terrain is more complex.

    Parameters
    ----------
    elevation
        Terrain height in metres on a (lat, lon) grid (numpy- or dask-backed; the 2-D
        layer is read, since the crest is geometry).
    wind_from
        Direction the wind blows from, degrees clockwise from north (270 = westerly).
    min_height
        Optional lowest crest height in metres.

    Returns
    -------
    list of tuple of float
        The crest points ``(lon, lat)`` in degrees, in order across the wind.

    Raises
    ------
    climwidgets.errors.ParameterError
        A wind direction outside 0-360.
    climwidgets.errors.GridError
        An elevation without usable 1-D lat/lon coordinates.
    climwidgets.errors.InsufficientDataError
        No usable cell, or fewer than two crest points (e.g. none reaching ``min_height``).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> lat = np.arange(-0.45, 0.5, 0.1).round(2)  # 10 x 10 cells of 0.1 degree, open ocean
    >>> lon = np.arange(-170.45, -169.5, 0.1).round(2)
    >>> z = np.broadcast_to(1500.0 - 2500.0 * np.abs(lon + 170.05), (10, 10))  # N-S ridge
    >>> elevation = xr.DataArray(z, dims=("lat", "lon"), coords={"lat": lat, "lon": lon},
    ...                          attrs={"units": "m"})
    >>> crest = cw.crest_from_elevation(elevation, wind_from=270.0)  # the top of each row
    >>> len(crest), [(float(x), float(y)) for x, y in crest[:2]]
    (10, [(-170.05, -0.45), (-170.05, -0.35)])
    """
    func = "crest_from_elevation"
    w = _crest.check_wind_from(wind_from, func)
    lat, lon = _crest.grid_coords(elevation, func, "elevation")
    z = np.asarray(elevation.transpose("lat", "lon").values, dtype=float)
    return _crest.crest_points(z, lat, lon, w, min_height, func)


def _parse_bands(band_km: Any, func: str) -> tuple[list[tuple[float, float]], bool]:
    """Bands as a list of (lo, hi) km and whether to drop the band dimension.

    Accepted: one pair ``(lo, hi)``; a sequence of more than two increasing edges
    ``(0, 25, 50, 100)``; or a sequence of pairs ``[(0, 25), (25, 50)]``.
    """
    fix = "pass band_km=(0, 50), band_km=(0, 25, 50, 100) or band_km=[(0, 25), (50, 100)]"
    try:
        arr = np.asarray(band_km, dtype=float)
    except (TypeError, ValueError):
        arr = np.asarray([np.nan])
    if arr.ndim == 1 and arr.size >= 2:
        bands = np.column_stack([arr[:-1], arr[1:]])
        squeeze = arr.size == 2
    elif arr.ndim == 2 and arr.shape[1] == 2 and arr.shape[0] >= 1:
        bands, squeeze = arr, False
    else:
        raise ParameterError(
            f"band_km={band_km!r} is not a band or a list of bands",
            source=func,
            variable="band_km",
            expected="distances from the crest in km",
            fix=fix,
        )
    if np.any(np.isnan(bands)) or np.any(bands[:, 0] < 0) or np.any(bands[:, 1] <= bands[:, 0]):
        raise ParameterError(
            f"band_km={band_km!r} holds a band that is empty, negative or not increasing",
            source=func,
            variable="band_km",
            expected="bands (lo, hi) with 0 <= lo < hi, in km from the crest on each side",
            fix=fix,
        )
    return [(float(a), float(b)) for a, b in bands], squeeze


def _coverage(basin: Any, field: xr.DataArray, func: str) -> xr.DataArray | None:
    if basin is None:
        return None
    if isinstance(basin, xr.DataArray):
        _crest.check_same_grid(field, basin, func, "basin coverage")
        cov = np.asarray(basin.transpose("lat", "lon").values, dtype=float)
    else:
        try:
            from ..geo.coverage import coverage_weights
        except ImportError as exc:
            raise ParameterError(
                "basin restriction needs climwidgets.geo.coverage, which is not available",
                source=func,
                variable="basin",
                expected="a climwidgets Basin (with climwidgets.geo installed) or a DataArray "
                "of covered fractions in [0, 1] on the field's grid",
                fix="pass the coverage fractions as a DataArray",
            ) from exc
        cov = np.asarray(coverage_weights(basin, field).transpose("lat", "lon").values, dtype=float)
    if np.any(cov[np.isfinite(cov)] < 0) or np.any(cov[np.isfinite(cov)] > 1 + 1e-9):
        raise ParameterError(
            "basin coverage holds values outside [0, 1]",
            source=func,
            variable="basin",
            expected="covered fraction of each cell in [0, 1]",
            fix="pass coverage fractions, not areas or percent",
        )
    return xr.DataArray(np.nan_to_num(cov), coords={"lat": field["lat"], "lon": field["lon"]}, dims=("lat", "lon"))


def _weights(field: xr.DataArray, basin: Any, func: str) -> xr.DataArray:
    """Cell area (m²), times basin coverage when a basin is given."""
    area = _crest.cell_area(field)
    cov = _coverage(basin, field, func)
    return area if cov is None else area * cov


def side_mask(distance_km: xr.DataArray, side: str, band_km: Any = None) -> xr.DataArray:
    """Boolean mask of the windward or leeward cells, from ``rain_shadow(...)["distance_km"]``.

    ``side`` is "windward" (distance < 0, upwind of the crest) or "leeward" (distance > 0);
    cells on the crest line itself (distance 0) and cells without a distance (NaN) belong
    to neither.  ``band_km=(lo, hi)`` keeps only cells with ``lo <= |distance| < hi``.

    Parameters
    ----------
    distance_km
        Signed along-wind distance from the crest (km), as ``rain_shadow(...)["distance_km"]``.
    side
        "windward" or "leeward".
    band_km
        Optional ``(lo, hi)`` band of distances in km.

    Returns
    -------
    xarray.DataArray
        Boolean ``<side>_mask`` on the grid of ``distance_km``.

    Raises
    ------
    climwidgets.errors.ParameterError
        An unknown ``side`` or a malformed band.

    Examples
    --------
    >>> import xarray as xr
    >>> from climwidgets.compute.orographic import side_mask
    >>> distance = xr.DataArray([-30.0, -5.0, 0.0, 5.0, 30.0], dims="lon")
    >>> side_mask(distance, "windward").values, side_mask(distance, "leeward", band_km=(0, 10)).values
    (array([ True,  True, False, False, False]), array([False, False, False,  True, False]))
    """
    if side not in ("windward", "leeward"):
        raise ParameterError(
            f"side={side!r} is not a side of the crest",
            source="side_mask",
            variable="side",
            expected="'windward' or 'leeward'",
            fix="pass side='windward' or side='leeward'",
        )
    d = distance_km
    mask = (d < 0) if side == "windward" else (d > 0)
    if band_km is not None:
        ((lo, hi),) = _parse_bands(band_km, "side_mask")[0][:1]
        mask = mask & (abs(d) >= lo) & (abs(d) < hi)
    mask.name = f"{side}_mask"
    mask.attrs = {"long_name": f"{side} cells", "units": "1"}
    return mask


def _bootstrap_bounds(ww: np.ndarray, lw: np.ndarray, idx: np.ndarray, q: Any) -> np.ndarray:
    """Percentile bounds of the resampled leeward/windward ratio (numpy core, year last)."""
    ww_b = np.nanmean(ww[..., idx], axis=-1)  # (..., n_boot)
    lw_b = np.nanmean(lw[..., idx], axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = lw_b / ww_b
    out = np.nanquantile(ratio, q, axis=-1)  # (2, ...)
    return np.moveaxis(out, 0, -1)


def rain_shadow(
    field: xr.DataArray,
    wind_from: float = 270.0,
    ridge: Sequence[tuple[float, float]] | None = None,
    elevation: xr.DataArray | None = None,
    band_km: Any = (0, 50),
    basin: Any = None,
    n_boot: int = 1000,
    ci: float = 0.9,
    seed: int = 0,
    beyond_ends: str = "exclude",
) -> xr.Dataset:
    """Windward/leeward contrast of a precipitation climatology across a crest.

    Parameters
    ----------
    field
        Precipitation climatology in mm on a rectilinear (lat, lon) grid; other dims are
        kept.  With a ``year`` dim the per-year contrast and a bootstrap interval are added.
    wind_from
        Prevailing wind direction in meteorological degrees: the direction the wind blows
        from, clockwise from north, 0-360.  270 (westerly): the windward side is west of
        the crest; 90 (easterly) flips the sides.
    ridge, elevation
        Exactly one: the crest as ``[(lon, lat), ...]`` (at least 2 points), or the terrain
        in metres on the field's grid, from which :func:`crest_from_elevation` derives it.
    band_km
        Distance bands from the crest, in km, applied on both sides: one band ``(lo, hi)``
        (results without a band dimension), or several as increasing edges
        ``(0, 25, 50, 100)`` or pairs ``[(0, 25), (50, 100)]`` (results on a ``band`` dim
        with coordinates ``band_lower_km``, ``band_upper_km``).  A cell is in a band when
        ``lo <= |distance| < hi``; cells on the crest line (distance 0) belong to no side.
    basin
        Optional restriction: a ``climwidgets.Basin`` (needs ``climwidgets.geo.coverage``)
        or a DataArray of covered fractions in [0, 1] on the grid; weights become
        cell area × coverage.
    n_boot, ci, seed
        Bootstrap over years (only with a ``year`` dim): ``n_boot`` resamples of the years
        with replacement (seeded numpy Generator; the same resampled years for every band
        and cell, vectorised), percentile interval at level ``ci`` for ``ratio``.
    beyond_ends
        Cells whose along-wind line misses the crest: "exclude" (NaN distance, not used)
        or "nearest" (measured from the crest extended across the wind from its nearer end).

    Returns
    -------
    xarray.Dataset
        ``windward_mean``, ``leeward_mean`` (area-weighted means, field units), ``ratio``
        (leeward / windward, units "1"), ``difference`` (leeward − windward),
        ``n_windward``/``n_leeward`` (cells used) and ``distance_km`` (lat, lon): signed
        along-wind distance from the crest, negative windward (upwind), positive leeward.
        Distances are WGS84 geodesic lengths (pyproj.Geod.inv) from the point where the
        line through the cell parallel to the wind crosses the crest; that crossing is
        found in the local tangent plane at the grid's mean latitude (see
        ``_crest.signed_distance_km``).  With a ``year`` dim, ``windward_mean`` /
        ``leeward_mean`` are means of the per-year means, ``ratio`` their ratio, plus
        ``ratio_per_year``, ``ratio_lower``, ``ratio_upper``.

    Raises
    ------
    climwidgets.errors.ParameterError
        Not exactly one of ``ridge`` and ``elevation``, a malformed ridge, bands, basin or
        bootstrap setting, an unknown ``beyond_ends``, or a wind direction outside 0-360.
    climwidgets.errors.GridError
        A field or elevation without usable 1-D lat/lon.
    climwidgets.errors.MismatchError
        An elevation on another grid than the field.
    climwidgets.errors.InsufficientDataError
        No cell on one side of the crest within the bands, or too few years to bootstrap.

    Notes
    -----
    The lon/lat grid is treated as flat across the date line (no wrap-around).

    References
    ----------
    Karney, C. F. F. (2013). Algorithms for geodesics. Journal of Geodesy, 87(1), 43-55.
    https://doi.org/10.1007/s00190-012-0578-z (the geodesic distances of pyproj.Geod).

    Efron, B. and Tibshirani, R. J. (1993). An Introduction to the Bootstrap. Chapman &
    Hall, New York (the percentile interval).

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> lat = np.arange(-0.45, 0.5, 0.1).round(2)  # 10 x 10 cells of 0.1 degree, open ocean
    >>> lon = np.arange(-170.45, -169.5, 0.1).round(2)
    >>> field = xr.DataArray(np.tile(np.where(lon < -170.0, 100.0, 40.0), (10, 1)),
    ...                      dims=("lat", "lon"), coords={"lat": lat, "lon": lon},
    ...                      attrs={"units": "mm"})  # wet west of 170 W, dry east of it
    >>> shadow = cw.rain_shadow(field, wind_from=270.0, ridge=[(-170.0, -0.5), (-170.0, 0.5)])
    >>> {k: round(float(shadow[k]), 3) for k in ("windward_mean", "leeward_mean", "ratio")}
    {'windward_mean': 100.0, 'leeward_mean': 40.0, 'ratio': 0.4}
    >>> shadow["distance_km"].isel(lat=0).values.round(1)  # km from the crest, west negative
    array([-50.1, -39. , -27.8, -16.7,  -5.6,   5.6,  16.7,  27.8,  39. ,  50.1])
    """
    func = "rain_shadow"
    w = _crest.check_wind_from(wind_from, func)
    lat, lon = _crest.grid_coords(field, func, "field")
    if (ridge is None) == (elevation is None):
        raise ParameterError(
            "give exactly one of ridge and elevation",
            source=func,
            variable="ridge",
            expected="ridge=[(lon, lat), ...] (the crest drawn by hand) or elevation=<terrain "
            "in m on the field's grid> (crest derived from it)",
            fix="pass one of them and leave the other None",
        )
    if beyond_ends not in ("exclude", "nearest"):
        raise ParameterError(
            f"beyond_ends={beyond_ends!r} is not a known choice",
            source=func,
            variable="beyond_ends",
            expected="'exclude' or 'nearest'",
            fix="pass beyond_ends='exclude' (default) or 'nearest'",
        )
    if elevation is not None:
        _crest.grid_coords(elevation, func, "elevation")
        _crest.check_same_grid(field, elevation, func, "elevation")
        ridge = crest_from_elevation(elevation, w)
    pts = _crest.check_ridge(ridge, func)
    bands, squeeze = _parse_bands(band_km, func)
    has_years = _BOOT_DIM in field.dims
    if has_years:
        n_boot, ci = _check_boot(field, n_boot, ci, func)

    dist = _crest.signed_distance_km(lat, lon, pts, w, beyond_ends)
    weights = np.asarray(_weights(field, basin, func).values)
    absd = np.abs(dist)
    lo = np.array([b[0] for b in bands])[:, None, None]
    hi = np.array([b[1] for b in bands])[:, None, None]
    in_band = (absd >= lo) & (absd < hi) & (weights > 0)
    sides = {"windward": in_band & (dist < 0), "leeward": in_band & (dist > 0)}
    for name, m in sides.items():
        counts = m.sum(axis=(1, 2))
        if np.any(counts == 0):
            b = bands[int(np.argmax(counts == 0))]
            raise InsufficientDataError(
                f"no cell on the {name} side of the crest within {b[0]:g}-{b[1]:g} km",
                source=func,
                variable="band_km",
                expected=f"at least one grid cell {b[0]:g}-{b[1]:g} km {name} of the crest (wind from {w:g} degrees)",
                fix="widen or move the band, check wind_from and the crest position, or use "
                "a grid that extends further on that side",
            )

    coords = {"band": np.arange(len(bands)), "lat": field["lat"], "lon": field["lon"]}
    dims = ("band", "lat", "lon")
    means, counts = {}, {}
    for name, m in sides.items():
        wts = xr.DataArray(np.where(m, weights, 0.0), coords=coords, dims=dims)
        means[name] = field.weighted(wts).mean(("lat", "lon"))
        counts[name] = xr.DataArray(m.sum(axis=(1, 2)), coords={"band": coords["band"]}, dims="band")

    units = field.attrs.get("units", "mm")
    ds = xr.Dataset()
    if has_years:
        ww_y, lw_y = means["windward"], means["leeward"]
        ww, lw = ww_y.mean(_BOOT_DIM), lw_y.mean(_BOOT_DIM)
        rng = np.random.default_rng(seed)
        idx = rng.integers(0, field.sizes[_BOOT_DIM], size=(n_boot, field.sizes[_BOOT_DIM]))
        q = np.array([(1 - ci) / 2, (1 + ci) / 2])
        bounds = xr.apply_ufunc(
            _bootstrap_bounds,
            ww_y,
            lw_y,
            kwargs={"idx": idx, "q": q},
            input_core_dims=[[_BOOT_DIM], [_BOOT_DIM]],
            output_core_dims=[["bound"]],
            dask="parallelized",
            output_dtypes=[float],
            dask_gufunc_kwargs={"output_sizes": {"bound": 2}, "allow_rechunk": True},
        )
        ds["ratio_per_year"] = lw_y / ww_y
        ds["ratio_lower"] = bounds.isel(bound=0, drop=True)
        ds["ratio_upper"] = bounds.isel(bound=1, drop=True)
    else:
        ww, lw = means["windward"], means["leeward"]
    ds["windward_mean"] = ww
    ds["leeward_mean"] = lw
    ds["ratio"] = lw / ww
    ds["difference"] = lw - ww
    ds["n_windward"] = counts["windward"]
    ds["n_leeward"] = counts["leeward"]
    ds = ds.assign_coords(band_lower_km=("band", [b[0] for b in bands]), band_upper_km=("band", [b[1] for b in bands]))
    ds["distance_km"] = xr.DataArray(dist, coords={"lat": field["lat"], "lon": field["lon"]}, dims=("lat", "lon"))
    _rain_shadow_attrs(ds, units, w, has_years, ci)
    if squeeze:
        ds = ds.isel(band=0).drop_vars("band")
    ds.attrs.update(
        wind_from_deg=w,
        crest=repr([tuple(map(float, p)) for p in pts]),
        weights="cell area" + (" x basin coverage" if basin is not None else ""),
        distance="signed along-wind WGS84 geodesic distance from the crest "
        "(pyproj.Geod.inv); negative windward, positive leeward",
    )
    return with_history(
        ds,
        func,
        field.attrs,
        wind_from=w,
        band_km=tuple(map(tuple, bands)),
        ridge="given" if elevation is None else "from elevation",
        basin=basin is not None,
        n_boot=n_boot if has_years else 0,
        ci=ci,
        seed=seed,
    )


def _check_boot(field: xr.DataArray, n_boot: Any, ci: Any, func: str) -> tuple[int, float]:
    n_years = field.sizes[_BOOT_DIM]
    if n_years < 3:
        raise InsufficientDataError(
            f"the year dim has {n_years} value(s); the bootstrap needs at least 3 years",
            source=func,
            variable=_BOOT_DIM,
            expected="3 or more years",
            fix="pass a longer record, or average over years first (drop the year dim)",
        )
    if not isinstance(n_boot, (int, np.integer)) or n_boot < 50:
        raise ParameterError(
            f"n_boot={n_boot!r} is too small or not an integer",
            source=func,
            variable="n_boot",
            expected="an integer of at least 50 (1000 is usual)",
            fix="pass n_boot=1000",
        )
    try:
        ci = float(ci)
    except (TypeError, ValueError):
        ci = float("nan")
    if not 0 < ci < 1:
        raise ParameterError(
            f"ci={ci!r} is not a confidence level",
            source=func,
            variable="ci",
            expected="a level between 0 and 1, such as 0.9",
            fix="pass ci=0.9",
        )
    return int(n_boot), ci


def _rain_shadow_attrs(ds: xr.Dataset, units: str, w: float, has_years: bool, ci: float) -> None:
    ds["windward_mean"].attrs = {"units": units, "long_name": "windward area-weighted mean"}
    ds["leeward_mean"].attrs = {"units": units, "long_name": "leeward area-weighted mean"}
    ds["ratio"].attrs = {"units": "1", "long_name": "leeward / windward ratio"}
    ds["difference"].attrs = {"units": units, "long_name": "leeward minus windward"}
    ds["n_windward"].attrs = {"units": "1", "long_name": "windward cells in band"}
    ds["n_leeward"].attrs = {"units": "1", "long_name": "leeward cells in band"}
    ds["distance_km"].attrs = {
        "units": "km",
        "long_name": f"signed along-wind distance from the crest (wind from {w:g} deg; < 0 windward, > 0 leeward)",
    }
    ds["band_lower_km"].attrs = {"units": "km"}
    ds["band_upper_km"].attrs = {"units": "km"}
    if has_years:
        ds["ratio_per_year"].attrs = {"units": "1", "long_name": "leeward / windward, per year"}
        for k, which in (("ratio_lower", "lower"), ("ratio_upper", "upper")):
            ds[k].attrs = {
                "units": "1",
                "long_name": f"{which} bound of ratio, {ci:g} "
                "percentile bootstrap over years (Efron & Tibshirani 1993)",
            }


def elevation_gradient(
    field: xr.DataArray,
    elevation: xr.DataArray,
    mask: xr.DataArray | None = None,
    side: str | None = None,
    band_m: float = 250.0,
    ci: float = 0.9,
    *,
    distance_km: xr.DataArray | None = None,
    weighted: bool = True,
) -> xr.Dataset:
    """Change of precipitation with height: least-squares slope in mm per 100 m.

    Parameters
    ----------
    field
        Precipitation climatology (mm) on a (lat, lon) grid; other dims (year, month) are
        kept and fitted separately.
    elevation
        Terrain in metres on the same grid.
    mask
        Optional boolean DataArray on the grid: cells to use.
    side, distance_km
        Optional: "windward" or "leeward" with the signed distances of
        ``rain_shadow(...)["distance_km"]``; keeps that side only (see :func:`side_mask`).
    band_m
        Width of the elevation bands (m) for the band means; bands start at a multiple of
        ``band_m`` below the lowest cell.
    ci
        Level of the t-based confidence interval of the slope.
    weighted
        True (default): weighted least squares with cell-area weights, so each cell counts
        in proportion to the ground it covers.  The standard error is the usual weighted
        one, se² = Σw·e² / ((n − 2)·Σw·(z − z̄w)²), which does not depend on the scale of
        the weights.  False: ordinary least squares on cells.

    Returns
    -------
    xarray.Dataset
        ``slope`` (mm per 100 m), ``lower``, ``upper`` (slope ± t(n−2)·se), ``intercept``
        (mm at 0 m), ``r2`` (weighted coefficient of determination), ``n`` (cells used),
        and on the ``elevation_band`` dim (band centre, m) ``band_mean`` (area-weighted),
        ``band_elevation`` (mean height) and ``band_cells``.  Cells with missing
        precipitation are left out of each fit.  Spatial cells are not independent
        (neighbours share weather), so the interval is narrower than the true uncertainty.

    Raises
    ------
    climwidgets.errors.ParameterError
        A band width or confidence level out of range, or ``side`` without
        ``distance_km``.
    climwidgets.errors.GridError
        Grids without usable 1-D lat/lon.
    climwidgets.errors.MismatchError
        An elevation or mask on another grid than the field.
    climwidgets.errors.InsufficientDataError
        Fewer than 3 cells selected, or all at one elevation.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> lat = np.arange(-0.45, 0.5, 0.1).round(2)  # 10 x 10 cells of 0.1 degree, open ocean
    >>> lon = np.arange(-170.45, -169.5, 0.1).round(2)
    >>> z = np.broadcast_to(1500.0 - 2500.0 * np.abs(lon + 170.05), (10, 10))  # N-S ridge
    >>> elevation = xr.DataArray(z, dims=("lat", "lon"), coords={"lat": lat, "lon": lon},
    ...                          attrs={"units": "m"})
    >>> field = (500.0 + 0.5 * elevation).assign_attrs(units="mm")  # +50 mm per 100 m
    >>> fit = cw.elevation_gradient(field, elevation)
    >>> {k: round(float(fit[k]), 3) for k in ("slope", "intercept", "r2")}
    {'slope': 50.0, 'intercept': 500.0, 'r2': 1.0}
    """
    func = "elevation_gradient"
    _crest.grid_coords(field, func, "field")
    _crest.grid_coords(elevation, func, "elevation")
    _crest.check_same_grid(field, elevation, func, "elevation")
    try:
        band_m, ci = float(band_m), float(ci)
    except (TypeError, ValueError):
        band_m = ci = float("nan")
    if not band_m > 0:
        raise ParameterError(
            f"band_m={band_m!r} is not a positive band width",
            source=func,
            variable="band_m",
            expected="elevation band width in m, > 0",
            fix="pass band_m=250.0",
        )
    if not 0 < ci < 1:
        raise ParameterError(
            f"ci={ci!r} is not a confidence level",
            source=func,
            variable="ci",
            expected="a level between 0 and 1, such as 0.9",
            fix="pass ci=0.9",
        )
    z = np.asarray(elevation.transpose("lat", "lon").values, dtype=float)
    sel = np.isfinite(z)
    if mask is not None:
        _crest.check_same_grid(field, mask, func, "mask")
        sel &= np.asarray(mask.transpose("lat", "lon").values).astype(bool)
    if side is not None:
        if distance_km is None:
            raise ParameterError(
                "side needs distance_km",
                source=func,
                variable="distance_km",
                expected="the distance_km of rain_shadow(...) on the field's grid",
                fix="pass distance_km=rain_shadow(...)['distance_km']",
            )
        sel &= np.asarray(side_mask(distance_km, side).transpose("lat", "lon").values)
    if sel.sum() < 3 or np.ptp(z[sel]) == 0:
        raise InsufficientDataError(
            f"{int(sel.sum())} cells selected, elevation range {float(np.ptp(z[sel])) if sel.any() else 0:g} m",
            source=func,
            variable="elevation",
            expected="at least 3 cells at different elevations",
            fix="widen the mask or side",
        )
    grid = {"lat": field["lat"], "lon": field["lon"]}
    wcell = np.asarray(_crest.cell_area(field).values) if weighted else np.ones(z.shape)
    wts = xr.DataArray(np.where(sel, wcell, 0.0), coords=grid, dims=("lat", "lon"))
    x = xr.DataArray(np.where(sel, z, 0.0), coords=grid, dims=("lat", "lon"))

    dims = ("lat", "lon")
    ok = field.notnull() & (wts > 0)
    wv = wts.where(ok, 0.0)
    y = field.fillna(0.0)
    sw = wv.sum(dims)
    n = ok.sum(dims)
    xm = (wv * x).sum(dims) / sw
    ym = (wv * y).sum(dims) / sw
    sxx = (wv * (x - xm) ** 2).sum(dims)
    sxy = (wv * (x - xm) * (y - ym)).sum(dims)
    syy = (wv * (y - ym) ** 2).sum(dims)
    b = sxy / sxx
    ssr = (syy - b * sxy).clip(min=0.0)
    dof = (n - 2).where(n > 2)
    se = np.sqrt(ssr / (dof * sxx))
    tq = xr.apply_ufunc(stats.t.ppf, (1 + ci) / 2, dof, dask="parallelized", output_dtypes=[float])

    units = field.attrs.get("units", "mm")
    per = f"{units} (100 m)-1"
    ds = xr.Dataset()
    ds["slope"] = (100 * b).assign_attrs(units=per, long_name="precipitation change per 100 m")
    ds["lower"] = (100 * (b - tq * se)).assign_attrs(units=per, long_name=f"lower {ci:g} bound of slope")
    ds["upper"] = (100 * (b + tq * se)).assign_attrs(units=per, long_name=f"upper {ci:g} bound of slope")
    ds["intercept"] = (ym - b * xm).assign_attrs(units=units, long_name="fitted value at 0 m")
    ds["r2"] = (b * sxy / syy).assign_attrs(units="1", long_name="coefficient of determination")
    ds["n"] = n.assign_attrs(units="1", long_name="cells used")

    lo_edge = np.floor(z[sel].min() / band_m) * band_m
    # half-open bands [lo, hi); the last one holds the highest cell
    n_bands = int(np.floor((z[sel].max() - lo_edge) / band_m)) + 1
    edges = lo_edge + band_m * np.arange(n_bands + 1)
    lower, upper = edges[:-1], edges[1:]
    member = sel & (z >= lower[:, None, None]) & (z < upper[:, None, None])
    centre = 0.5 * (lower + upper)
    bcoords = {"elevation_band": centre, **grid}
    bw = xr.DataArray(np.where(member, wcell, 0.0), coords=bcoords, dims=("elevation_band",) + dims)
    ds["band_mean"] = (
        field.weighted(bw).mean(dims).assign_attrs(units=units, long_name="area-weighted mean in elevation band")
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        zb = np.where(member, wcell * z, 0.0).sum(axis=(1, 2)) / np.where(member, wcell, 0.0).sum(axis=(1, 2))
    ds["band_elevation"] = xr.DataArray(
        zb,
        coords={"elevation_band": centre},
        dims="elevation_band",
        attrs={"units": "m", "long_name": "mean elevation of band"},
    )
    ds["band_cells"] = xr.DataArray(
        member.sum(axis=(1, 2)), coords={"elevation_band": centre}, dims="elevation_band", attrs={"units": "1"}
    )
    ds = ds.assign_coords(band_lower_m=("elevation_band", lower), band_upper_m=("elevation_band", upper))
    ds["elevation_band"].attrs = {"units": "m", "long_name": "elevation band centre"}
    ds.attrs.update(
        method="weighted least squares (cell-area weights)" if weighted else "ordinary least squares",
        interval=f"{ci:g} t-based, n - 2 degrees of freedom",
    )
    return with_history(
        ds, func, field.attrs, band_m=band_m, ci=ci, weighted=weighted, mask=mask is not None, side=side
    )
