"""Basin weights and the basin-mean "redraw" latency.

Usage:  python benchmarks/bench_weights.py [REPEAT]      (default 7)

Inputs (deterministic, in memory): a 1000 x 1000 rectilinear grid of 0.01° cells on open
ocean, a 200-vertex star-like basin (irregular radius, about 0.3 M cells inside, bounding
box about 0.67 M cells), a 2-D field and a 12-month stack on that grid, and a curvilinear
1000 x 1000 grid (the same spacing rotated by 15°).  Side by side:

Coverage weights (cold: ``weights_cache`` cleared before every run):
  * ``cw.coverage_weights``;
  * exactextract 0.3, operation "coverage" on a ``NumPyRasterSource`` (fractions of the
    same cells, planar, as ours);
  * naive clipping: every cell box of the basin's bounding box cut by the basin with one
    vectorised ``shapely.intersection`` call (then ``shapely.area``), run once on all
    cells (tens of seconds), boxes built beforehand and not timed.
Basin mean (``cw.basin_mean``, area-weighted):
  * with the weights already cached (the redraw when the field changes), 2-D and
    12-month stack; and with a cold cache (a basin just drawn);
  * exactextract "weighted_mean" with a cell-area weight raster (the same number; it has
    no cache, so every call clips again);
  * the numpy floor: a dot product with precomputed area × coverage weights.
"""

from __future__ import annotations

import sys

import numpy as np
import shapely
import xarray as xr
from shapely.geometry import mapping

import climwidgets as cw
from climwidgets.geo._cache import weights_cache
from climwidgets.geo.grid import cell_bounds
from exactextract import exact_extract
from exactextract.feature import JSONFeatureSource
from exactextract.raster import NumPyRasterSource

from _common import machine_facts, median_time

N = 1000  # cells per side
DX = 0.01  # degrees
LON0, LAT0 = -150.0, 20.0  # south-west corner (open ocean)


def make_basin(n=200, seed=42):
    """Star-like polygon: angles evenly spaced with jitter, radius with 7 lobes and noise."""
    rng = np.random.default_rng(seed)
    th = np.linspace(0, 2 * np.pi, n, endpoint=False) + rng.uniform(-0.01, 0.01, n)
    r = 3.0 * (1 + 0.35 * np.sin(7 * th) + 0.12 * rng.uniform(-1, 1, n))
    cx, cy = LON0 + N * DX / 2, LAT0 + N * DX / 2
    return cw.Basin.from_vertices(list(zip(cx + r * np.cos(th), cy + r * np.sin(th))), name="star")


def make_grids():
    lat = LAT0 + DX * (np.arange(N) + 0.5)
    lon = LON0 + DX * (np.arange(N) + 0.5)
    rng = np.random.default_rng(1)
    field = xr.DataArray(
        rng.gamma(2.0, 50.0, (N, N)),
        dims=("lat", "lon"),
        coords=dict(lat=lat, lon=lon),
        attrs=dict(units="mm"),
        name="pr",
    )
    month_scale = 1 + 0.5 * np.sin(2 * np.pi * np.arange(12) / 12)
    stack = field * xr.DataArray(month_scale, dims="month", coords={"month": np.arange(1, 13)})
    stack.attrs = dict(units="mm")
    a = np.deg2rad(15.0)
    u = (np.arange(N) - (N - 1) / 2) * DX
    X, Y = np.meshgrid(u, u)
    cx, cy = LON0 + N * DX / 2, LAT0 + N * DX / 2
    curv = xr.DataArray(
        field.values,
        dims=("y", "x"),
        attrs=dict(units="mm"),
        coords=dict(
            lon=(("y", "x"), cx + X * np.cos(a) - Y * np.sin(a)), lat=(("y", "x"), cy + X * np.sin(a) + Y * np.cos(a))
        ),
    )
    return field, stack.transpose("month", "lat", "lon"), curv


def naive_case(geom, boxes, areas):
    """Every bounding-box cell clipped by the basin; returns the covered fractions."""

    def run():
        return shapely.area(shapely.intersection(boxes, geom)) / areas

    return run


def rect_boxes(geom):
    lo = LON0 + DX * np.arange(N)
    la = LAT0 + DX * np.arange(N)
    x0, y0, x1, y1 = geom.bounds
    cols = np.nonzero((lo + DX > x0) & (lo < x1))[0]
    rows = np.nonzero((la + DX > y0) & (la < y1))[0]
    X, Y = np.meshgrid(lo[cols], la[rows])
    return shapely.box(X, Y, X + DX, Y + DX).ravel()


def curv_boxes(geom, curv):
    b = cell_bounds(curv)
    x0, y0, x1, y1 = geom.bounds
    near = (
        (b.lon_corners.max(-1) > x0)
        & (b.lon_corners.min(-1) < x1)
        & (b.lat_corners.max(-1) > y0)
        & (b.lat_corners.min(-1) < y1)
    )
    return shapely.polygons(np.stack([b.lon_corners[near], b.lat_corners[near]], -1))


def main(repeat=7):
    basin = make_basin()
    geom = basin.geometry
    field, stack, curv = make_grids()
    feats = JSONFeatureSource([{"type": "Feature", "id": 1, "properties": {}, "geometry": mapping(geom)}])
    ext = (LON0, LAT0, LON0 + N * DX, LAT0 + N * DX)

    def raster(a, name=None):  # exactextract rasters run north to south
        return NumPyRasterSource(np.ascontiguousarray(a[::-1]), *ext, name=name)

    area = cw.cell_area(field).values

    # ---------------------------------------------------------------- coverage weights
    def cw_cold(grid):
        def run():
            weights_cache.clear()
            cw.coverage_weights(basin, grid)

        return run

    def ee_cov():
        return exact_extract(raster(field.values), feats, ["coverage", "cell_id"])

    boxes = rect_boxes(geom)
    cboxes = curv_boxes(geom, curv)
    rows = []
    t_cw, _ = median_time(cw_cold(field), repeat, warmup=1)
    rows.append(("cw.coverage_weights (cache cleared)", t_cw, "measured"))
    t_ee, _ = median_time(ee_cov, repeat, warmup=1)
    rows.append(("exactextract 0.3, 'coverage' op", t_ee, "measured"))
    t_naive, _ = median_time(naive_case(geom, boxes, shapely.area(boxes)), 1)
    rows.append(
        (
            f"naive: shapely.intersection of every bbox cell (vectorised), {boxes.size:,} cells",
            t_naive,
            "measured, 1 run",
        )
    )
    crepeat = max(2, repeat // 3)
    t_cv, _ = median_time(cw_cold(curv), crepeat)
    crow = ("cw.coverage_weights, curvilinear 1000 × 1000 (15° rotated)", t_cv, f"measured, {crepeat} runs")
    t_cnaive, _ = median_time(naive_case(geom, cboxes, shapely.area(cboxes)), 1)
    cnrow = (f"naive, curvilinear: every bbox cell quad clipped, {cboxes.size:,} cells", t_cnaive, "measured, 1 run")

    # agreement of the weights with exactextract's fractions
    weights_cache.clear()
    w = cw.coverage_weights(basin, field).values
    props = ee_cov()[0]["properties"]
    cid = np.asarray(props["cell_id"])
    wee = np.zeros((N, N))
    wee[N - 1 - cid // N, cid % N] = np.asarray(props["coverage"])
    diff_w = np.abs(w - wee).max()

    # ---------------------------------------------------------------- basin mean
    weights_cache.clear()
    cw.basin_mean(field, basin)  # fills the weights and area caches
    j, i = np.nonzero(w)
    j0, j1, i0, i1 = j.min(), j.max() + 1, i.min(), i.max() + 1
    wa = (w * area)[j0:j1, i0:i1]
    sub2, sub12 = field.values[j0:j1, i0:i1], stack.values[:, j0:j1, i0:i1]

    def floor2():
        return float((sub2 * wa).sum() / wa.sum())

    def floor12():
        return np.einsum("kij,ij->k", sub12, wa) / wa.sum()

    def cw_cold_mean():
        weights_cache.clear()
        return cw.basin_mean(field, basin)

    stack_rasters = [raster(stack.values[k], name=f"m{k + 1}") for k in range(12)]

    def ee_mean2():
        return exact_extract(raster(field.values), feats, ["weighted_mean"], weights=raster(area))

    def ee_mean12():
        return exact_extract(stack_rasters, feats, ["weighted_mean"], weights=raster(area))

    many = max(repeat, 20)
    means = [
        ("cw.basin_mean, 2-D, weights cached", median_time(lambda: cw.basin_mean(field, basin), many)[0]),
        ("cw.basin_mean, 12-month stack, weights cached", median_time(lambda: cw.basin_mean(stack, basin), many)[0]),
        ("cw.basin_mean, 2-D, cache cleared (new basin)", median_time(cw_cold_mean, repeat)[0]),
        ("exactextract 'weighted_mean' (area weights), 2-D", median_time(ee_mean2, repeat, warmup=1)[0]),
        ("exactextract 'weighted_mean' (area weights), 12 rasters", median_time(ee_mean12, repeat, warmup=1)[0]),
        ("numpy floor: dot with precomputed weights, 2-D", median_time(floor2, many)[0]),
        ("numpy floor: dot with precomputed weights, 12 months", median_time(floor12, many)[0]),
    ]
    m_cw = float(cw.basin_mean(field, basin))
    m_ee = ee_mean2()[0]["properties"]["weighted_mean"]

    print(f"### Coverage weights, 200-vertex basin on a 1000 × 1000 grid ({machine_facts()})\n")
    print("| case | median (s) | how | time / cw |")
    print("|---|---|---|---|")
    for name, t, how in rows:
        print(f"| {name} | {t:.3f} | {how} | {t / t_cw:.2f} |")
    for name, t, how in (crow, cnrow):
        print(f"| {name} | {t:.3f} | {how} | {t / t_cv:.2f} (vs curvilinear cw) |")
    print(f"\nBasin covers {w.sum():,.0f} cells; largest |cw − exactextract| cell fraction: {diff_w:.1e}.\n")
    print("### Basin mean latency\n")
    print("| case | median (ms) | time / exactextract 2-D |")
    print("|---|---|---|")
    base = means[3][1]
    for name, t in means:
        print(f"| {name} | {1e3 * t:.1f} | {t / base:.2f} |")
    print(f"\nArea-weighted mean: cw {m_cw:.10f}, exactextract {m_ee:.10f}, numpy {floor2():.10f}.")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 7)
