"""One task per chunk read: the climatology bundle's daily work fused into the read.

The bundle needs two reductions of the daily values — monthly totals and annual maxima —
and derives everything else from those small results. Written with xarray's ``resample``
and ``groupby`` they become separate dask tasks that pass whole daily blocks between them
(and, on a cluster, between processes). Here one function, applied blockwise to the
loader's chunks, turns a daily block into its *partials*: the sum of each month and the
maximum and count of valid steps of each year that overlap the block. Dask's blockwise
optimisation fuses it with the read, decode and conversion tasks, so each task reads its
stored chunks, reduces them and hands on a few monthly fields; small combine tasks then add
the partials of months (and years) that straddle two chunks.

When the loader left a record of the stored values (``StoredValues`` in the DataArray's
encoding, still describing this very array), the block is taken *before* the conversion to
float64 mm: fill masking and the negative guard run on the stored float32 values, the
monthly sums are float32 sums over at most one month of steps, and the conversion factor is
applied to those sums (in float64). Otherwise the loader's converted values are reduced as
they are. Monthly totals therefore agree with the plain path to float32 rounding (about 1e-6
relative); annual maxima, valid counts and the missing-value pattern are identical.

Not applicable (the caller uses the plain path): numpy-backed or monthly input, time not the
first dimension, and n-day maxima for n > 1 (their windows cross chunk boundaries).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr

from ..errors import DataValueError
from ..io.values import check_depth_bound
from .extremes import DEFAULT_MIN_VALID_FRACTION, _nominal_steps, annual_maxima
from .totals import monthly_totals

ENABLED = True  # False sends every bundle through the plain resample/groupby path
NEGATIVE_TOLERANCE_MM = 0.01  # as the loader: tiny negatives become 0, larger ones are an error
_LIKELY_FILL = (-9999.0, -999.0, -99999.0)  # the loader's fill codes for files without _FillValue
OUTPUT_CHUNK_BYTES = 32 * 2**20  # monthly results are gathered into chunks of about this size


def applicable(pr: xr.DataArray, step: str, maxima_days: Sequence[int]) -> bool:
    return (
        ENABLED
        and step in ("day", "hour")
        and pr.chunks is not None
        and pr.dims[0] == "time"
        and pr.ndim >= 2
        and all(d == 1 for d in maxima_days)
        and (step == "day" or not maxima_days)
    )


def _stored_record(pr: xr.DataArray) -> tuple[Any, float] | None:
    """The loader's record of the stored values, if it still describes ``pr``; else None."""
    rec = pr.encoding.get("stored_values")
    if (
        rec is None
        or getattr(rec, "name", None) != pr.data.name
        or rec.data.shape != pr.shape
        or rec.data.chunks != pr.data.chunks
    ):
        return None
    factor = np.unique(np.asarray(rec.factor, dtype=np.float64))
    if factor.size != 1 or not factor[0] > 0:
        return None  # a factor varying by step: reduce converted values instead
    return rec, float(factor[0])


def _segment_range(starts: np.ndarray, t0: int, t1: int) -> tuple[int, int]:
    """Segments (given by their first step, sorted, starting at 0) overlapping steps [t0, t1)."""
    lo = int(np.searchsorted(starts, t0, side="right")) - 1
    hi = int(np.searchsorted(starts, t1, side="left"))
    return lo, hi


def _local_bounds(starts: np.ndarray, n_steps: int, lo: int, hi: int, t0: int, t1: int) -> list[tuple[int, int]]:
    ends = np.append(starts[1:], n_steps)
    return [(max(int(starts[i]), t0) - t0, min(int(ends[i]), t1) - t0) for i in range(lo, hi)]


def _depth_block(
    block: Any,
    mask_fill: bool,
    guard: bool,
    factor: float,
    source: Any,
    variable: Any,
    max_depth: float | None = None,
    where: Any = None,
) -> np.ndarray:
    """Fill masking and the negative guard on stored values, without converting every value.

    Same rules as the loader's conversion (fill heuristics for files without _FillValue,
    negatives below -0.01 mm refused, smaller ones set to 0); the input block is never
    modified. Float32 stays float32.
    """
    x = np.asarray(block)
    if x.size == 0 or not (mask_fill or guard or max_depth is not None):
        return x
    flat = x.reshape(-1)
    lo, hi = float(np.fmin.reduce(flat)), float(np.fmax.reduce(flat))
    if mask_fill and (hi >= 1e15 or lo <= -999.0 or lo <= -1e15):
        bad = (np.abs(x) >= 1e15) | np.isin(x, _LIKELY_FILL)
        x = x.astype(x.dtype.newbyteorder("="), copy=True)
        x[bad] = np.nan
        lo = float(np.fmin.reduce(x.reshape(-1))) if (~bad).any() else 0.0
    if guard and lo < 0:
        if lo * factor < -NEGATIVE_TOLERANCE_MM:
            raise DataValueError(
                f"has negative precipitation (lowest {lo * factor:.4g} mm) in a chunk read from disk",
                source=source,
                variable=variable,
                expected="precipitation depths >= 0",
                fix="open with validate=True to find where, and check scale_factor/add_offset and units",
            )
        x = x.copy() if x is block else x
        x[x < 0] = 0
    if max_depth is not None and hi * factor > max_depth:  # the loader's bound, exact only when it may be passed
        offset, dims = where or (None, None)
        check_depth_bound(x * factor, max_depth, source, variable, offset=offset, dims=dims)
    return x


def _partials(
    block: Any,
    month_starts: np.ndarray,
    year_starts: np.ndarray,
    n_steps: int,
    factor: float,
    mask_fill: bool,
    guard: bool,
    source: Any,
    variable: Any,
    with_maxima: bool,
    max_depth: float | None = None,
    dims: Any = None,
    block_info: Any = None,
) -> np.ndarray:
    """Rows of one block's partials: month sums, then (optionally) year maxima and valid counts."""
    t0, t1 = block_info[0]["array-location"][0]
    offset = [a for a, _ in block_info[0]["array-location"]]
    x = _depth_block(block, mask_fill, guard, factor, source, variable, max_depth, (offset, dims))
    months = _local_bounds(month_starts, n_steps, *_segment_range(month_starts, t0, t1), t0, t1)
    sums = np.stack([x[a:b].sum(axis=0) for a, b in months])  # stored precision, <= one month of steps
    rows = [sums.astype(np.float64) * factor]
    if with_maxima:
        years = _local_bounds(year_starts, n_steps, *_segment_range(year_starts, t0, t1), t0, t1)
        if np.isnan(sums).any():  # a missing step in the block: NaN-skipping maxima and real counts
            maxima = [np.fmax.reduce(x[a:b], axis=0) for a, b in years]
            counts = [np.count_nonzero(~np.isnan(x[a:b]), axis=0) for a, b in years]
        else:  # no missing step: every step counts (one pass fewer)
            maxima = [x[a:b].max(axis=0) for a, b in years]
            counts = [np.full(x.shape[1:], b - a) for a, b in years]
        rows += [np.stack(maxima).astype(np.float64) * factor, np.stack(counts).astype(np.float64)]
    return np.concatenate(rows)


def _combine(op: str, n_out: int, *parts_and_rows: Any) -> np.ndarray:
    """Add (op "sum") or NaN-skipping max (op "max") block partials into ``n_out`` segments."""
    parts, placements = parts_and_rows[::2], parts_and_rows[1::2]
    shape = (n_out,) + parts[0].shape[1:]
    out = np.zeros(shape) if op == "sum" else np.full(shape, np.nan)
    for part, (src, dst, n) in zip(parts, placements):
        piece = part[src : src + n]
        if op == "sum":
            out[dst : dst + n] += piece
        else:
            np.fmax(out[dst : dst + n], piece, out=out[dst : dst + n])
    return out


def _assemble(
    partials: Any,
    block_ranges: Sequence[tuple[int, int]],
    row_offsets: Sequence[int],
    n_seg: int,
    seg_starts: np.ndarray,
    tblock_starts: np.ndarray,
    op: str,
    name: str,
) -> Any:
    """A dask array (n_seg, *space) from the block partials: one combine task per output chunk.

    Output chunks along time hold the segments that begin in the same time block (so a
    month straddling two blocks is owned by the block where it begins); each combine task
    reads only the partials of the blocks its segments overlap.
    """
    import dask.array as dsa
    from dask.highlevelgraph import HighLevelGraph

    space = partials.chunks[1:]
    owner = np.searchsorted(tblock_starts, seg_starts, side="right") - 1
    per_chunk = max(1, OUTPUT_CHUNK_BYTES // (8 * int(np.prod([max(c) for c in space]))))
    groups: list[list[int]] = []  # (first segment, last segment + 1); whole owners, merged up to the size target
    for s in range(n_seg):
        if groups and (owner[s] == owner[s - 1] or s - groups[-1][0] < per_chunk):
            groups[-1][1] = s + 1
        else:
            groups.append([s, s + 1])
    dsk: dict[Any, Any] = {}
    for c, (a, b) in enumerate(groups):
        sources = [g for g, (lo, hi) in enumerate(block_ranges) if lo < b and hi > a]
        for idx in np.ndindex(*[len(ch) for ch in space]):
            args = []
            for g in sources:
                lo, hi = block_ranges[g]
                first, last = max(lo, a), min(hi, b)
                args += [(partials.name, g) + idx, (row_offsets[g] + first - lo, first - a, last - first)]
            dsk[(name, c) + idx] = (_combine, op, b - a, *args)
    graph = HighLevelGraph.from_collections(name, dsk, dependencies=[partials])
    chunks = (tuple(b - a for a, b in groups),) + space
    return dsa.Array(
        graph,
        name,
        chunks=chunks,
        dtype=np.float64,  # type: ignore[no-untyped-call]
        meta=np.empty((0,) * partials.ndim),
    )


def _stub(pr: xr.DataArray) -> xr.DataArray:
    """A numpy stand-in with ``pr``'s time axis and attrs, one cell: metadata without reading."""
    shape = (pr.sizes["time"],) + (1,) * (pr.ndim - 1)
    return xr.DataArray(
        np.zeros(shape, np.float32), dims=pr.dims, coords={"time": pr["time"]}, attrs=pr.attrs, name=pr.name
    )


def _space_coords(pr: xr.DataArray) -> dict[Any, Any]:
    return {k: v for k, v in pr.coords.items() if "time" not in v.dims}


def monthly_and_maxima(
    pr: xr.DataArray, step: str, maxima_days: Sequence[int], year_start: int
) -> tuple[xr.DataArray, dict[int, xr.DataArray]] | None:
    """Monthly totals and annual 1-day maxima of ``pr`` in one fused pass (see the module notes).

    Returns (monthly totals, {1: annual maxima} or {}) as lazy DataArrays with the same
    coordinates, attrs and missing values as ``monthly_totals`` and ``annual_maxima``.
    """
    import dask.array as dsa
    from dask.base import tokenize

    stub = _stub(pr)
    month_template = monthly_totals(stub)  # labels, attrs, history and coverage from the real function
    with_maxima = bool(maxima_days)
    max_template = annual_maxima(stub, duration_days=1, year_start=year_start) if with_maxima else None
    time = stub["time"]
    n_steps = pr.sizes["time"]
    month_id = time.dt.year.values * 12 + time.dt.month.values - 1
    month_starts = np.flatnonzero(np.diff(month_id, prepend=month_id[0] - 1))
    if month_starts.size != month_template.sizes["time"]:
        return None  # months missing from the axis: the plain resample handles the bookkeeping
    years, months = time.dt.year.values, time.dt.month.values
    labels = (years + (months >= year_start) if year_start > 1 else years).astype(int)
    uniq, year_starts = np.unique(labels, return_index=True)

    found = _stored_record(pr)
    if found is not None:
        rec, factor = found
        source = rec.data
        kwargs = {
            "factor": factor,
            "mask_fill": rec.mask_fill,
            "guard": rec.guard,
            "source": rec.source,
            "variable": rec.variable,
            "max_depth": getattr(rec, "max_depth", None),
            "dims": getattr(rec, "dims", None),
        }
    else:
        source = pr.data
        kwargs = {"factor": 1.0, "mask_fill": False, "guard": False, "source": None, "variable": None}
    tchunks = source.chunks[0]
    tblock_starts = np.concatenate([[0], np.cumsum(tchunks)[:-1]])
    m_ranges, y_ranges, rows = [], [], []
    for t0, n in zip(tblock_starts, tchunks):
        m_ranges.append(_segment_range(month_starts, t0, t0 + n))
        y_ranges.append(_segment_range(year_starts, t0, t0 + n) if with_maxima else (0, 0))
        rows.append((m_ranges[-1][1] - m_ranges[-1][0]) + 2 * (y_ranges[-1][1] - y_ranges[-1][0]))
    token = tokenize(source.name, month_starts, year_starts, kwargs, with_maxima)
    partials = dsa.map_blocks(
        _partials,
        source,
        month_starts,
        year_starts,
        n_steps,
        **kwargs,  # type: ignore[no-untyped-call]
        with_maxima=with_maxima,
        dtype=np.float64,
        chunks=(tuple(rows),) + source.chunks[1:],
        name=f"climatology-partials-{token}",
        meta=np.empty((0,) * source.ndim),
    )
    zero = [0] * len(tchunks)
    sums = _assemble(
        partials, m_ranges, zero, month_starts.size, month_starts, tblock_starts, "sum", f"climatology-monthly-{token}"
    )
    covered = month_template.notnull().values  # (months, 1, ...): broadcasts over the cells
    sums = dsa.where(covered, sums, np.nan)  # months the axis does not fully cover (WMO rule)
    monthly = xr.DataArray(
        sums,
        dims=pr.dims,
        coords={"time": month_template["time"], **_space_coords(pr)},
        attrs=month_template.attrs,
        name=month_template.name,
    )
    if not with_maxima:
        return monthly, {}
    n_months = [hi - lo for lo, hi in m_ranges]
    n_years = [hi - lo for lo, hi in y_ranges]
    maxima = _assemble(
        partials, y_ranges, n_months, uniq.size, year_starts, tblock_starts, "max", f"climatology-maxima-{token}"
    )
    counts = _assemble(
        partials,
        y_ranges,
        [m + y for m, y in zip(n_months, n_years)],
        uniq.size,
        year_starts,
        tblock_starts,
        "sum",
        f"climatology-counts-{token}",
    )
    need = DEFAULT_MIN_VALID_FRACTION * _nominal_steps(time.values[0], uniq, year_start, step)
    need = need.reshape((-1,) + (1,) * (pr.ndim - 1))
    assert max_template is not None  # with_maxima is true past the early return above
    keep = np.flatnonzero(np.isin(uniq, max_template["year"].values))
    amax = dsa.where(counts >= need, maxima, np.nan)[keep]
    ydims = ("year",) + pr.dims[1:]
    annual = xr.DataArray(
        amax,
        dims=ydims,
        coords={"year": max_template["year"], **_space_coords(pr)},
        attrs=max_template.attrs,
        name=max_template.name,
    )
    return monthly, {1: annual}
