"""Quantile delta mapping core for :func:`climwidgets.compute.scenario.delta_change` (not public).

The method and its dry-day (trace) treatment are described in :mod:`.scenario`.  Here:
the pseudo-random dry amounts come from the SplitMix64 hash of (seed, series, cell, step),
so they depend on each value's position only, never on dask chunking; and the mapping of
one block of cells runs over whole time series, one calendar month (or season) at a time.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import scipy.stats
import xarray as xr

from ..errors import InsufficientDataError

__all__ = ["quantile_delta_map"]

_SEASON_OF_MONTH = np.array([0, 0, 1, 1, 1, 2, 2, 2, 3, 3, 3, 0])  # DJF, MAM, JJA, SON
_SEASONS = ("DJF", "MAM", "JJA", "SON")


def _splitmix64(x: Any) -> Any:
    """SplitMix64 finaliser on uint64 arrays (Steele, Lea & Flood 2014): a well-mixed hash."""
    x = x + np.uint64(0x9E3779B97F4A7C15)
    x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return x ^ (x >> np.uint64(31))


def _uniform(key: np.ndarray, seed: int, salt: int, n: int) -> np.ndarray:
    """Uniform (0, 1) numbers for positions 0..n-1 of each series identified by ``key``."""
    with np.errstate(over="ignore"):
        base = _splitmix64(key.astype(np.uint64) * np.uint64(4) + np.uint64(salt) + _splitmix64(np.uint64(seed)))
        h: np.ndarray = _splitmix64(base[..., None] + np.arange(n, dtype=np.uint64))
    return ((h >> np.uint64(11)).astype(np.float64) + 0.5) / float(1 << 53)


def _jitter(x: np.ndarray, key: np.ndarray, seed: int, salt: int, trace: float) -> np.ndarray:
    """Dry amounts (below trace) replaced by pseudo-random amounts in (0, trace/2)."""
    u = _uniform(key, seed, salt, x.shape[-1])
    return np.where(x < trace, u * (trace / 2.0), x)


def _quantile_at(sorted_x: np.ndarray, count: np.ndarray, tau: np.ndarray) -> np.ndarray:
    """Type-7 empirical quantiles of each row of ``sorted_x`` (NaN last) at per-value ``tau``."""
    pos = tau * (count - 1)
    lo = np.clip(np.floor(np.nan_to_num(pos)), 0, None).astype(np.intp)
    hi = np.minimum(lo + 1, np.maximum(count - 1, 0)).astype(np.intp)
    lo = np.minimum(lo, np.maximum(count - 1, 0)).astype(np.intp)
    a = np.take_along_axis(sorted_x, lo, -1)
    b = np.take_along_axis(sorted_x, hi, -1)
    q = a + (pos - lo) * (b - a)
    return np.where(count > 0, q, np.nan)


def _qdm_block(
    obs: np.ndarray,
    hist: np.ndarray,
    fut: np.ndarray,
    key: np.ndarray,
    g_obs: np.ndarray,
    g_hist: np.ndarray,
    g_fut: np.ndarray,
    trace: float,
    max_ratio: float,
    ratio_trace: float,
    seed: int,
    jitter: bool,
) -> np.ndarray:
    """Quantile delta mapping on one block: arrays (..., time); returns (..., time of fut)."""
    shape = np.broadcast_shapes(obs.shape[:-1], hist.shape[:-1], fut.shape[:-1], key.shape)
    obs = np.broadcast_to(obs, shape + obs.shape[-1:]).astype(float)
    hist = np.broadcast_to(hist, shape + hist.shape[-1:]).astype(float)
    fut = np.broadcast_to(fut, shape + fut.shape[-1:]).astype(float)
    key = np.broadcast_to(key, shape)
    if jitter:
        nan_o, nan_h, nan_f = np.isnan(obs), np.isnan(hist), np.isnan(fut)
        obs = np.where(nan_o, np.nan, _jitter(obs, key, seed, 1, trace))
        hist = np.where(nan_h, np.nan, _jitter(hist, key, seed, 2, trace))
        fut = np.where(nan_f, np.nan, _jitter(fut, key, seed, 3, trace))
    out = np.full(fut.shape, np.nan)
    for g in np.unique(g_fut):  # a loop over the 12 months (or 4 seasons), not over cells
        o, h, f = obs[..., g_obs == g], hist[..., g_hist == g], fut[..., g_fut == g]
        n_o = np.sum(~np.isnan(o), -1, keepdims=True)
        n_h = np.sum(~np.isnan(h), -1, keepdims=True)
        n_f = np.sum(~np.isnan(f), -1, keepdims=True)
        rank = scipy.stats.rankdata(f, axis=-1, nan_policy="omit") if f.shape[-1] else f
        tau = np.where(n_f > 1, (rank - 1.0) / np.maximum(n_f - 1, 1), 0.5)
        q_obs = _quantile_at(np.sort(o, -1), n_o, tau)
        q_hist = _quantile_at(np.sort(h, -1), n_h, tau)
        with np.errstate(divide="ignore", invalid="ignore"):
            delta = f / q_hist
        delta = np.where(q_hist < ratio_trace, np.minimum(delta, max_ratio), delta)
        adjusted = q_obs * delta
        if jitter:
            adjusted = np.where(adjusted < trace, 0.0, adjusted)
        out[..., g_fut == g] = adjusted
    return out


def _group_ids(da: xr.DataArray, group: str) -> np.ndarray:
    month = da["time"].dt.month.values
    return month if group == "month" else _SEASON_OF_MONTH[month - 1]


def _cell_key(template: xr.DataArray) -> xr.DataArray:
    """An integer per cell of the observed grid (its position), small and in memory.

    Members share it, so a member's pseudo-random dry amounts are the same as when that
    member is adjusted on its own.
    """
    dims = list(template.dims)
    key = xr.DataArray(np.int64(0))
    stride = 1
    for d in reversed(dims):
        key = key + xr.DataArray(np.arange(template.sizes[d], dtype=np.int64) * stride, dims=d)  # type: ignore[arg-type]
        stride *= template.sizes[d]
    return key.transpose(*dims) if dims else key


def quantile_delta_map(
    obs: xr.DataArray,
    hist: xr.DataArray,
    fut: xr.DataArray,
    group: str,
    trace: float,
    max_ratio: float,
    seed: int,
    jitter: bool = True,
) -> xr.DataArray:
    """Multiplicative QDM of ``fut`` (dims time, ...) against ``obs`` and ``hist``, lazily."""
    g_obs, g_hist, g_fut = (_group_ids(x, group) for x in (obs, hist, fut))
    missing = sorted(set(g_fut.tolist()) - set(g_obs.tolist()) | set(g_fut.tolist()) - set(g_hist.tolist()))
    if missing:
        label = [f"month {m}" for m in missing] if group == "month" else [_SEASONS[s] for s in missing]
        raise InsufficientDataError(
            f"no calibration data for {', '.join(label)}",
            source="delta_change",
            variable="time",
            expected="observations and historical run in every month (season) of the future run",
            fix="use longer records",
        )
    o = obs.rename(time="time_obs").drop_vars("time_obs")
    h = hist.rename(time="time_hist").drop_vars("time_hist")
    key = _cell_key(o.isel(time_obs=0, drop=True))
    if fut.chunks is not None or o.chunks is not None or h.chunks is not None:
        o, h, f = o.chunk({"time_obs": -1}), h.chunk({"time_hist": -1}), fut.chunk({"time": -1})
    else:
        f = fut
    out: xr.DataArray = xr.apply_ufunc(
        _qdm_block,
        o,
        h,
        f,
        key,
        kwargs=dict(
            g_obs=g_obs,
            g_hist=g_hist,
            g_fut=g_fut,
            trace=float(trace),
            max_ratio=float(max_ratio),
            ratio_trace=10.0 * float(trace),
            seed=int(seed),
            jitter=jitter,
        ),
        input_core_dims=[["time_obs"], ["time_hist"], ["time"], []],
        output_core_dims=[["time"]],
        dask="parallelized",
        output_dtypes=[float],
    )
    return out.assign_coords(time=fut["time"])
