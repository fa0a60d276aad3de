"""Regional frequency analysis by the index-flood method with L-moments (Hosking & Wallis 1997).

Per-cell fits from a few decades of annual maxima scatter from cell to cell.  Pooling the
cells of a region that share one growth curve (the distribution of maxima divided by
their mean) steadies the estimate.  Steps, all as in Hosking & Wallis (1997):

1. At-site sample L-moment ratios: L-CV ``t = l2 / l1``, ``t3``, ``t4``; the site's index
   is its mean annual maximum ``l1``.
2. Discordancy (section 3.2): ``D_i = N/3 (u_i - u)^T A^-1 (u_i - u)``, u_i = (t, t3, t4)
   of site i, u their unweighted mean, ``A = sum (u_i - u)(u_i - u)^T``.  A site is
   discordant when D_i exceeds the critical value of their Table 3.1 (3 for N >= 15).
3. Heterogeneity (section 4.3): the record-length-weighted spread of the at-site L-CVs
   ``V1 = sqrt(sum n_i (t_i - t_R)^2 / sum n_i)`` (and V2 from (t, t3), V3 from (t3, t4)),
   compared with ``n_sim`` simulated homogeneous regions of the same record lengths drawn
   from the kappa distribution fitted to the regional average ratios (lmoments3's kappa
   fit; the generalized logistic, kappa with h = -1, when t4 lies above its range):
   ``H = (V - mean V_sim) / sd V_sim``.  H < 1 acceptably homogeneous, 1 <= H < 2
   possibly heterogeneous, H >= 2 definitely heterogeneous.
4. Regional growth curve: a GEV fitted by L-moments to the record-length-weighted
   regional averages (1, t_R, t3_R); each cell's T-year depth is its index times the
   growth curve at F = 1 - 1/T.
5. Uncertainty (section 6.4): ``n_boot`` regions simulated from the fitted regional GEV
   with each site's index and record length (sites independent), refitted by steps 1-4;
   with L and U the (1 - ci)/2 and (1 + ci)/2 quantiles of the ratio estimate/true, the
   interval is estimate / U to estimate / L.  It covers sampling error only, assuming the
   region is homogeneous and the sites independent (neighbouring cells are not, so the
   interval is too narrow for gridded data).

The simulations are seeded (``seed``) and vectorised over replicates and sites.  A region
is the unit of work: its cells are taken in one block.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import Any

import numpy as np
import xarray as xr

from ..errors import InsufficientDataError, ParameterError
from ..provenance import with_history
from .gev import (
    _as_maxima,
    _check_min_years,
    _check_periods,
    _params_from_lmoments,
    _quantile,
    _sample_lmoments,
)
from .warming import DESIGN_DEPTH_CAUTIONS

__all__ = ["DISCORDANCY_CRITICAL", "discordancy", "discordancy_critical", "regional_frequency"]

#: Critical D_i by number of sites, Hosking & Wallis (1997) Table 3.1 (recalled from memory, and equal to
#: 3 decimals to the table in Hosking's lmomRFA 3.0-1, regtst.s: tests/compute/test_regional.py); 3 from 15 on.
DISCORDANCY_CRITICAL = {
    5: 1.333,
    6: 1.648,
    7: 1.917,
    8: 2.140,
    9: 2.329,
    10: 2.491,
    11: 2.632,
    12: 2.757,
    13: 2.869,
    14: 2.971,
}
_BLOCK_ELEMENTS = 2_000_000
_STATS = (
    "H1",
    "H2",
    "H3",
    "t_R",
    "t3_R",
    "t4_R",
    "growth_loc",
    "growth_scale",
    "growth_shape",
    "n_sites",
    "kappa_used",
)


def discordancy_critical(n_sites: Any) -> float:
    """Critical discordancy for a region of ``n_sites`` (NaN below 5 sites).

    Parameters
    ----------
    n_sites
        The number of sites (cells) in the region.

    Returns
    -------
    float
        The critical D_i of Hosking & Wallis (1997) Table 3.1; 3 from 15 sites on, NaN
        below 5.

    References
    ----------
    Hosking, J. R. M. & Wallis, J. R. (1997) Regional Frequency Analysis: An Approach Based
    on L-Moments. Cambridge University Press. doi:10.1017/CBO9780511529443

    Examples
    --------
    >>> from climwidgets.compute.regional import discordancy_critical
    >>> discordancy_critical(5), discordancy_critical(10), discordancy_critical(20)
    (1.333, 2.491, 3.0)
    """
    if n_sites < 5:
        return float("nan")
    return DISCORDANCY_CRITICAL.get(int(n_sites), 3.0)


def discordancy(t: Any, t3: Any, t4: Any) -> np.ndarray:
    """Discordancy D_i of each site from its L-CV, L-skewness and L-kurtosis (1-D arrays).

    NaN for every site when there are fewer than 4 sites (A cannot be inverted).

    Parameters
    ----------
    t, t3, t4
        The sites' sample L-CV, L-skewness and L-kurtosis, 1-D arrays of one length.

    Returns
    -------
    numpy.ndarray
        D_i of each site (Hosking & Wallis 1997, section 3.2).  With A the sum of the
        outer products, the D_i add up to the number of sites (their mean is 1).

    References
    ----------
    Hosking, J. R. M. & Wallis, J. R. (1997) Regional Frequency Analysis: An Approach Based
    on L-Moments. Cambridge University Press. doi:10.1017/CBO9780511529443

    Examples
    --------
    >>> from climwidgets.compute.regional import discordancy
    >>> d = discordancy([0.20, 0.25, 0.22, 0.30, 0.21], [0.10, 0.15, 0.12, 0.30, 0.11],
    ...                 [0.12, 0.14, 0.13, 0.20, 0.12])
    >>> d.round(2), round(float(d.sum()), 6)  # the fourth site stands out most
    (array([0.67, 1.17, 0.67, 1.33, 1.17]), 5.0)
    """
    u = np.stack([np.asarray(t, float), np.asarray(t3, float), np.asarray(t4, float)], axis=-1)
    n = u.shape[0]
    if n < 4:
        return np.full(n, np.nan)
    d = u - u.mean(axis=0)
    a = d.T @ d
    try:
        ainv = np.linalg.inv(a)
    except np.linalg.LinAlgError:
        return np.full(n, np.nan)
    out: np.ndarray = n / 3.0 * np.einsum("ij,jk,ik->i", d, ainv, d)
    return out


def _ratios(x: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """n, l1, t (L-CV), t3, t4 along the last axis."""
    n, l1, l2, t3, t4 = _sample_lmoments(x)
    with np.errstate(divide="ignore", invalid="ignore"):
        return n, l1, l2 / l1, t3, t4


def _weighted(n: np.ndarray, *ratios: np.ndarray) -> list[np.ndarray]:
    """Record-length-weighted means along the last axis."""
    w = n / n.sum(axis=-1, keepdims=True)
    return [(w * r).sum(axis=-1) for r in ratios]


def _spreads(n: np.ndarray, t: np.ndarray, t3: np.ndarray, t4: np.ndarray) -> np.ndarray:
    """V1, V2, V3 of Hosking & Wallis (1997, eqs 4.4-4.6) along the last (site) axis."""
    tr, t3r, t4r = _weighted(n, t, t3, t4)
    tot = n.sum(axis=-1)
    v1 = np.sqrt((n * (t - tr[..., None]) ** 2).sum(axis=-1) / tot)
    v2 = (n * np.hypot(t - tr[..., None], t3 - t3r[..., None])).sum(axis=-1) / tot
    v3 = (n * np.hypot(t3 - t3r[..., None], t4 - t4r[..., None])).sum(axis=-1) / tot
    return np.stack([v1, v2, v3], axis=-1)


def _kappa(tr: Any, t3r: Any, t4r: Any) -> tuple[Any, str, dict[str, Any]]:
    """Kappa distribution for the regional ratios (lmoments3), or the GLO when t4 is too high."""
    from lmoments3 import distr

    try:
        params = distr.kap.lmom_fit(lmom_ratios=[1.0, tr, t3r, t4r])
        if all(np.isfinite(v) for v in params.values()):
            return distr.kap(**params), "kappa", dict(params)
    except ValueError:
        pass
    params = distr.glo.lmom_fit(lmom_ratios=[1.0, tr, t3r, t4r])
    return distr.glo(**params), "generalized logistic (kappa with h = -1)", dict(params)


def _simulate(
    draw: Callable[[np.ndarray], Any], n_rep: int, n_sites: int, n_years: np.ndarray, rng: np.random.Generator
) -> Iterator[np.ndarray]:
    """Yield blocks of simulated regions (rep, site, year), NaN beyond each site's record."""
    ymax = int(n_years.max())
    col = np.arange(ymax)
    step = max(1, _BLOCK_ELEMENTS // max(1, n_sites * ymax))
    for start in range(0, n_rep, step):  # memory bound: blocks of replicates
        m = min(step, n_rep - start)
        u = np.clip(rng.random((m, n_sites, ymax)), 1e-12, 1 - 1e-12)
        x = draw(u)
        yield np.where(col[None, None, :] < n_years[None, :, None], x, np.nan)


def _region_block(
    x: np.ndarray, member: np.ndarray, F: np.ndarray, min_years: int, n_sim: int, n_boot: int, ci: float, seed: Any
) -> tuple[np.ndarray, ...]:
    """Regional analysis of the member cells of x (..., year).  See the module notes."""
    lead = x.shape[:-1]
    xf = x.reshape(-1, x.shape[-1])
    n, l1, t, t3, t4 = _ratios(xf)
    ok = member.reshape(-1).astype(bool) & (n >= min_years) & np.isfinite(t3) & (l1 > 0)
    idx = np.flatnonzero(ok)
    nsite = idx.size
    cells = xf.shape[0]
    dvals = np.full(cells, np.nan)
    est = np.full((cells, F.size), np.nan)
    lo, hi = est.copy(), est.copy()
    region = np.full(len(_STATS), np.nan)
    growth = np.full((3, F.size), np.nan)
    if nsite >= 2:
        rng = np.random.default_rng(seed)
        ns, l1s, ts, t3s, t4s = n[idx], l1[idx], t[idx], t3[idx], t4[idx]
        dvals[idx] = discordancy(ts, t3s, t4s)
        tr, t3r, t4r = _weighted(ns, ts, t3s, t4s)
        v_obs = _spreads(ns, ts, t3s, t4s)
        dist, dist_name, _ = _kappa(tr, t3r, t4r)
        with np.errstate(invalid="ignore", divide="ignore"):  # lmoments3's kappa ppf evaluates both branches
            sims = [_spreads(ns[None, :], *_ratios(block)[2:]) for block in _simulate(dist.ppf, n_sim, nsite, ns, rng)]
        v_sim = np.concatenate(sims, axis=0)
        h = (v_obs - v_sim.mean(axis=0)) / v_sim.std(axis=0, ddof=1)
        loc, scale, k = (float(v) for v in _params_from_lmoments(1.0, tr, t3r, "gev"))
        q = _quantile(F, loc, scale, k)
        region[:] = [*h, tr, t3r, t4r, loc, scale, k, nsite, float(dist_name == "kappa")]
        est[idx] = l1s[:, None] * q[None, :]
        # accuracy by simulation from the fitted regional GEV, each site with its own index
        ratio_site, ratio_growth = [], []
        for block in _simulate(lambda u: _quantile(u, loc, scale, k), n_boot, nsite, ns, rng):
            bn, bl1, bt, bt3, _ = _ratios(block * l1s[None, :, None])
            btr, bt3r = _weighted(bn, bt, bt3)
            bloc, bscale, bk = _params_from_lmoments(1.0, btr, bt3r, "gev")
            bq = _quantile(F[None, :], bloc[:, None], bscale[:, None], bk[:, None])  # (rep, period)
            ratio_growth.append(bq / q[None, :])
            ratio_site.append(bl1[:, :, None] * bq[:, None, :] / (l1s[None, :, None] * q[None, None, :]))
        rg = np.concatenate(ratio_growth, axis=0)
        rs = np.concatenate(ratio_site, axis=0)
        qa, qb = (1 - ci) / 2, (1 + ci) / 2
        with np.errstate(all="ignore"):
            g_l, g_u = np.nanquantile(rg, [qa, qb], axis=0)  # one (rep, period) table: not per cell
            s_l, s_u = np.quantile(rs, [qa, qb], axis=0)  # vectorised over sites
        growth[:] = [q, q / g_u, q / g_l]
        lo[idx], hi[idx] = est[idx] / s_u, est[idx] / s_l
    shape = lead + (F.size,)
    return (dvals.reshape(lead), est.reshape(shape), lo.reshape(shape), hi.reshape(shape), region, growth)


def _labels(annual_max: xr.DataArray, regions: Any, dim: str) -> tuple[np.ndarray, list[Any]]:
    """Region label per cell (numpy, object dtype; None = in no region) and the region names."""
    spatial = [d for d in annual_max.dims if d != dim]
    template = annual_max.isel({dim: 0}, drop=True)
    if regions is None:
        lab = np.full(template.shape, "region", dtype=object)
    elif isinstance(regions, xr.DataArray):
        if set(regions.dims) != set(spatial):
            raise ParameterError(
                f"region labels have dims {regions.dims}, the maxima {tuple(spatial)}",
                variable="regions",
                expected="labels on the same spatial dims as the maxima",
                fix="build labels on the maxima's grid, e.g. xr.full_like(am.isel(year=0), 1)",
            )
        vals = np.asarray(regions.transpose(*template.dims).values, dtype=object)
        lab = np.where(
            [v is None or (isinstance(v, float) and np.isnan(v)) or v == "" for v in vals.ravel()],  # type: ignore[call-overload]
            None,
            vals.ravel(),
        ).reshape(vals.shape)
    else:
        from ..geo.coverage import coverage_weights

        basins = (
            list(regions.values())
            if isinstance(regions, dict)
            else ([regions] if hasattr(regions, "geometry") else list(regions))
        )
        if not basins or any(not hasattr(b, "geometry") for b in basins):
            raise ParameterError(
                "regions must be None, a label DataArray or Basins",
                variable="regions",
                expected="a DataArray of region labels per cell, a Basin or a list of Basins",
                fix="pass regions=labels or regions=[basin_a, basin_b]",
            )
        lab = np.full(template.shape, None, dtype=object)
        for b in basins:  # a cell belongs to the basin covering at least half of it
            cov = coverage_weights(b, template).transpose(*template.dims).values
            lab = np.where((cov >= 0.5) & (lab == None), b.name, lab)
    names = [v for v in dict.fromkeys(lab.ravel().tolist()) if v is not None]
    if not names:
        raise ParameterError(
            "no cell lies in any region",
            variable="regions",
            expected="at least one labelled cell",
            fix="check the labels or basins",
        )
    return lab, names


def regional_frequency(
    annual_max: Any,
    regions: Any = None,
    periods: Any = (2, 5, 10, 25, 50, 100),
    ci: float = 0.9,
    n_sim: int = 500,
    n_boot: int = 500,
    seed: Any = 0,
    min_years: int = 10,
    dim: str = "year",
) -> xr.Dataset:
    """Index-flood regional frequency analysis (Hosking & Wallis 1997) of gridded annual maxima.

    Parameters
    ----------
    annual_max
        Annual maxima with a ``year`` dimension and spatial dims (e.g. from
        :func:`~climwidgets.compute.extremes.annual_maxima`).
    regions
        None (all cells form one region), a DataArray of region labels on the spatial dims
        (None/NaN/"" for cells in no region), or a Basin / list / dict of Basins (a cell
        belongs to the basin covering at least half of it).
    periods, ci
        Return periods (years) and the confidence level of the intervals.
    n_sim
        Simulated regions for the heterogeneity measure (Hosking & Wallis use 500).
    n_boot
        Simulated regions for the uncertainty of the growth curve and the estimates.
    seed
        Seed of the simulations (results are reproducible).
    min_years
        Cells with fewer non-missing years are left out of their region.

    Returns
    -------
    xarray.Dataset
        Per cell: ``index`` (mean annual maximum), ``l_cv``, ``t3``, ``t4``, ``n_years``,
        ``discordancy``, ``cell_region``, and over ``period`` the regional ``estimate``,
        ``lower``, ``upper``.  Per ``region``: ``H1``, ``H2``, ``H3``, ``discordancy_critical``,
        ``n_sites``, the regional ratios ``t_R``, ``t3_R``, ``t4_R``, the growth-curve GEV
        ``growth_loc``, ``growth_scale``, ``growth_shape`` and ``growth``, ``growth_lower``,
        ``growth_upper`` over ``period``.

    Raises
    ------
    climwidgets.errors.InsufficientDataError
        Fewer than ``min_years`` years, or a single series (no spatial dims).
    climwidgets.errors.ParameterError
        Bad regions, periods, ci or simulation counts.

    References
    ----------
    Hosking, J. R. M. & Wallis, J. R. (1997) Regional Frequency Analysis: An Approach Based
    on L-Moments. Cambridge University Press. doi:10.1017/CBO9780511529443

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> rng = np.random.default_rng(1)  # 20 years of invented maxima on 2 x 3 cells
    >>> amax = xr.DataArray(40.0 * rng.gumbel(1.0, 0.3, (20, 2, 3)), dims=("year", "lat", "lon"),
    ...                     coords={"year": np.arange(2001, 2021), "lat": [0.5, 1.5],
    ...                             "lon": [10.5, 11.5, 12.5]}, attrs={"units": "mm"})
    >>> ds = cw.regional_frequency(amax, periods=(10, 100), n_sim=50, n_boot=50)
    >>> ds["index"].values.round(1)  # each cell's mean annual maximum (mm)
    array([[44.8, 50.7, 42.4],
           [52.6, 45.9, 41.7]])
    >>> ds["growth"].isel(region=0).values.round(3)  # the regional growth curve at 10, 100 years
    array([1.4  , 1.863])
    >>> ds["estimate"].isel(lat=0, lon=0).values.round(1)  # index x growth (mm)
    array([62.8, 83.5])
    """
    _check_min_years(min_years)
    T = _check_periods(periods)
    if not (isinstance(ci, (float, int)) and 0 < ci < 1):
        raise ParameterError(
            f"ci={ci!r} is not a probability",
            variable="ci",
            expected="a confidence level strictly between 0 and 1",
            fix="use ci=0.9",
        )
    for name, value in (("n_sim", n_sim), ("n_boot", n_boot)):
        if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 50:
            raise ParameterError(
                f"{name}={value!r} is too small",
                variable=name,
                expected="an integer of at least 50 (500 as in Hosking & Wallis)",
                fix=f"use {name}=500",
            )
    da = _as_maxima(annual_max, dim, min_years)
    lab, names = _labels(da, regions, dim)
    spatial = [d for d in da.dims if d != dim]
    if not spatial:
        raise InsufficientDataError(
            "one series is not a region",
            source="annual maxima",
            expected="annual maxima on several cells",
            fix="pass gridded annual maxima",
        )
    F = 1.0 - 1.0 / T
    kw = dict(F=F, min_years=min_years, n_sim=int(n_sim), n_boot=int(n_boot), ci=float(ci), seed=seed)
    if da.chunks is not None:
        da = da.chunk({d: -1 for d in da.dims})  # a region is one block
    per_cell, per_region = [], []
    template = da.isel({dim: 0}, drop=True)
    for name in names:  # a few regions, each vectorised over its cells
        member = xr.DataArray(lab == name, dims=template.dims)
        out = xr.apply_ufunc(
            _region_block,
            da,
            member,
            kwargs=kw,
            input_core_dims=[[*spatial, dim], spatial],
            output_core_dims=[
                spatial,
                [*spatial, "period"],
                [*spatial, "period"],
                [*spatial, "period"],
                ["stat"],
                ["curve", "period"],
            ],
            dask="parallelized",
            output_dtypes=[float] * 6,
            dask_gufunc_kwargs={"output_sizes": {"period": T.size, "stat": len(_STATS), "curve": 3}},
        )
        per_cell.append((member, out[:4]))
        per_region.append(out[4:])
    n_all, l1_all, t_all, t3_all, t4_all = xr.apply_ufunc(
        _ratios, da, input_core_dims=[[dim]], output_core_dims=[[]] * 5, dask="parallelized", output_dtypes=[float] * 5
    )
    ds = xr.Dataset({"index": l1_all, "l_cv": t_all, "t3": t3_all, "t4": t4_all, "n_years": n_all})
    cell_vars = ("discordancy", "estimate", "lower", "upper")
    for v, i in zip(cell_vars, range(4)):
        acc = None
        for member, outs in per_cell:
            acc = outs[i] if acc is None else xr.where(member, outs[i], acc)  # type: ignore[no-untyped-call]
        ds[v] = acc
    ds["cell_region"] = xr.DataArray(np.where(lab == None, "", lab).astype(str), dims=template.dims)
    stats_ = xr.concat([r[0] for r in per_region], dim="region")
    curves = xr.concat([r[1] for r in per_region], dim="region")
    for i, s in enumerate(_STATS):
        ds[s] = stats_.isel(stat=i, drop=True)
    for i, s in enumerate(("growth", "growth_lower", "growth_upper")):
        ds[s] = curves.isel(curve=i, drop=True)
    ds = ds.assign_coords(
        region=("region", np.array([str(n) for n in names])),
        period=("period", T, {"units": "years", "long_name": "return period"}),
    )
    ds["discordancy_critical"] = xr.apply_ufunc(
        np.vectorize(discordancy_critical, otypes=[float]), ds["n_sites"], dask="parallelized", output_dtypes=[float]
    )
    units = annual_max.attrs.get("units", "") if isinstance(annual_max, xr.DataArray) else ""
    meta = {
        "index": (units, "index: mean annual maximum"),
        "l_cv": ("1", "L-CV t = l2 / l1"),
        "t3": ("1", "L-skewness"),
        "t4": ("1", "L-kurtosis"),
        "n_years": ("1", "non-missing years"),
        "discordancy": ("1", "discordancy D_i within the cell's region"),
        "cell_region": ("", "region of the cell (empty: none)"),
        "estimate": (units, "regional estimate: index x growth curve"),
        "lower": (units, f"lower bound of the {ci:.0%} interval"),
        "upper": (units, f"upper bound of the {ci:.0%} interval"),
        "H1": ("1", "heterogeneity H from the L-CV"),
        "H2": ("1", "heterogeneity H from L-CV and L-skewness"),
        "H3": ("1", "heterogeneity H from L-skewness and L-kurtosis"),
        "t_R": ("1", "regional L-CV (record-length weighted)"),
        "t3_R": ("1", "regional L-skewness"),
        "t4_R": ("1", "regional L-kurtosis"),
        "growth_loc": ("1", "growth-curve GEV location"),
        "growth_scale": ("1", "growth-curve GEV scale"),
        "growth_shape": ("1", "growth-curve GEV shape k (Hosking)"),
        "n_sites": ("1", "cells used in the region"),
        "kappa_used": ("1", "1: heterogeneity simulated from the kappa fit; 0: from the generalized logistic"),
        "discordancy_critical": ("1", "critical D_i (Hosking & Wallis 1997, Table 3.1) for n_sites"),
        "growth": ("1", "regional growth curve x(F) / index"),
        "growth_lower": ("1", f"lower bound of the {ci:.0%} interval of the growth curve"),
        "growth_upper": ("1", f"upper bound of the {ci:.0%} interval of the growth curve"),
    }
    for v, (u, ln) in meta.items():
        ds[v].attrs.update(units=u, long_name=ln)
    ds.attrs.update(
        method="index flood with L-moments, Hosking & Wallis (1997): discordancy (sec. 3.2), heterogeneity "
        "by kappa simulation (sec. 4.3), GEV growth curve from record-length-weighted ratios",
        heterogeneity_rule="H < 1 acceptably homogeneous; 1 <= H < 2 possibly heterogeneous; H >= 2 definitely heterogeneous",
        interval_method="simulated regions from the fitted regional GEV, sites independent; "
        "interval estimate/U to estimate/L of the ratio estimate/true (sec. 6.4)",
        n_sim=int(n_sim),
        n_boot=int(n_boot),
        seed=seed,
        ci=float(ci),
        min_years=min_years,
        cautions=DESIGN_DEPTH_CAUTIONS,
    )
    src_attrs = annual_max.attrs if isinstance(annual_max, xr.DataArray) else {}
    return with_history(
        ds,
        "regional_frequency",
        src_attrs,
        periods=tuple(T.tolist()),
        ci=ci,
        n_sim=n_sim,
        n_boot=n_boot,
        seed=seed,
        min_years=min_years,
    )
