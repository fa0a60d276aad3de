"""Monotonic trend: Sen (1968) slope and the Mann-Kendall test (Mann 1945; Kendall 1975).

Per cell, over the valid points of the series:

* S = sum over pairs i < j of sgn(x_j - x_i) sgn(t_j - t_i);
* Var(S) = [n(n-1)(2n+5) - sum_ties t(t-1)(2t+5)] / 18 (tie-corrected);
* Z = (S - 1)/sqrt(Var) for S > 0, (S + 1)/sqrt(Var) for S < 0, 0 for S = 0
  (continuity correction); two-sided p = 2 (1 - Phi(|Z|)) from the normal approximation;
* Sen slope = median of (x_j - x_i)/(t_j - t_i) over all valid pairs; intercept =
  median(x) - slope * median(t) (t in the units of the ``dim`` coordinate);
* Kendall's tau_b = S / sqrt((n0 - n1)(n0 - n2)), n0 = n(n-1)/2, n1 and n2 the tied pairs
  in t and x.

Vectorised over cells with numpy over the pairwise axis; NaNs in a series are skipped per
cell.  Memory grows with n^2 per cell, fine for annual series of decades to a few centuries.
"""

from __future__ import annotations

import numpy as np
import xarray as xr
from scipy import special

from ..errors import InsufficientDataError, ParameterError
from ..provenance import with_history
from ._time import is_dask, source_name

__all__ = ["trend"]

_OUTPUTS = ("slope", "intercept", "pvalue", "tau", "n")


def _nanmedian_sorted(a: np.ndarray) -> np.ndarray:
    """Median along the last axis skipping NaN, without the all-NaN RuntimeWarning."""
    k = np.sum(~np.isnan(a), axis=-1)
    s = np.sort(a, axis=-1)  # NaN sort to the end
    lo = np.take_along_axis(s, np.maximum((k - 1) // 2, 0)[..., None], axis=-1)[..., 0]
    hi = np.take_along_axis(s, np.maximum(k // 2, 0)[..., None], axis=-1)[..., 0]
    med = 0.5 * (lo + hi)
    return np.where(k > 0, med, np.nan)


def _trend_kernel(y: np.ndarray, t: np.ndarray) -> tuple[np.ndarray, ...]:
    """y: (..., n) values; t: (n,) positions.  Returns slope, intercept, p, tau, n."""
    y = np.asarray(y, dtype=float)
    t = np.asarray(t, dtype=float)
    nt = t.size
    iu, ju = np.triu_indices(nt, k=1)
    valid = ~np.isnan(y)
    pair_ok = valid[..., iu] & valid[..., ju]
    dy = y[..., ju] - y[..., iu]
    dt = t[ju] - t[iu]
    with np.errstate(invalid="ignore", divide="ignore"):
        slopes = np.where(pair_ok & (dt != 0), dy / dt, np.nan)
    slope = _nanmedian_sorted(slopes)

    n = valid.sum(axis=-1)
    s = np.where(pair_ok, np.sign(dy) * np.sign(dt), 0.0).sum(axis=-1)
    # ties in x: each member of a tie group of size g sees g equal values (itself included),
    # so sum over members of f(g)/g equals sum over groups of f(g)
    eq = y[..., :, None] == y[..., None, :]  # NaN never equals, so only valid values count
    g = eq.sum(axis=-1).astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        tie_term = np.where(valid, (g - 1) * (2 * g + 5), 0.0).sum(axis=-1)  # = sum t(t-1)(2t+5)
        tied_pairs_x = np.where(valid, (g - 1) / 2.0, 0.0).sum(axis=-1)  # = sum t(t-1)/2
    var = (n * (n - 1) * (2 * n + 5) - tie_term) / 18.0
    # ties in t (repeated positions) only matter for tau_b; the Mann-Kendall S ignores them
    tt = t[:, None] == t[None, :]
    tied_pairs_t = np.where(valid[..., :, None] & valid[..., None, :] & tt, 1.0, 0.0).sum(axis=(-2, -1))
    tied_pairs_t = (tied_pairs_t - n) / 2.0
    n0 = n * (n - 1) / 2.0
    with np.errstate(invalid="ignore", divide="ignore"):
        z = np.where(s > 0, (s - 1) / np.sqrt(var), np.where(s < 0, (s + 1) / np.sqrt(var), 0.0))
        p = 2.0 * special.ndtr(-np.abs(z))
        tau = s / np.sqrt((n0 - tied_pairs_t) * (n0 - tied_pairs_x))
    p = np.where((n >= 3) & (var > 0), p, np.nan)
    tau = np.where((n >= 2) & np.isfinite(tau), tau, np.nan)

    t_b = np.broadcast_to(t, y.shape)
    med_y = _nanmedian_sorted(y)
    med_t = _nanmedian_sorted(np.where(valid, t_b, np.nan))
    intercept = med_y - slope * med_t
    slope = np.where(n >= 2, slope, np.nan)
    intercept = np.where(n >= 2, intercept, np.nan)
    return slope, intercept, p, tau, n.astype(float)


def trend(series: xr.DataArray, dim: str = "year") -> xr.Dataset:
    """Sen slope and Mann-Kendall significance along ``dim``, for every cell.

    Parameters
    ----------
    series
        DataArray with a numeric ``dim`` coordinate (for example the ``year`` of
        annual_totals or seasonal_fraction(per_year=True)); without a coordinate the
        positions 0..n-1 are used.  NaNs are skipped per cell.
    dim
        The dimension along which to look for a trend.

    Returns
    -------
    Dataset with ``slope`` (Sen 1968; series units per unit of ``dim``), ``intercept``
    (median(x) - slope * median(t)), ``pvalue`` (Mann-Kendall, two-sided, tie-corrected
    variance, continuity-corrected Z; NaN with fewer than 3 points), ``tau`` (Kendall's
    tau_b) and ``n`` (valid points).  Lazy on dask input.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> years = np.arange(2001, 2011)
    >>> series = xr.DataArray(10.0 + 3.0 * (years - 2001), dims="year", coords={"year": years})
    >>> result = cw.trend(series)
    >>> float(result["slope"]), float(result["tau"]), bool(result["pvalue"] < 0.001)
    (3.0, 1.0, True)
    """
    func = "trend"
    if not isinstance(series, xr.DataArray):
        raise ParameterError(
            f"trend needs a DataArray, got {type(series).__name__}",
            source=func,
            expected="a DataArray with a year (or other) dimension",
            fix="pass e.g. climwidgets.annual_totals(pr)",
        )
    src = source_name(series)
    if dim not in series.dims:
        raise ParameterError(
            f"dimension {dim!r} not found (dims are {tuple(series.dims)})",
            source=src,
            variable="dim",
            expected="a dimension of the series",
            fix=f"pass dim= one of {tuple(series.dims)}",
        )
    if series.sizes[dim] < 2:
        raise InsufficientDataError(
            f"only {series.sizes[dim]} value(s) along {dim!r}",
            source=src,
            variable=dim,
            expected="at least 3 points",
            fix="use a longer series",
        )
    if dim in series.coords:
        coord = series[dim].values
        if not np.issubdtype(coord.dtype, np.number):
            raise ParameterError(
                f"the {dim!r} coordinate is not numeric ({coord.dtype})",
                source=src,
                variable="dim",
                expected="numeric positions such as years",
                fix="aggregate to annual values (dim 'year') or assign numeric coordinates",
            )
        t = coord.astype(float)
    else:
        t = np.arange(series.sizes[dim], dtype=float)
    data = series.chunk({dim: -1}) if is_dask(series) else series
    tcoord = xr.DataArray(t, dims=dim)
    res = xr.apply_ufunc(
        _trend_kernel,
        data,
        tcoord,
        input_core_dims=[[dim], [dim]],
        output_core_dims=[[]] * 5,
        dask="parallelized",
        output_dtypes=[float] * 5,
    )
    ds = xr.Dataset(dict(zip(_OUTPUTS, res)))
    units = series.attrs.get("units", "")
    ds["slope"].attrs = {"units": f"{units} per {dim}".strip(), "long_name": "Sen slope (median of pairwise slopes)"}
    ds["intercept"].attrs = {
        "units": units,
        "long_name": "intercept, median(x) - slope * median(t)",
        "time_origin": f"{dim} = 0",
    }
    ds["pvalue"].attrs = {
        "units": "1",
        "long_name": "Mann-Kendall two-sided p-value",
        "method": "normal approximation, tie-corrected variance, continuity-corrected Z",
    }
    ds["tau"].attrs = {"units": "1", "long_name": "Kendall tau_b"}
    ds["n"].attrs = {"units": "1", "long_name": "number of valid points"}
    ds.attrs = {"method": "Sen (1968) slope; Mann-Kendall test (Mann 1945, Kendall 1975)", "dim": dim}
    return with_history(ds, func, series.attrs, dim=dim)
