"""ETCCDI precipitation indices over a grid: climwidgets against xclim.

Usage:  python benchmarks/bench_indices.py [NY] [NX] [REPEAT]     (default 100 200 1)

Inputs (deterministic, generated inside the dask graph so nothing is held in memory):
daily depths 1961-2000 (14 610 days, standard calendar), exponential with mean 8 mm on about
40 % of days, float64, dims (time, lat, lon), dask chunks of 10 years x 50 x 50 cells (about
73 MB).  Cases, all on the same data and the threaded scheduler:

  0. floor: generate the data and sum it (what any index must at least pay);
  1. ``cw.precip_indices`` (all 12 ETCCDI names plus R25mm), ``.compute()``, in a fresh
     process: wall time and the rise of peak memory;
  2. xclim 0.62 index functions on the same dask grid (13 calls, the same conventions as
     tests/compute/test_indices.py), ``.compute()`` of all together;
  3. a per-cell loop of the xclim functions on 5 cells (numpy series), extrapolated to
     the grid and to 10^6 cells.

10^6 cells x 40 years (1.46e10 values, 117 GB as float64) cannot run on this shared
2-core machine in the session; the grid is scaled down and the times extrapolated
linearly in the number of cells (every index is independent per cell).
"""

from __future__ import annotations

import sys
import time

import numpy as np

from _common import machine_facts, median_time, peak_rss_of

SETUP = """
import sys
sys.path.insert(0, {here!r})
import dask
dask.config.set(scheduler="threads")
from bench_indices import make_precip
pr = make_precip({ny}, {nx})
"""
NAMES_XCLIM = 13


def _block(block_id, shape, seed=0):
    rng = np.random.default_rng([seed, *block_id])
    depth = 8.0 * rng.standard_exponential(shape)  # cheaper to draw than a gamma: a lower floor
    depth[rng.random(shape) >= 0.4] = 0.0
    return depth


def make_precip(ny: int, nx: int, chunk_years: int = 10, chunk_cells: int = 50):
    """Lazy daily precipitation (time, lat, lon) generated block by block."""
    import dask.array as da
    import xarray as xr

    t = xr.date_range("1961-01-01", "2000-12-31", freq="D")
    nt = t.size
    per = int(round(365.25 * chunk_years))
    chunks = (
        tuple(min(per, nt - s) for s in range(0, nt, per)),
        tuple(min(chunk_cells, ny - s) for s in range(0, ny, chunk_cells)),
        tuple(min(chunk_cells, nx - s) for s in range(0, nx, chunk_cells)),
    )

    def gen(block_info=None):
        info = block_info[None]
        return _block(info["chunk-location"], info["chunk-shape"])

    data = da.map_blocks(gen, chunks=chunks, dtype=float, meta=np.array((), dtype=float))
    return xr.DataArray(
        data,
        dims=("time", "lat", "lon"),
        name="pr",
        coords={"time": t, "lat": 10.0 + 0.05 * np.arange(ny), "lon": -40.0 + 0.05 * np.arange(nx)},
        attrs={"units": "mm", "step": "day"},
    )


def xclim_all(pr):
    """The 13 indices with xclim's functions (conventions as in the tests)."""
    import xarray as xr
    from xclim import indices as xi
    from xclim.core.utils import calc_perc

    p = pr.assign_attrs(units="mm/d")
    base = p.sel(time=slice("1961-01-01", "1990-12-31"))
    per = xr.apply_ufunc(
        lambda a: calc_perc(a, [95, 99], alpha=1 / 3, beta=1 / 3),
        base.where(base >= 1),
        input_core_dims=[["time"]],
        output_core_dims=[["percentile"]],
        dask="parallelized",
        output_dtypes=[float],
        dask_gufunc_kwargs={"output_sizes": {"percentile": 2}, "allow_rechunk": True},
    )
    total = xi.prcptot(p, thresh="1 mm/d")
    out = {"PRCPTOT": total, "SDII": xi.daily_pr_intensity(p, thresh="1 mm/d", op=">=")}
    for name, th in (("R10mm", "10 mm/d"), ("R20mm", "20 mm/d"), ("R25mm", "25 mm/d")):
        out[name] = xi.wetdays(p, thresh=th, op=">=")
    out["CDD"] = xi.maximum_consecutive_dry_days(p, thresh="1 mm/d")
    out["CWD"] = xi.maximum_consecutive_wet_days(p, thresh="1 mm/d")
    for i, q in enumerate((95, 99)):
        frac = xi.fraction_over_precip_thresh(p, per.isel(percentile=i).assign_attrs(units="mm/d"), thresh="1 mm/d")
        out[f"R{q}pTOT"] = frac
        out[f"R{q}p"] = frac * total
    out["Rx1day"] = xi.max_1day_precipitation_amount(p)
    out["Rx5day"] = xi.max_n_day_precipitation_amount(p, window=5)
    return xr.Dataset(out)


def main():
    ny = int(sys.argv[1]) if len(sys.argv) > 1 else 100
    nx = int(sys.argv[2]) if len(sys.argv) > 2 else 200
    repeat = int(sys.argv[3]) if len(sys.argv) > 3 else 1
    import dask

    dask.config.set(scheduler="threads")
    here = str(__import__("pathlib").Path(__file__).parent)
    setup = SETUP.format(here=here, ny=ny, nx=nx)
    cells = ny * nx
    pr = make_precip(ny, nx)
    nt = pr.sizes["time"]
    print(f"# precip indices, {ny} x {nx} = {cells} cells x {nt} days ({machine_facts()})")
    rows = []

    floor, _ = median_time(lambda: float(pr.sum().compute()), repeat=repeat)
    rows.append(("0. floor: generate + sum", floor))

    walls, peaks = [], []
    for _ in range(repeat):
        wall, _, growth = peak_rss_of(
            "ds = cw.precip_indices(pr, thresholds=(25,)); ds.compute()", setup + "import climwidgets as cw\n"
        )
        walls.append(wall)
        peaks.append(growth)
    cw_wall = float(np.median(walls))
    rows.append((f"1. cw.precip_indices (13 indices), peak memory +{max(peaks):.0f} MiB", cw_wall))

    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        xclim_all(make_precip(10, 10)).compute()  # first call compiles xclim's run-length code
        xc_wall, _ = median_time(lambda: xclim_all(pr).compute(), repeat=repeat)
        rows.append(("2. xclim 0.62 functions on the dask grid", xc_wall))

        series = make_precip(1, 5).compute()
        t0 = time.perf_counter()
        for i in range(5):  # the per-cell loop being compared
            xclim_all(series.isel(lat=[0], lon=[i])).compute()
        per_cell = (time.perf_counter() - t0) / 5
    rows.append((f"3. xclim per-cell loop ({per_cell:.2f} s per cell) x {cells} cells", per_cell * cells))

    print("\n| case | seconds | per 10^6 cells (extrapolated) |\n|---|---|---|")
    for name, sec in rows:
        print(f"| {name} | {sec:.1f} | {sec * 1e6 / cells / 3600:.1f} h |")
    print(
        f"\ncw / floor = {cw_wall / floor:.2f}; xclim grid / cw = {xc_wall / cw_wall:.2f}; "
        f"per-cell loop / cw = {per_cell * cells / cw_wall:.0f}"
    )


if __name__ == "__main__":
    main()
