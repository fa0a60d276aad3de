"""Conservative regridding of a long monthly series: cw.regrid against two textbook ways.

Usage:  python benchmarks/bench_regrid.py [REPEAT]      (default 3)

Input (deterministic, generated lazily by dask so no file is read): 30 years of monthly
depths (360 steps) on a 0.05° 1000 x 1000 lat/lon grid, float32, chunks of 12 steps,
with a fixed 100 x 150-cell patch of missing data (NaN).  Target: the 0.25° 200 x 200
grid over the same area.  Every case runs in a fresh process (imports not timed) and
reports wall time and the rise of peak resident memory:

  * input floor: generating the lazy input and summing it (what any method pays first);
  * ``cw.regrid(src, target, method="conservative").compute()`` (threaded scheduler);
  * dense overlap matrix: W (n_target_cells x n_source_cells) of exact overlap areas
    (sin-latitude x radian-longitude, the same measure as cw), then ``W @ X`` for the
    values and for the valid mask.  At full size W has 4e4 x 1e6 entries (320 GB in
    float64), so it is built and applied on sub-blocks of all-pairs (every target cell of
    the sub-block against every source cell of the sub-block) and extrapolated by the
    number of pairs, 4e10;
  * per target cell: all 1e6 source cells as shapely boxes in an STRtree (built once,
    measured in full), then for each target cell a tree query, ``shapely.intersection``
    areas, and a weighted mean of its source cells' 360-step series.  Timed on a random
    sample of target cells and extrapolated to 40 000; the series are produced by the
    same cheap generator as the input, not gathered from a 1.4 GB array in memory.
"""

from __future__ import annotations

import statistics
import sys
from pathlib import Path

import numpy as np

from _common import machine_facts, peak_rss_of

NT, NS, NTG = 360, 1000, 200  # steps, source cells per side, target cells per side
DS, DT = 0.05, 0.25  # degrees
LON0, LAT0 = -170.0, -10.0
CHUNK = 12
SUBBLOCKS = ((20, 100), (30, 150))  # (target cells per side, source cells per side)
N_SAMPLE = 200  # target cells timed by the per-cell baseline


def _base():
    j, i = np.meshgrid(np.arange(NS), np.arange(NS), indexing="ij")
    base = (40.0 + 30.0 * np.sin(j / 90.0) * np.cos(i / 130.0) + 0.01 * ((j * 7 + i * 13) % 101)).astype("f4")
    base[400:500, 600:750] = np.nan
    return base


def _season(t):
    return (1.0 + 0.6 * np.sin(2 * np.pi * (np.asarray(t) % 12) / 12.0) + 0.002 * np.asarray(t)).astype("f4")


def source():
    """The lazy (time, lat, lon) source field: base pattern × a seasonal factor per step."""
    import dask.array as da
    import xarray as xr

    base = _base()

    def block(block_info=None):
        t0, t1 = block_info[None]["array-location"][0]
        return base[None] * _season(np.arange(t0, t1))[:, None, None]

    arr = da.map_blocks(block, dtype="f4", chunks=((CHUNK,) * (NT // CHUNK), (NS,), (NS,)))
    lat = LAT0 + DS * (np.arange(NS) + 0.5)
    lon = LON0 + DS * (np.arange(NS) + 0.5)
    time = np.arange("1991-01", "2021-01", dtype="datetime64[M]").astype("datetime64[ns]")
    return xr.DataArray(
        arr,
        dims=("time", "lat", "lon"),
        coords=dict(time=time, lat=lat, lon=lon),
        name="pr",
        attrs=dict(units="mm", step="month"),
    )


def target():
    return {"lat": LAT0 + DT * (np.arange(NTG) + 0.5), "lon": LON0 + DT * (np.arange(NTG) + 0.5)}


def series(j, i):
    """(NT, k) values of source cells (j, i): the generator, without building the field."""
    return _season(np.arange(NT))[:, None] * _base()[j, i][None, :]


# ---------------------------------------------------------------- dense matrix baseline
def dense_matrix(nt_side, ns_side):
    """All-pairs overlap areas between nt_side² target and ns_side² source cells."""
    s_edges = np.arange(ns_side + 1) * DS
    t_edges = np.arange(nt_side + 1) * DT
    s_lat0, s_lat1 = np.repeat(s_edges[:-1], ns_side), np.repeat(s_edges[1:], ns_side)
    s_lon0, s_lon1 = np.tile(s_edges[:-1], ns_side), np.tile(s_edges[1:], ns_side)
    t_lat0, t_lat1 = np.repeat(t_edges[:-1], nt_side), np.repeat(t_edges[1:], nt_side)
    t_lon0, t_lon1 = np.tile(t_edges[:-1], nt_side), np.tile(t_edges[1:], nt_side)
    sin = lambda d: np.sin(np.deg2rad(LAT0 + d))  # noqa: E731
    ov_lat = np.clip(sin(np.minimum(t_lat1[:, None], s_lat1)) - sin(np.maximum(t_lat0[:, None], s_lat0)), 0, None)
    ov_lon = np.clip(np.deg2rad(np.minimum(t_lon1[:, None], s_lon1) - np.maximum(t_lon0[:, None], s_lon0)), 0, None)
    ov_lat *= ov_lon
    return ov_lat


def dense_apply(w, x):
    valid = np.isfinite(x)
    num = w @ np.where(valid, x, 0.0)
    den = w @ valid.astype(float)
    return num / den


# ---------------------------------------------------------------- per-target-cell baseline
def source_tree():
    import shapely

    e = np.arange(NS) * DS
    la, lo = np.meshgrid(LAT0 + e, LON0 + e, indexing="ij")
    boxes = shapely.box(lo, la, lo + DS, la + DS).ravel()
    return boxes, shapely.STRtree(boxes)


def per_target(boxes, tree, cells):
    import shapely

    out = []
    for k in cells:
        tj, ti = divmod(int(k), NTG)
        tb = shapely.box(LON0 + ti * DT, LAT0 + tj * DT, LON0 + (ti + 1) * DT, LAT0 + (tj + 1) * DT)
        hits = tree.query(tb, predicate="intersects")
        a = shapely.area(shapely.intersection(boxes[hits], tb))
        x = series(*np.divmod(hits, NS))
        ok = np.isfinite(x)
        out.append((np.where(ok, x, 0) @ a) / (ok @ a))
    return out


def main(repeat=3):
    here = Path(__file__).parent
    imp = f"import sys; sys.path.insert(0, r'{here}')\nimport numpy as np, shapely, dask.array, xarray\n"
    setup = imp + "import climwidgets as cw, climwidgets.compute.regrid\nfrom bench_regrid import *\nsrc = source()\n"

    def fresh(code, s, n):
        runs = [peak_rss_of(code, s) for _ in range(n)]
        return statistics.median(r[0] for r in runs), statistics.median(r[2] for r in runs)

    t_in, m_in = fresh("s = float(src.sum(dtype='f8').compute())", setup, repeat)
    t_cw, m_cw = fresh("out = cw.regrid(src, target(), method='conservative').compute()", setup, repeat)

    # dense matrix on sub-blocks, extrapolated by pairs
    full_pairs = (NTG * NTG) * (NS * NS)
    dense = []
    for nt_side, ns_side in SUBBLOCKS:
        s = imp + "from bench_regrid import *\n"
        tb, mb = fresh(f"w = dense_matrix({nt_side}, {ns_side})", s, repeat)
        s2 = s + (
            f"w = dense_matrix({nt_side}, {ns_side})\n"
            f"x = series(*np.divmod(np.arange({ns_side}**2), {ns_side})).T.astype('f8')\n"
        )
        ta, _ = fresh("v = dense_apply(w, x)", s2, repeat)
        pairs = nt_side**2 * ns_side**2
        dense.append((nt_side, ns_side, pairs, tb, ta, mb))
    nt_side, ns_side, pairs, tb, ta, mb = dense[-1]
    scale = full_pairs / pairs
    t_dense = (tb + ta) * scale
    m_dense = 8 * full_pairs / 2**20  # the float64 matrix alone

    # per target cell, extrapolated by cells
    s = imp + "from bench_regrid import *\n"
    t_tree, m_tree = fresh("boxes, tree = source_tree()", s, 1)
    cells = np.random.default_rng(5).choice(NTG * NTG, N_SAMPLE, replace=False).tolist()
    t_loop, _ = fresh(f"r = per_target(boxes, tree, {cells})", s + "boxes, tree = source_tree()\n", repeat)
    t_per = t_tree + t_loop / N_SAMPLE * NTG * NTG

    print(f"### Conservative regrid, {NT} monthly steps, 1000 × 1000 (0.05°) → 200 × 200 (0.25°) ({machine_facts()})\n")
    print("| case | wall (s) | memory growth (MiB) | how | time / cw |")
    print("|---|---|---|---|---|")
    print(
        f"| input floor: generate + sum the lazy input | {t_in:.1f} | {m_in:.0f} | measured, median of {repeat} | "
        f"{t_in / t_cw:.2f} |"
    )
    print(
        f"| cw.regrid(conservative).compute(), {CHUNK}-step chunks | {t_cw:.1f} | {m_cw:.0f} | "
        f"measured, median of {repeat} | 1.00 |"
    )
    print(
        f"| dense overlap matrix: build + 2 × W @ X | {t_dense:,.0f} | {m_dense:,.0f} (W alone) | "
        f"extrapolated × {scale:,.0f} from {nt_side}² × {ns_side}² cells | {t_dense / t_cw:,.0f} |"
    )
    print(
        f"| per target cell: STRtree + shapely.intersection + weighted series | {t_per:,.0f} | "
        f"{m_tree:.0f} (boxes + tree) | tree measured ({t_tree:.1f} s), loop extrapolated from "
        f"{N_SAMPLE} cells | {t_per / t_cw:,.0f} |"
    )
    print("\nDense sub-blocks (all pairs): ")
    for nt_side, ns_side, pairs, tb, ta, mb in dense:
        print(
            f"- {nt_side}² targets × {ns_side}² sources = {pairs:.1e} pairs: build {tb:.2f} s "
            f"({1e9 * tb / pairs:.1f} ns/pair), apply {ta:.2f} s ({1e9 * ta / pairs:.1f} ns/pair), "
            f"memory growth {mb:.0f} MiB"
        )


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 3)
