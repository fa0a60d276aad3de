"""Standardized Precipitation Index (McKee, Doesken & Kleist 1993; WMO-No. 1090, 2012).

Steps: monthly totals -> running sums over ``scale`` months (ending in the labelled month)
-> for each calendar month, a two-parameter gamma distribution fitted to the non-zero
baseline sums by the Thom (1958) approximation of maximum likelihood (as given by Edwards
& McKee 1997, eqs. 3.6-3.8):

    A = ln(mean) - mean(ln x),  alpha = (1 + sqrt(1 + 4A/3)) / (4A),  beta = mean / alpha

-> mixed with the probability of zero, H(x) = q + (1 - q) G(x), q = share of zero sums in
the baseline -> SPI = Phi^-1(H), the exact inverse normal (scipy.special.ndtri; the
original papers used the Abramowitz & Stegun 26.2.23 approximation, within 4.5e-4).

A zero sum therefore gets Phi^-1(q).  Values outside +-``clip`` (default 8.21, the largest
|Phi^-1| representable near H = 1 in double precision, also used by common libraries) are
clipped so that H = 0 or 1 does not give infinities.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import xarray as xr
from scipy import special

from ..errors import ParameterError
from ..provenance import with_history
from ._time import (
    check_year_range,
    data_period,
    monthly_with_coverage,
    precip_mm,
    source_name,
)

__all__ = ["spi", "spi_category", "thom_gamma_fit", "SPI_SCALES", "SPI_CLASSES"]

SPI_SCALES = (1, 3, 6, 9, 12, 24)

# WMO (2012) SPI User Guide (WMO-No. 1090), Table 1: (lower bound inclusive, label) from the top.
SPI_CLASSES = (
    (2.0, "extremely wet"),
    (1.5, "very wet"),
    (1.0, "moderately wet"),
    (-1.0, "near normal"),  # -0.99 .. 0.99: strictly between -1 and 1
    (-1.5, "moderately dry"),  # -1.0 .. -1.49
    (-2.0, "severely dry"),  # -1.5 .. -1.99
    (-np.inf, "extremely dry"),  # <= -2.0
)


def thom_gamma_fit(values: xr.DataArray, dim: str) -> tuple[xr.DataArray, xr.DataArray, xr.DataArray, xr.DataArray]:
    """Gamma shape and scale by the Thom (1958) approximation, fitted to the positive values.

    Parameters
    ----------
    values
        DataArray of non-negative sums (NaN for missing) with the dimension ``dim``.
    dim
        The dimension along which to fit (e.g. the baseline years of one calendar month).

    Returns
    -------
    tuple of xarray.DataArray
        ``(alpha, beta, q, n)``: shape, scale, share of zeros among the valid values and
        the number of valid values along ``dim``.  NaN parameters where fewer than two
        distinct positive values exist (A = 0).

    References
    ----------
    Thom, H. C. S. (1958). A note on the gamma distribution. Monthly Weather Review, 86(4),
    117-122.

    Edwards, D. C. and McKee, T. B. (1997). Characteristics of 20th century drought in the
    United States at multiple time scales. Climatology Report 97-2 (eqs. 3.6-3.8).

    Examples
    --------
    >>> import xarray as xr
    >>> from climwidgets.compute.spi import thom_gamma_fit
    >>> sums = xr.DataArray([0.0, 2.0, 4.0, 8.0], dims="year")  # A = ln(14/3) - ln(4)
    >>> alpha, beta, q, n = thom_gamma_fit(sums, "year")
    >>> round(float(alpha), 4), round(float(beta), 4), float(q), int(n)
    (3.4025, 1.3716, 0.25, 4)
    """
    positive = values.where(values > 0)
    n_pos = positive.count(dim)
    n_valid = values.count(dim)
    n_zero = (values == 0).sum(dim)
    mean = positive.sum(dim) / n_pos.where(n_pos > 0)
    # log of NaN stays NaN; positive has no zeros, so no divide warning
    mean_log = xr.apply_ufunc(np.log, positive, dask="allowed").sum(dim) / n_pos.where(n_pos > 0)
    a = xr.apply_ufunc(np.log, mean, dask="allowed") - mean_log
    a = a.where(a > 0)
    alpha = (1 + np.sqrt(1 + 4 * a / 3)) / (4 * a)
    beta = mean / alpha
    q = n_zero / n_valid.where(n_valid > 0)
    return alpha, beta, q, n_valid


def _spi_kernel(x: np.ndarray, alpha: np.ndarray, beta: np.ndarray, q: np.ndarray, clip: float) -> np.ndarray:
    with np.errstate(invalid="ignore", divide="ignore"):
        g = special.gammainc(alpha, np.where(x > 0, x, 0.0) / beta)
        h = np.where(x > 0, q + (1 - q) * g, q)
        z = special.ndtri(h)
    z = np.where(np.isnan(x) | np.isnan(alpha) | np.isnan(beta) | np.isnan(q), np.nan, z)
    return np.clip(z, -clip, clip)


def spi(pr: xr.DataArray, scale: int = 3, baseline: Sequence[int] = (1991, 2020), clip: float = 8.21) -> xr.DataArray:
    """Monthly Standardized Precipitation Index on the monthly time axis.

    Parameters
    ----------
    pr
        Precipitation depth per step in mm (hourly, daily or monthly; summed to months with
        the rule that a month with any missing step is missing).
    scale
        Accumulation period in months, one of 1, 3, 6, 9, 12, 24.  The value at month m
        uses the sum of months m-scale+1 .. m (NaN if any is missing).
    baseline
        (first, last) calendar years (of the accumulation's last month) used for the fit.
    clip
        SPI values are clipped to [-clip, clip] (default 8.21).

    Returns
    -------
    xarray.DataArray
        SPI (units "1") on the monthly time axis, NaN for the first ``scale - 1`` months
        and where a sum is missing, with the fit method in ``attrs["fit_method"]``.  Lazy
        on dask input.

    Raises
    ------
    climwidgets.errors.ParameterError
        A scale not in :data:`SPI_SCALES`, a clip that is not positive, a malformed
        baseline, or fewer complete months than ``scale``.
    climwidgets.errors.InputError
        ``pr`` without usable units or step.

    References
    ----------
    McKee, T. B., Doesken, N. J. and Kleist, J. (1993). The relationship of drought
    frequency and duration to time scales. Preprints, 8th Conference on Applied
    Climatology, American Meteorological Society, Anaheim, 179-184.

    WMO (2012). Standardized Precipitation Index User Guide. WMO-No. 1090. World
    Meteorological Organization, Geneva.

    Thom, H. C. S. (1958). A note on the gamma distribution. Monthly Weather Review, 86(4),
    117-122.

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> import climwidgets as cw
    >>> time = pd.date_range("1991-01-01", "2020-12-01", freq="MS")
    >>> rng = np.random.default_rng(0)  # 30 years of invented monthly totals
    >>> pr = xr.DataArray(rng.gamma(2.0, 40.0, time.size), dims="time", coords={"time": time},
    ...                   attrs={"units": "mm", "step": "month"})
    >>> index = cw.spi(pr, scale=3, baseline=(1991, 2020))
    >>> index.values[:4].round(2)  # the first two months have no 3-month sum
    array([ nan,  nan, 0.01, 1.01])
    >>> round(float(index.std()), 2)  # standardized over the baseline
    1.0
    """
    func = "spi"
    if isinstance(scale, bool) or scale not in SPI_SCALES:
        raise ParameterError(
            f"scale={scale!r} is not an accepted SPI scale",
            source=func,
            variable="scale",
            expected=f"one of {SPI_SCALES} months",
            fix="pass scale=3 (or another listed scale)",
        )
    if not isinstance(clip, (int, float)) or isinstance(clip, bool) or not clip > 0:
        raise ParameterError(
            f"clip={clip!r} must be a positive number",
            source=func,
            variable="clip",
            expected="a positive number, e.g. 8.21",
            fix="pass clip=8.21",
        )
    pr, step = precip_mm(pr, func)
    src = source_name(pr)
    first, last = check_year_range(baseline, func, "baseline")
    monthly, covered = monthly_with_coverage(pr, step)
    if int(covered.sum()) < scale:
        raise ParameterError(
            f"the data hold {int(covered.sum())} complete months ({data_period(monthly)}), fewer than scale={scale}",
            source=src,
            variable="scale",
            expected=f"at least {scale} months of data",
            fix="use a shorter scale or a longer record",
        )
    years = monthly["time"].dt.year
    if first < int(years.min()) or last > int(years.max()):
        raise ParameterError(
            f"baseline=({first}, {last}) lies outside the data period {data_period(monthly)}",
            source=src,
            variable="baseline",
            expected=f"years within {int(years.min())}-{int(years.max())}",
            fix="choose a baseline inside the data period or supply a longer record",
        )
    acc = monthly.rolling(time=scale, min_periods=scale).sum() if scale > 1 else monthly
    in_base = ((years >= first) & (years <= last)).values
    base = acc.isel(time=np.flatnonzero(in_base))
    base_months = base["time"].dt.month.values
    # one fit per calendar month (a loop over 12 months, not over cells)
    fits = [thom_gamma_fit(base.isel(time=np.flatnonzero(base_months == m)), "time") for m in range(1, 13)]
    keys = xr.DataArray(np.arange(1, 13), dims="month", name="month")
    alpha, beta, q, n = (xr.concat([f[i] for f in fits], dim=keys) for i in range(4))
    month_of = acc["time"].dt.month

    def per_step(p: xr.DataArray) -> xr.DataArray:
        return p.sel(month=month_of).drop_vars("month")

    out: xr.DataArray = xr.apply_ufunc(
        _spi_kernel,
        acc,
        per_step(alpha),
        per_step(beta),
        per_step(q),
        kwargs={"clip": float(clip)},
        dask="parallelized",
        output_dtypes=[float],
    )
    out.name = "spi"
    out.attrs = {
        "units": "1",
        "long_name": f"Standardized Precipitation Index, {scale}-month",
        "scale_months": int(scale),
        "baseline": [first, last],
        "clip": float(clip),
        "fit_method": "two-parameter gamma per calendar month fitted to the non-zero baseline "
        "sums by the Thom (1958) approximation of maximum likelihood; "
        "H = q + (1 - q) G(x) with q the share of zero sums; SPI = exact inverse "
        "normal of H (McKee, Doesken & Kleist 1993; WMO-No. 1090, 2012)",
        "clip_rule": f"values beyond +-{clip:g} are clipped (H of 0 or 1 would be infinite)",
        "zero_rule": "a zero sum gets the inverse normal of q",
    }
    return with_history(out, func, pr.attrs, scale=scale, baseline=baseline, clip=clip)


def _category_kernel(z: np.ndarray) -> np.ndarray:
    labels = np.full(z.shape, "missing", dtype="<U14")
    labels[z >= 2.0] = "extremely wet"
    labels[(z >= 1.5) & (z < 2.0)] = "very wet"
    labels[(z >= 1.0) & (z < 1.5)] = "moderately wet"
    labels[(z > -1.0) & (z < 1.0)] = "near normal"
    labels[(z <= -1.0) & (z > -1.5)] = "moderately dry"
    labels[(z <= -1.5) & (z > -2.0)] = "severely dry"
    labels[z <= -2.0] = "extremely dry"
    return labels


def spi_category(spi_values: xr.DataArray) -> xr.DataArray:
    """SPI class labels after the WMO (2012) SPI User Guide, Table 1.

    >= 2.0 extremely wet; 1.5 to 1.99 very wet; 1.0 to 1.49 moderately wet; -0.99 to 0.99
    near normal; -1.0 to -1.49 moderately dry; -1.5 to -1.99 severely dry; <= -2.0
    extremely dry.  Between the table's two-decimal steps the lower class boundary is
    inclusive on the wet side (1.0 is moderately wet) and the upper one on the dry side
    (-1.0 is moderately dry).  Missing SPI gives "missing".

    Parameters
    ----------
    spi_values
        SPI values (the DataArray returned by :func:`spi`).

    Returns
    -------
    xarray.DataArray
        ``spi_category``: the class label of each value (strings), on the same dims.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``spi_values`` is not a DataArray.

    References
    ----------
    WMO (2012). Standardized Precipitation Index User Guide. WMO-No. 1090. World
    Meteorological Organization, Geneva.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> values = xr.DataArray([2.3, 1.0, 0.2, -1.0, -1.7, np.nan], dims="time")
    >>> cw.spi_category(values).values
    array(['extremely wet', 'moderately wet', 'near normal', 'moderately dry',
           'severely dry', 'missing'], dtype='<U14')
    """
    if not isinstance(spi_values, xr.DataArray):
        raise ParameterError(
            f"spi_category needs a DataArray, got {type(spi_values).__name__}",
            source="spi_category",
            expected="the DataArray returned by spi()",
            fix="pass the result of climwidgets.spi",
        )
    out: xr.DataArray = xr.apply_ufunc(_category_kernel, spi_values, dask="parallelized", output_dtypes=["<U14"])
    out.name = "spi_category"
    out.attrs = {"long_name": "SPI class", "classes": "WMO (2012) SPI User Guide, Table 1"}
    return with_history(out, "spi_category", spi_values.attrs)
