"""GEV fits to annual maxima by L-moments, return levels with bootstrap intervals.

Method
------
Sample L-moments come from the unbiased probability-weighted moments b0..b3 of the
sorted sample (Hosking 1990, J. R. Statist. Soc. B 52, 105-124; Hosking & Wallis 1997,
*Regional Frequency Analysis*, Cambridge University Press, section 2.4)::

    l1 = b0,  l2 = 2 b1 - b0,  l3 = 6 b2 - 6 b1 + b0,  l4 = 20 b3 - 30 b2 + 12 b1 - b0

The GEV shape uses the approximation of Hosking, Wallis & Wood (1985, Technometrics 27)::

    c = 2 / (3 + t3) - ln 2 / ln 3,     k = 7.8590 c + 2.9554 c^2

(accurate to about 1e-3 in k for -0.5 <= k <= 0.5).  Outside that range (L-skewness below
t3(k = 0.5) = -0.1140 or above t3(k = -0.5) = 0.5347) the approximation drifts (k off by
0.04 at k = -0.8, the 100-year depth off by more than 20 %), so there k is found by an exact
numerical inversion of the GEV relation (Hosking 1990)::

    t3 = 2 (1 - 3^-k) / (1 - 2^-k) - 3

by bisection on arrays (t3 falls strictly with k; 64 halvings of the bracket -1 < k < 60
leave an error below 1e-12 in k).  Inside the range the approximation's result is kept, so
results there are unchanged; the step at the two switch points is below 1e-3 in k.  Then
``scale = l2 k / ((1 - 2^-k) Gamma(1 + k))`` and ``loc = l1 - scale (1 - Gamma(1 + k)) / k``.
When ``|k| < 1e-5`` the Gumbel formulas ``scale = l2 / ln 2``, ``loc = l1 - gamma scale``
are used (gamma is Euler's constant).

Sign convention: ``shape`` is Hosking's k.  k > 0 gives a bounded upper tail, k < 0 a
heavy upper tail.  It equals the ``c`` of ``scipy.stats.genextreme``; many climate texts
use the opposite sign (xi = -k).

Quantile (return level) for non-exceedance probability F = 1 - 1/T::

    x(F) = loc + scale / k * (1 - (-ln F)^k)      (k != 0)
    x(F) = loc - scale * ln(-ln F)                 (k == 0)

Everything is vectorised over grid cells with ``xarray.apply_ufunc(dask="parallelized")``;
the year axis is sorted per cell with missing years (NaN) left out of that cell's sample.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import xarray as xr
from scipy import special, stats

from ..errors import InsufficientDataError, ParameterError
from ..provenance import with_history
from .warming import DESIGN_DEPTH_CAUTIONS

__all__ = ["gev_lmoments", "gev_mle", "return_levels", "return_period", "lmoments"]

EULER_GAMMA = 0.5772156649015329
GUMBEL_K_THRESHOLD = 1e-5
SIGN_CONVENTION = (
    "shape is Hosking's k: k > 0 bounded upper tail, k < 0 heavy upper tail; "
    "equal to the c parameter of scipy.stats.genextreme (the opposite sign of the xi used in many climate texts)"
)
# Elements (cells x replicates x years) held in memory at once by the bootstrap.
_BOOT_BLOCK_ELEMENTS = 2_000_000


# ----------------------------------------------------------------------------- numpy core


def _sample_lmoments(x: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """L-moments along the last axis, ignoring NaN per row.

    Returns (n, l1, l2, t3, t4); rows with fewer than 4 values give NaN moments.
    """
    x = np.asarray(x, dtype=float)
    xs = np.sort(x, axis=-1)  # NaN sort to the end, so ranks 1..n are the valid values
    valid = ~np.isnan(xs)
    n = valid.sum(axis=-1).astype(float)
    xs = np.where(valid, xs, 0.0)
    j = np.arange(xs.shape[-1], dtype=float)  # j - 1 for rank j
    nn = n[..., None]
    with np.errstate(divide="ignore", invalid="ignore"):
        w1 = j / (nn - 1)
        w2 = w1 * (j - 1) / (nn - 2)
        w3 = w2 * (j - 2) / (nn - 3)
        b0 = xs.sum(axis=-1) / n
        b1 = (w1 * xs).sum(axis=-1) / n
        b2 = (w2 * xs).sum(axis=-1) / n
        b3 = (w3 * xs).sum(axis=-1) / n
        l1 = b0
        l2 = 2 * b1 - b0
        l3 = 6 * b2 - 6 * b1 + b0
        l4 = 20 * b3 - 30 * b2 + 12 * b1 - b0
        t3 = l3 / l2
        t4 = l4 / l2
    short = n < 4
    nanify = short | ~(l2 > 0)
    return (
        n,
        np.where(short, np.nan, l1),
        np.where(short, np.nan, l2),
        np.where(nanify, np.nan, t3),
        np.where(nanify, np.nan, t4),
    )


def _pwm(x: Any) -> np.ndarray:
    """Unbiased probability-weighted moments b0..b3 of a 1-D sample (NaN dropped)."""
    xs = np.sort(np.asarray(x, dtype=float)[~np.isnan(np.asarray(x, dtype=float))])
    n = xs.size
    j = np.arange(n, dtype=float)
    w1 = j / (n - 1)
    w2 = w1 * (j - 1) / (n - 2)
    w3 = w2 * (j - 2) / (n - 3)
    return np.array([xs.mean(), (w1 * xs).mean(), (w2 * xs).mean(), (w3 * xs).mean()])


def _t3_of_k(k: Any) -> Any:
    """GEV L-skewness as a function of Hosking's k (k != 0)."""
    return 2.0 * (1.0 - 3.0 ** (-k)) / (1.0 - 2.0 ** (-k)) - 3.0


# L-skewness at the ends of the range where the approximation holds (k = 0.5 and k = -0.5)
APPROX_T3_RANGE = (float(_t3_of_k(0.5)), float(_t3_of_k(-0.5)))
_K_BRACKET = (-1.0, 60.0)  # t3(60) + 1 < 1e-10: every admissible t3 of a sample lies inside


def _shape_exact(t3: Any) -> np.ndarray:
    """k solving t3 = 2(1 - 3^-k)/(1 - 2^-k) - 3, by vectorised bisection (NaN outside (-1, 1))."""
    t3 = np.asarray(t3, dtype=float)
    lo = np.full(t3.shape, _K_BRACKET[0])
    hi = np.full(t3.shape, _K_BRACKET[1])
    with np.errstate(all="ignore"):
        for _ in range(64):  # halvings of the bracket, on whole arrays
            mid = 0.5 * (lo + hi)
            above = _t3_of_k(mid) > t3  # t3 falls with k: the root lies above mid
            lo = np.where(above, mid, lo)
            hi = np.where(above, hi, mid)
    k = 0.5 * (lo + hi)
    return np.where((t3 > -1) & (t3 < 1), k, np.nan)


def _shape_from_t3(t3: Any) -> np.ndarray:
    """Hosking's k from t3: the 1985 approximation inside APPROX_T3_RANGE, exact outside."""
    t3 = np.asarray(t3, dtype=float)
    c = 2.0 / (3.0 + t3) - np.log(2.0) / np.log(3.0)
    k: np.ndarray = 7.8590 * c + 2.9554 * c * c
    outside = (t3 < APPROX_T3_RANGE[0]) | (t3 > APPROX_T3_RANGE[1])
    if np.any(outside):  # the bisection runs on the few values that need it
        k = np.array(k, dtype=float, copy=True)
        k[outside] = _shape_exact(t3[outside])
    return k


def _params_from_lmoments(l1: Any, l2: Any, t3: Any, dist: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(loc, scale, shape) from l1, l2, t3 by Hosking's formulas (arrays broadcast)."""
    l1, l2, t3 = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (l1, l2, t3)))
    scale_g = l2 / np.log(2.0)
    loc_g = l1 - EULER_GAMMA * scale_g
    if dist == "gumbel":
        return loc_g, scale_g, np.where(np.isnan(l1 + l2), np.nan, 0.0)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        k = _shape_from_t3(t3)
        gumbel = np.abs(k) < GUMBEL_K_THRESHOLD
        ks = np.where(gumbel, 1.0, k)  # placeholder avoids 0/0 where Gumbel is used
        g = special.gamma(1.0 + ks)
        scale = l2 * ks / ((1.0 - 2.0 ** (-ks)) * g)
        loc = l1 - scale * (1.0 - g) / ks
    scale = np.where(gumbel, scale_g, scale)
    loc = np.where(gumbel, loc_g, loc)
    k = np.where(gumbel, 0.0, k)
    # k <= -1 has no finite mean: the L-moment fit does not exist there.
    bad = ~np.isfinite(scale) | ~(scale > 0) | ~(k > -1)
    return (np.where(bad, np.nan, loc), np.where(bad, np.nan, scale), np.where(bad, np.nan, k))


def _quantile(F: Any, loc: Any, scale: Any, k: Any) -> Any:
    """GEV quantile x(F); arrays broadcast.  k == 0 exactly means Gumbel."""
    y = -np.log(F)
    with np.errstate(divide="ignore", invalid="ignore"):
        ks = np.where(k == 0, 1.0, k)
        gev = loc + scale / ks * (1.0 - y**ks)
    return np.where(k == 0, loc - scale * np.log(y), gev)


def _cdf(x: Any, loc: Any, scale: Any, k: Any) -> np.ndarray:
    """GEV non-exceedance probability F(x); arrays broadcast."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        z = (x - loc) / scale
        ks = np.where(k == 0, 1.0, k)
        arg = 1.0 - ks * z
        gev = np.where(arg > 0, np.exp(-(np.abs(arg) ** (1.0 / ks))), np.where(ks > 0, 1.0, 0.0))
        gum = np.exp(-np.exp(-z))
    return np.where(k == 0, gum, gev)


def _period(x: Any, loc: Any, scale: Any, k: Any) -> np.ndarray:
    """Return period 1 / (1 - F(x)); infinite above a bounded upper tail."""
    with np.errstate(divide="ignore"):
        return 1.0 / (1.0 - _cdf(x, loc, scale, k))


def _fit_block(x: Any, dist: str, min_years: int) -> tuple[np.ndarray, ...]:
    """Fit every row of x (..., year).  Returns loc, scale, shape, n, l1, l2, t3, t4."""
    n, l1, l2, t3, t4 = _sample_lmoments(x)
    loc, scale, k = _params_from_lmoments(l1, l2, t3, dist)
    short = n < min_years
    out = [np.where(short, np.nan, a) for a in (loc, scale, k)]
    return (*out, n, l1, l2, t3, t4)


def nanquantile_linear(a: Any, q: Any, axis: int = -1) -> np.ndarray:
    """``numpy.nanquantile(a, q, axis, method="linear")`` for many slices at once.

    numpy evaluates ``nanquantile`` one 1-D slice at a time when NaN are present (a Python
    loop over slices); here the whole array is sorted once along ``axis`` (NaN sort to the
    end), each slice's count of values gives its virtual index ``(n - 1) q`` (Hyndman & Fan
    type 7), and the neighbours are interpolated with numpy's own two-sided formula, so the
    result is bit-for-bit numpy's. A slice without any value gives NaN (without numpy's
    warning).

    Parameters
    ----------
    a : array_like
        Values; cast to float64.
    q : float or array_like of float
        Probabilities in [0, 1].
    axis : int, default -1
        Axis along which the quantiles are taken.

    Returns
    -------
    numpy.ndarray
        Shape ``q.shape + a.shape`` without ``axis``, float64, as numpy returns it.

    References
    ----------
    Hyndman, R. J. & Fan, Y. (1996). Sample quantiles in statistical packages. The American
    Statistician 50(4), 361-365 (definition 7).

    Examples
    --------
    >>> nanquantile_linear([[1.0, np.nan, 3.0, 2.0]], [0.25, 0.5], axis=1).tolist()
    [[1.5], [2.0]]
    """
    x = np.moveaxis(np.asarray(a, dtype=np.float64), axis, -1)
    rest, m = x.shape[:-1], x.shape[-1]
    x = x.reshape(-1, m).copy()  # (slices, values), ours to reorder
    q = np.asarray(q, dtype=np.float64)
    gaps = np.isnan(x).any(axis=1)
    n = np.where(gaps, m - np.isnan(x).sum(axis=1), m)
    virtual = (n - 1) * q.reshape(-1, 1)  # (q, slices): numpy's "linear" virtual index
    prev = np.floor(virtual)
    # numpy's neighbours and weight: past the last value both neighbours are the last value
    # (its index -1, so the weight is virtual + 1); before the first, the first
    above, below = virtual >= n - 1, virtual < 0
    last = np.broadcast_to(np.maximum(n - 1, 0), virtual.shape)
    i_prev = np.where(above, last, np.where(below, 0, prev)).astype(np.intp)
    i_next = np.where(above, last, np.where(below, 0, prev + 1)).astype(np.intp)
    gamma = np.where(above, virtual + 1, np.where(below, virtual, virtual - prev))
    if gaps.any():  # NaN sort to the end: ranks 0 .. n-1 are the slice's values
        x[gaps] = np.sort(x[gaps], axis=1)
    if not gaps.all():  # complete slices share their ranks: a partial sort places them
        kth = np.unique(np.concatenate([i_prev[:, ~gaps].ravel(), i_next[:, ~gaps].ravel()]))
        x[~gaps] = np.partition(x[~gaps], kth, axis=1)
    lo = np.take_along_axis(x, i_prev.T, axis=1).T
    hi = np.take_along_axis(x, i_next.T, axis=1).T
    diff = hi - lo
    out = np.where(gamma >= 0.5, hi - diff * (1 - gamma), lo + diff * gamma)  # numpy's _lerp
    out = np.where(n == 0, np.nan, out)
    return out.reshape(q.shape + rest)


def _pwm_weights(n: int) -> np.ndarray:
    """(n, 3) weights of the unbiased b0, b1, b2 of a sorted sample of n values."""
    j = np.arange(n, dtype=float)
    w1 = j / (n - 1)
    w2 = w1 * (j - 1) / (n - 2)
    return np.stack([np.ones(n), w1, w2])


def _bootstrap_block(
    x: np.ndarray, F: np.ndarray, dist: str, min_years: int, ci: float, n_boot: int, seed: Any
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Estimates and percentile intervals for every row of x (..., year) at probabilities F.

    The same uniform draws (one (n_boot, n_years) table from ``seed``) serve every cell
    (common random numbers), so results do not depend on dask chunking.

    A replicate of a cell with n years is x(u) of the first n draws of a row of the table.
    x(u) rises with u wherever the fit exists (scale > 0), so sorting the draws once per
    sample size sorts every cell's replicates: no per-cell sort, and ln(-ln u) is shared,
    leaving one ``exp`` per value. The refit then uses the same probability-weighted
    moments as :func:`_sample_lmoments`, and the percentiles come from
    :func:`nanquantile_linear` on all cells at once.
    """
    lead = x.shape[:-1]
    ny = x.shape[-1]
    xf = x.reshape(-1, ny)
    loc, scale, k, n = _fit_block(xf, dist, min_years)[:4]
    est = _quantile(F[None, :], loc[:, None], scale[:, None], k[:, None])
    m = xf.shape[0]
    lower = np.full((m, F.size), np.nan)
    upper = np.full((m, F.size), np.nan)
    u = np.random.default_rng(seed).random((n_boot, ny))
    u = np.clip(u, 1e-300, 1.0)  # keep -ln(u) finite
    q_lo, q_hi = (1.0 - ci) / 2.0, (1.0 + ci) / 2.0
    step = max(1, _BOOT_BLOCK_ELEMENTS // max(1, n_boot * ny))
    ok_rows = np.flatnonzero(np.isfinite(loc))
    sizes = n[ok_rows].astype(int)
    for size in np.unique(sizes):  # cells with missing years: fewer draws per replicate
        lnln = np.log(-np.log(np.sort(u[:, :size], axis=1)))  # (n_boot, size), x rises along it
        w = (_pwm_weights(size) / size).T  # (size, 3): b_r = x_sorted @ w[:, r]
        wsum = w.sum(axis=0)
        gumbel_b = -lnln @ w  # the Gumbel replicates' sums, shared by every cell
        group = ok_rows[sizes == size]
        for start in range(0, group.size, step):  # memory bound, not a loop over single cells
            rows = group[start : start + step]
            kk = k[rows]
            ks = np.where(kk == 0, 1.0, kk)[:, None, None]
            # x(u) = loc + scale/k (1 - (-ln u)^k) = loc + (scale/k) d,  d = -expm1(k ln(-ln u));
            # the b_r are linear in x, so b_r = loc sum(w_r) + (scale/k) (d @ w_r): one
            # matrix product per cell (the same shapes for every cell, so the same rounding
            # whatever the chunking); expm1 keeps d accurate as k nears 0
            with np.errstate(over="ignore", invalid="ignore"):
                d = np.multiply(ks, lnln)
                np.expm1(d, out=d)
                np.negative(d, out=d)
                db = d @ w  # (rows, n_boot, 3)
            gumbel = kk == 0
            db[gumbel] = gumbel_b
            c = np.where(gumbel, scale[rows], scale[rows] / ks[:, 0, 0])[:, None, None]
            b = loc[rows, None, None] * wsum + c * db
            b0, b1, b2 = b[..., 0], b[..., 1], b[..., 2]
            l1, l2 = b0, 2 * b1 - b0
            with np.errstate(divide="ignore", invalid="ignore"):
                t3 = (6 * b2 - 6 * b1 + b0) / l2
            t3 = np.where(l2 > 0, t3, np.nan)  # as _sample_lmoments: no fit without spread
            bl, bs, bk = _params_from_lmoments(l1, l2, t3, dist)
            # (rows, period, replicate): the percentiles are taken along a contiguous axis
            xt = _quantile(F[None, :, None], bl[:, None, :], bs[:, None, :], bk[:, None, :])
            lower[rows], upper[rows] = nanquantile_linear(xt, [q_lo, q_hi], axis=-1)
    shape = lead + (F.size,)
    return est.reshape(shape), lower.reshape(shape), upper.reshape(shape)


# ----------------------------------------------------------------------------- validation


def _name(obj: object) -> str:
    return getattr(obj, "name", None) or "annual maxima"


def _check_dist(dist: str) -> None:
    if dist not in ("gev", "gumbel"):
        raise ParameterError(
            f"unknown distribution {dist!r}",
            variable="dist",
            expected="'gev' or 'gumbel'",
            fix="pass dist='gev' (default) or dist='gumbel'",
        )


def _check_min_years(min_years: Any) -> None:
    if not isinstance(min_years, (int, np.integer)) or isinstance(min_years, bool) or min_years < 4:
        raise ParameterError(
            f"min_years={min_years!r} is not allowed",
            variable="min_years",
            expected="an integer of at least 4 (L-moments up to order 4 need 4 values)",
            fix="use min_years=10 or more for design work",
        )


def _as_maxima(annual_max: Any, dim: str, min_years: int) -> xr.DataArray:
    """Check annual maxima and return them as a float DataArray with ``dim`` in one chunk."""
    if isinstance(annual_max, xr.DataArray):
        da = annual_max
    else:
        arr = np.asarray(annual_max, dtype=float)
        if arr.ndim != 1:
            raise ParameterError(
                "a plain array of annual maxima must be one-dimensional",
                source="annual maxima",
                expected="a 1-D sequence or a DataArray with a 'year' dimension",
                fix="wrap gridded maxima in an xarray.DataArray with a 'year' dimension",
            )
        da = xr.DataArray(arr, dims=(dim,), name="annual_max")
    if dim not in da.dims:
        raise ParameterError(
            f"no '{dim}' dimension (dims are {da.dims})",
            source=_name(da),
            expected=f"annual maxima with a '{dim}' dimension, as from annual_maxima()",
            fix=f"pass dim= naming the year dimension, or rename it to '{dim}'",
        )
    if da.sizes[dim] < min_years:
        raise InsufficientDataError(
            f"only {da.sizes[dim]} years of annual maxima",
            source=_name(da),
            expected=f"at least min_years={min_years} years",
            fix="use a longer record or lower min_years (not advised below 10)",
        )
    if da.chunks is not None:
        da = da.chunk({dim: -1})
    return da.astype(float)


def _require_some_cell(n_years: xr.DataArray, min_years: int, source: str) -> int | None:
    """On numpy-backed results, raise when no cell has enough years; return the shortfall count."""
    if n_years.chunks is not None:
        return None
    n_short = int((n_years < min_years).sum())
    if n_short == n_years.size:
        raise InsufficientDataError(
            f"no series has {min_years} or more non-missing years (most has {int(n_years.max())})",
            source=source,
            expected=f"at least min_years={min_years} valid annual maxima",
            fix="use a longer record, fill gaps, or lower min_years (not advised below 10)",
        )
    return n_short


def _check_periods(periods: Any) -> np.ndarray:
    arr = np.atleast_1d(np.asarray(periods, dtype=float))
    if arr.ndim != 1 or arr.size == 0 or not np.all(np.isfinite(arr)) or np.any(arr <= 1):
        raise ParameterError(
            f"return periods {periods!r} are not allowed",
            variable="periods",
            expected="finite return periods in years, each greater than 1",
            fix="pass for example periods=(2, 10, 25, 50, 100)",
        )
    return arr


# ----------------------------------------------------------------------------- public


def lmoments(x: Any) -> dict[str, Any]:
    """Sample L-moments of a 1-D series: dict with b0..b3, l1..l4, t3, t4 (NaN dropped).

    Parameters
    ----------
    x
        A 1-D sequence of values; NaN are dropped.

    Returns
    -------
    dict
        The unbiased probability-weighted moments ``b0`` to ``b3``, the L-moments ``l1`` to
        ``l4`` and the ratios ``t3`` (L-skewness) and ``t4`` (L-kurtosis), as floats.

    References
    ----------
    Hosking, J. R. M. (1990). L-moments: analysis and estimation of distributions using
    linear combinations of order statistics. Journal of the Royal Statistical Society,
    Series B, 52(1), 105-124. https://doi.org/10.1111/j.2517-6161.1990.tb01775.x

    Hosking, J. R. M. and Wallis, J. R. (1997). Regional Frequency Analysis: An Approach
    Based on L-Moments. Cambridge University Press. https://doi.org/10.1017/CBO9780511529443

    Examples
    --------
    >>> from climwidgets.compute.gev import lmoments
    >>> m = lmoments([1.0, 2.0, 3.0, 4.0, 5.0])  # hand-computed: l1 = 3, l2 = 1, symmetric
    >>> {k: round(float(m[k]), 3) for k in ("l1", "l2", "t3", "t4")}
    {'l1': 3.0, 'l2': 1.0, 't3': 0.0, 't4': 0.0}
    """
    b0, b1, b2, b3 = _pwm(x)
    l1, l2 = b0, 2 * b1 - b0
    l3, l4 = 6 * b2 - 6 * b1 + b0, 20 * b3 - 30 * b2 + 12 * b1 - b0
    return dict(b0=b0, b1=b1, b2=b2, b3=b3, l1=l1, l2=l2, l3=l3, l4=l4, t3=l3 / l2, t4=l4 / l2)


def gev_lmoments(annual_max: Any, dist: str = "gev", min_years: int = 10, dim: str = "year") -> xr.Dataset:
    """Fit a GEV (or Gumbel) distribution to annual maxima in every cell by L-moments.

    Parameters
    ----------
    annual_max
        DataArray with a ``year`` dimension (for example from :func:`annual_maxima`), or a
        1-D sequence.  Missing years (NaN) are left out of each cell's sample.
    dist
        ``"gev"`` (shape from t3 by Hosking's approximation where it holds, exact
        inversion for heavier or more bounded tails; see the module notes) or ``"gumbel"``
        (shape 0).
    min_years
        Cells with fewer non-missing years get NaN parameters; their count is in
        ``attrs["n_cells_insufficient"]`` (numpy input; on dask input read ``n_years``).

    Returns
    -------
    xarray.Dataset
        ``loc``, ``scale`` (units of the input), ``shape`` (Hosking's k, see
        ``attrs["sign_convention"]``), ``n_years``, and the sample L-moments ``l1``, ``l2``,
        ``t3``, ``t4``.

    dim
        The name of the year dimension.

    Raises
    ------
    climwidgets.errors.ParameterError
        An unknown ``dist``, ``min_years`` below 4, a plain array that is not 1-D, or no
        ``dim`` dimension.
    climwidgets.errors.InsufficientDataError
        The year axis is shorter than ``min_years``, or (numpy input) no cell has enough years.

    References
    ----------
    Hosking, J. R. M. (1990). L-moments: analysis and estimation of distributions using
    linear combinations of order statistics. Journal of the Royal Statistical Society,
    Series B, 52(1), 105-124. https://doi.org/10.1111/j.2517-6161.1990.tb01775.x

    Hosking, J. R. M. and Wallis, J. R. (1997). Regional Frequency Analysis: An Approach
    Based on L-Moments. Cambridge University Press. https://doi.org/10.1017/CBO9780511529443

    Hosking, J. R. M., Wallis, J. R. and Wood, E. F. (1985). Estimation of the generalized
    extreme-value distribution by the method of probability-weighted moments.
    Technometrics, 27(3), 251-261. https://doi.org/10.1080/00401706.1985.10488049

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> amax = xr.DataArray([38., 52., 41., 67., 45., 49., 58., 36., 44., 71.,
    ...                      50., 47., 62., 40., 55., 43., 80., 48., 53., 46.], dims="year",
    ...                     coords={"year": np.arange(2001, 2021)}, attrs={"units": "mm"})
    >>> params = cw.gev_lmoments(amax)
    >>> {k: round(float(params[k]), 3) for k in ("loc", "scale", "shape")}  # k < 0: heavy tail
    {'loc': 45.495, 'scale': 8.301, 'shape': -0.106}
    """
    _check_dist(dist)
    _check_min_years(min_years)
    da = _as_maxima(annual_max, dim, min_years)
    outs = xr.apply_ufunc(
        _fit_block,
        da,
        kwargs=dict(dist=dist, min_years=min_years),
        input_core_dims=[[dim]],
        output_core_dims=[[]] * 8,
        dask="parallelized",
        output_dtypes=[float] * 8,
    )
    names = ("loc", "scale", "shape", "n_years", "l1", "l2", "t3", "t4")
    ds = xr.Dataset(dict(zip(names, outs)))
    units = da.attrs.get("units", "")
    for v, u, ln in (
        ("loc", units, "GEV location"),
        ("scale", units, "GEV scale"),
        ("shape", "1", "GEV shape k (Hosking)"),
        ("n_years", "1", "non-missing years"),
        ("l1", units, "L-mean"),
        ("l2", units, "L-scale"),
        ("t3", "1", "L-skewness"),
        ("t4", "1", "L-kurtosis"),
    ):
        ds[v].attrs.update(units=u, long_name=ln)
    n_short = _require_some_cell(ds["n_years"], min_years, _name(da))
    ds.attrs.update(
        distribution=dist,
        method="L-moments (Hosking 1990; Hosking & Wallis 1997); "
        "shape by the approximation of Hosking, Wallis & Wood (1985) for -0.5 <= k <= 0.5, "
        "by exact numerical inversion of the t3-k relation outside",
        sign_convention=SIGN_CONVENTION,
        min_years=min_years,
        insufficient_rule=f"cells with fewer than {min_years} non-missing years are NaN",
    )
    if n_short is not None:
        ds.attrs["n_cells_insufficient"] = n_short
    for key in ("duration", "year_start"):
        if key in da.attrs:
            ds.attrs[key] = da.attrs[key]
    return with_history(ds, "gev_lmoments", da.attrs, dist=dist, min_years=min_years)


def return_levels(
    annual_max: Any,
    periods: Any = (2, 10, 25, 50, 100),
    ci: float = 0.9,
    n_boot: int = 1000,
    seed: Any = 0,
    dist: str = "gev",
    min_years: int = 10,
    dim: str = "year",
) -> xr.Dataset:
    """Return levels (T-year depths) with parametric-bootstrap percentile intervals.

    The estimate is the quantile of the L-moment fit at F = 1 - 1/T.  The interval: draw
    ``n_boot`` samples of the cell's own size from the fitted distribution, refit each by
    L-moments, take the ``(1 - ci)/2`` and ``(1 + ci)/2`` percentiles of the refitted
    T-year levels.  One table of uniform draws from ``seed`` serves every cell (common
    random numbers): results are reproducible and do not depend on dask chunking, and the
    Monte-Carlo error of neighbouring cells is correlated.  The interval reflects sampling
    error of the fit only, not the choice of distribution or non-stationarity.

    Parameters
    ----------
    annual_max
        Annual maxima with a ``year`` dimension, or a 1-D sequence (as in
        :func:`gev_lmoments`).
    periods
        Return periods in years, each greater than 1.
    ci
        Confidence level of the interval, strictly between 0 and 1.
    n_boot
        Number of bootstrap samples (at least 50; 1000 or more for final numbers).
    seed
        Seed of the bootstrap's random draws (results are reproducible).
    dist, min_years, dim
        As in :func:`gev_lmoments`.

    Returns
    -------
    xarray.Dataset
        ``estimate``, ``lower``, ``upper`` over a ``period`` dimension (years), plus the
        fitted ``loc``, ``scale``, ``shape``; ``attrs["cautions"]`` holds
        :data:`~climwidgets.compute.warming.DESIGN_DEPTH_CAUTIONS`.

    Raises
    ------
    climwidgets.errors.ParameterError
        Bad ``periods``, ``ci``, ``n_boot``, ``dist`` or ``min_years``, or no ``dim``.
    climwidgets.errors.InsufficientDataError
        Too few years (see :func:`gev_lmoments`).

    References
    ----------
    Hosking, J. R. M. (1990). L-moments: analysis and estimation of distributions using
    linear combinations of order statistics. Journal of the Royal Statistical Society,
    Series B, 52(1), 105-124. https://doi.org/10.1111/j.2517-6161.1990.tb01775.x

    Hosking, J. R. M. and Wallis, J. R. (1997). Regional Frequency Analysis: An Approach
    Based on L-Moments. Cambridge University Press. https://doi.org/10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> amax = xr.DataArray([38., 52., 41., 67., 45., 49., 58., 36., 44., 71.,
    ...                      50., 47., 62., 40., 55., 43., 80., 48., 53., 46.], dims="year",
    ...                     coords={"year": np.arange(2001, 2021)}, attrs={"units": "mm"})
    >>> levels = cw.return_levels(amax, periods=(10, 100), n_boot=200)
    >>> levels["estimate"].values.round(1)  # the 10- and 100-year depths (mm)
    array([66.6, 94.7])
    >>> bool(((levels["lower"] < levels["estimate"]) & (levels["estimate"] < levels["upper"])).all())
    True
    """
    _check_dist(dist)
    _check_min_years(min_years)
    T = _check_periods(periods)
    if not (isinstance(ci, (float, int)) and 0 < ci < 1):
        raise ParameterError(
            f"ci={ci!r} is not a probability",
            variable="ci",
            expected="a confidence level strictly between 0 and 1",
            fix="use ci=0.9 for a 90 % interval",
        )
    if not isinstance(n_boot, (int, np.integer)) or isinstance(n_boot, bool) or n_boot < 50:
        raise ParameterError(
            f"n_boot={n_boot!r} is too small for percentile intervals",
            variable="n_boot",
            expected="an integer of at least 50 (1000 or more for final numbers)",
            fix="use n_boot=1000",
        )
    da = _as_maxima(annual_max, dim, min_years)
    params = gev_lmoments(da, dist=dist, min_years=min_years, dim=dim)
    F = 1.0 - 1.0 / T
    est, lo, hi = xr.apply_ufunc(
        _bootstrap_block,
        da,
        kwargs=dict(F=F, dist=dist, min_years=min_years, ci=float(ci), n_boot=int(n_boot), seed=seed),
        input_core_dims=[[dim]],
        output_core_dims=[["period"]] * 3,
        dask="parallelized",
        output_dtypes=[float] * 3,
        dask_gufunc_kwargs=dict(output_sizes={"period": T.size}),
    )
    units = da.attrs.get("units", "")
    ds = xr.Dataset(dict(estimate=est, lower=lo, upper=hi))
    ds = ds.assign_coords(period=("period", T, {"units": "years", "long_name": "return period"}))
    ds = ds.transpose("period", ...)
    for v, ln in (
        ("estimate", "return level"),
        ("lower", f"lower bound of the {ci:.0%} interval"),
        ("upper", f"upper bound of the {ci:.0%} interval"),
    ):
        ds[v].attrs.update(units=units, long_name=ln)
    for v in ("loc", "scale", "shape"):
        ds[v] = params[v]
    ds.attrs.update({k: v for k, v in params.attrs.items() if k != "history"})
    ds.attrs.update(
        ci=float(ci),
        n_boot=int(n_boot),
        seed=seed,
        interval_method="parametric bootstrap, refit by L-moments, percentile interval, common random numbers",
        quantile="x(F) = loc + scale/k (1 - (-ln F)^k), F = 1 - 1/T; Gumbel when k = 0",
        cautions=DESIGN_DEPTH_CAUTIONS,
    )
    return with_history(
        ds,
        "return_levels",
        da.attrs,
        periods=tuple(T.tolist()),
        ci=ci,
        n_boot=n_boot,
        seed=seed,
        dist=dist,
        min_years=min_years,
    )


def return_period(
    annual_max_or_params: Any, depth: Any, dist: str = "gev", min_years: int = 10, dim: str = "year"
) -> xr.DataArray:
    """Return period (years) of a depth: the inverse of :func:`return_levels`.

    ``annual_max_or_params`` is either a Dataset with ``loc``, ``scale``, ``shape`` (as from
    :func:`gev_lmoments`) or annual maxima to be fitted first.  ``depth`` broadcasts against
    the parameters (a scalar, or a DataArray).  T = 1 / (1 - F(depth)); depths above a
    bounded upper tail (k > 0) give infinity, depths below a bounded lower tail give 1.

    Parameters
    ----------
    annual_max_or_params
        A Dataset with ``loc``, ``scale`` and ``shape``, or annual maxima to fit first.
    depth
        The depth(s), in the units of the maxima; a scalar, array or DataArray.
    dist, min_years, dim
        As in :func:`gev_lmoments`, for maxima that are fitted first.

    Returns
    -------
    xarray.DataArray
        ``return_period`` in years (units "years"), broadcast over ``depth`` and the
        parameters' cells.

    Raises
    ------
    climwidgets.errors.ParameterError
        Bad fit settings, when maxima are passed (see :func:`gev_lmoments`).
    climwidgets.errors.InsufficientDataError
        Too few years, when maxima are passed.

    References
    ----------
    Hosking, J. R. M. (1990). L-moments: analysis and estimation of distributions using
    linear combinations of order statistics. Journal of the Royal Statistical Society,
    Series B, 52(1), 105-124. https://doi.org/10.1111/j.2517-6161.1990.tb01775.x

    Hosking, J. R. M. and Wallis, J. R. (1997). Regional Frequency Analysis: An Approach
    Based on L-Moments. Cambridge University Press. https://doi.org/10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> amax = xr.DataArray([38., 52., 41., 67., 45., 49., 58., 36., 44., 71.,
    ...                      50., 47., 62., 40., 55., 43., 80., 48., 53., 46.], dims="year",
    ...                     coords={"year": np.arange(2001, 2021)}, attrs={"units": "mm"})
    >>> params = cw.gev_lmoments(amax)
    >>> round(float(cw.return_period(params, 70.0)), 1)  # 70 mm: once in about 14 years
    13.6
    """
    if isinstance(annual_max_or_params, xr.Dataset) and {"loc", "scale", "shape"} <= set(annual_max_or_params):
        params = annual_max_or_params
    else:
        params = gev_lmoments(annual_max_or_params, dist=dist, min_years=min_years, dim=dim)
    depth = depth if isinstance(depth, xr.DataArray) else xr.DataArray(np.asarray(depth, dtype=float))
    T: xr.DataArray = xr.apply_ufunc(
        _period, depth, params["loc"], params["scale"], params["shape"], dask="parallelized", output_dtypes=[float]
    )
    T = T.rename("return_period")
    T.attrs.update(
        units="years", long_name="return period", sign_convention=SIGN_CONVENTION, cautions=DESIGN_DEPTH_CAUTIONS
    )
    return with_history(T, "return_period", params.attrs)


def gev_mle(series: Any, min_years: int = 10) -> xr.Dataset:
    """Maximum-likelihood GEV fit of one 1-D series (``scipy.stats.genextreme.fit``), for comparison.

    Started from the L-moment fit.  Returns a Dataset of scalars ``loc``, ``scale``,
    ``shape`` in the same convention as :func:`gev_lmoments` (shape = Hosking's k =
    scipy's c).  MLE of the shape is erratic for short records; prefer L-moments there.

    Parameters
    ----------
    series
        A 1-D sequence or DataArray of annual maxima; NaN are dropped.
    min_years
        The fewest non-missing values accepted (at least 4).

    Returns
    -------
    xarray.Dataset
        Scalars ``loc``, ``scale`` (units of the input), ``shape`` and ``n_years``.

    Raises
    ------
    climwidgets.errors.ParameterError
        A series that is not 1-D, or ``min_years`` below 4.
    climwidgets.errors.InsufficientDataError
        Fewer than ``min_years`` non-missing values.

    References
    ----------
    Coles, S. (2001). An Introduction to Statistical Modeling of Extreme Values. Springer,
    London. https://doi.org/10.1007/978-1-4471-3675-0

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.compute.gev import gev_mle
    >>> amax = xr.DataArray([38., 52., 41., 67., 45., 49., 58., 36., 44., 71.,
    ...                      50., 47., 62., 40., 55., 43., 80., 48., 53., 46.], dims="year",
    ...                     coords={"year": np.arange(2001, 2021)}, attrs={"units": "mm"})
    >>> fit = gev_mle(amax)  # close to the L-moment fit (loc 45.5, scale 8.3, shape -0.11)
    >>> round(float(fit["loc"])), round(float(fit["scale"])), round(float(fit["shape"]), 1)
    (46, 8, -0.1)
    """
    _check_min_years(min_years)
    arr = np.asarray(series.values if isinstance(series, xr.DataArray) else series, dtype=float)
    if arr.ndim != 1:
        raise ParameterError(
            f"gev_mle fits one series; got {arr.ndim} dimensions",
            source=_name(series),
            expected="a 1-D series of annual maxima",
            fix="select one cell (e.g. .isel(lat=0, lon=0)) or use gev_lmoments for grids",
        )
    x = arr[np.isfinite(arr)]
    if x.size < min_years:
        raise InsufficientDataError(
            f"only {x.size} non-missing annual maxima",
            source=_name(series),
            expected=f"at least min_years={min_years} values",
            fix="use a longer record",
        )
    m = lmoments(x)
    loc0, scale0, k0 = (float(v) for v in _params_from_lmoments(m["l1"], m["l2"], m["t3"], "gev"))
    if not np.isfinite(k0):
        loc0, scale0, k0 = float(np.mean(x)), float(np.std(x)), 0.0
    c, loc, scale = stats.genextreme.fit(x, k0, loc=loc0, scale=scale0)
    units = getattr(series, "attrs", {}).get("units", "")
    ds = xr.Dataset(
        dict(
            loc=((), loc, {"units": units}),
            scale=((), scale, {"units": units}),
            shape=((), c, {"units": "1"}),
            n_years=((), float(x.size), {"units": "1"}),
        )
    )
    ds.attrs.update(
        distribution="gev", method="maximum likelihood, scipy.stats.genextreme.fit", sign_convention=SIGN_CONVENTION
    )
    return with_history(ds, "gev_mle", getattr(series, "attrs", {}), min_years=min_years)
