"""The one-pass climatology (fused path) beside the I/O floor and xarray recipes, interleaved.

Usage:  python benchmarks/bench_fused.py NY YEARS REPEAT [layout ...]
        python benchmarks/bench_fused.py --cluster NY YEARS REPEAT      (threads, 1 and 2 workers)
        python benchmarks/bench_fused.py --schedulers NY YEARS REPEAT   (threads or processes)

Files: deterministic daily float32, zlib level 1 + shuffle, ~60 % dry days, two on-disk
layouts ("fields": chunks (1, ny, nx); "tiles": (365, 64, 64)), kept in benchmarks/_data.
To make them quickly, one year of gamma-distributed days is drawn once and every later
year is that year shifted in time and longitude (the statistics and the compression ratio
are those of fresh draws; the bytes differ from year to year).

Every case computes the same five things — monthly totals, annual totals, the July-August
share, 10-year monthly normals and annual 1-day maxima — except the I/O floor, which only
reads and sums. Each run is a fresh process; the cases alternate within every round (so a
burst of other work on the machine hits all of them), and the table gives medians and
ranges over the rounds. Peak memory is the resident memory of the process tree, sampled
every 50 ms.
"""

from __future__ import annotations

import json
import os
import statistics
import sys
import textwrap

import numpy as np
from _common import DATA, machine_facts
from bench_scale import CHUNKS, _run, io_floor_code


def make_file(layout: str, ny: int, years: int):
    import netCDF4

    nx = ny
    path = DATA / f"fused_{layout}_{ny}_{years}y.nc"
    if path.exists():
        return path
    DATA.mkdir(parents=True, exist_ok=True)
    t0 = np.datetime64("2001-01-01")
    nt = int((np.datetime64(f"{2001 + years}-01-01") - t0) / np.timedelta64(1, "D"))
    rng = np.random.default_rng(42)
    pool = rng.gamma(0.7, 6.0, size=(366, ny, nx)).astype("f4")
    pool[rng.random(pool.shape) < 0.6] = 0.0
    pool = np.round(pool, 1)
    tmp = path.with_suffix(".tmp")
    with netCDF4.Dataset(tmp, "w") as ds:
        ds.createDimension("time", nt)
        ds.createDimension("lat", ny)
        ds.createDimension("lon", nx)
        t = ds.createVariable("time", "f8", ("time",))
        t.units, t.calendar = "days since 2001-01-01", "standard"
        t[:] = np.arange(nt)
        la = ds.createVariable("lat", "f8", ("lat",))
        la.units = "degrees_north"
        la[:] = np.linspace(30, 40, ny)
        lo = ds.createVariable("lon", "f8", ("lon",))
        lo.units = "degrees_east"
        lo[:] = np.linspace(-150, -140, nx)
        v = ds.createVariable(
            "pr", "f4", ("time", "lat", "lon"), chunksizes=CHUNKS[layout](ny, nx), zlib=True, complevel=1, shuffle=True
        )
        v.units, v.standard_name = "mm", "precipitation_amount"
        i = 0
        for year in range(years):
            n = int(
                (np.datetime64(f"{2002 + year}-01-01") - np.datetime64(f"{2001 + year}-01-01")) / np.timedelta64(1, "D")
            )
            v[i : i + n] = np.roll(np.roll(pool, 37 * year, axis=0), 11 * year, axis=2)[:n]
            i += n
    tmp.rename(path)
    return path


# flox (and numba, through numpy_groupies) imports in the setup: a one-off cost of every method
SETUP = (
    "import numpy as np, xarray as xr, dask, flox.xarray, flox.aggregations\nimport climwidgets as cw\n"
    "from climwidgets.compute import _fused\nfrom climwidgets.compute.bundle import climatology_bundle\n"
)


def cw_code(path, fused=True, scheduler=None, years=10):
    sched = f"dask.config.set(scheduler={scheduler!r})\n" if scheduler else ""
    return sched + textwrap.dedent(f"""
        _fused.ENABLED = {fused}
        pr = cw.open_precip(r'{path}', validate=False)
        ds = climatology_bundle(pr, months=(7, 8), baseline=(2001, {2000 + min(years, 10)}), maxima_days=(1,)).compute()
    """)


def _recipe(open_line, monthly_lines):
    return textwrap.dedent(f"""
        {open_line}
        pr = ds['pr']
        {monthly_lines}
        annual = monthly.resample(time='YS').sum()
        summer = monthly.where(monthly.time.dt.month.isin([7, 8])).resample(time='YS').sum()
        share = summer.sum('time') / annual.sum('time')
        normals = monthly.sel(time=slice('2001', '2010')).groupby('time.month').mean()
        out = dask.compute(monthly, annual, share, normals, amax)
    """)


def xarray_auto_code(path):
    return _recipe(
        f"ds = xr.open_dataset(r'{path}', chunks='auto')",
        "monthly = pr.resample(time='MS').sum()\n        amax = pr.groupby('time.year').max()",
    )


def xarray_tuned_code(path, layout):
    """Disk-aligned chunks; for one field per step, month-sized chunks so every reduction is blockwise."""
    if layout == "fields":
        open_line = (
            f"ds = xr.open_dataset(r'{path}', chunks={{}})\n"
            "        from xarray.groupers import TimeResampler\n"
            "        ds = ds.chunk(time=TimeResampler('MS'))"
        )
        monthly = (
            "monthly = pr.resample(time='MS').sum(method='blockwise')\n"
            "        amax = pr.resample(time='MS').max(method='blockwise').resample(time='YS').max()"
        )
    else:
        open_line = f"ds = xr.open_dataset(r'{path}', chunks={{'time': 3650, 'lat': 64, 'lon': 64}})"
        monthly = (
            "monthly = pr.resample(time='MS').sum()\n"
            "        amax = pr.resample(time='MS').max().resample(time='YS').max()"
        )
    return _recipe(open_line, monthly)


def _table(rows, floor_name, tuned_name):
    floor = statistics.median(rows[floor_name][0])
    tuned = statistics.median(rows[tuned_name][0])
    out = [
        "| method | median wall (s) | range (s) | / I/O floor | / hand-tuned | peak memory (MiB) |",
        "|---|---|---|---|---|---|",
    ]
    for name, (walls, peaks) in rows.items():
        med = statistics.median(walls)
        out.append(
            f"| {name} | {med:.1f} | {min(walls):.1f}–{max(walls):.1f} | {med / floor:.2f} | "
            f"{med / tuned:.2f} | {min(peaks):.0f}–{max(peaks):.0f} |"
        )
    return "\n".join(out)


def run_layouts(ny, years, repeat, layouts):
    nproc = os.cpu_count() or 1
    print(f"### {years} years daily on {ny} x {ny}, {repeat} interleaved rounds ({machine_facts()})\n", flush=True)
    for layout in layouts:
        path = make_file(layout, ny, years)
        floor_name = f"I/O floor (netCDF4, {nproc} processes)"
        tuned_name = "hand-tuned xarray + dask"
        cases = {
            floor_name: (SETUP, io_floor_code(path, nproc)),
            "plain xarray + dask, chunks='auto'": (SETUP, xarray_auto_code(path)),
            tuned_name: (SETUP, xarray_tuned_code(path, layout)),
            "climatology_bundle, plain path (before)": (SETUP, cw_code(path, fused=False, years=years)),
            "climatology_bundle, fused, threads (default)": (SETUP, cw_code(path, years=years)),
        }
        if os.environ.get("BENCH_PROCESSES", "1") == "1":
            cases["climatology_bundle, fused, processes"] = (SETUP, cw_code(path, scheduler="processes", years=years))
        rows = {name: ([], []) for name in cases}
        for r in range(repeat):
            for name, (setup, code) in cases.items():
                wall, peak = _run(setup, code)[:2]
                rows[name][0].append(wall)
                rows[name][1].append(peak)
                print(
                    json.dumps({"layout": layout, "round": r, "case": name, "wall": wall, "peak": peak}),
                    file=sys.stderr,
                    flush=True,
                )
        raw = 4 * ny * ny * 365.25 * years / 1e9
        print(
            f"\n**Layout `{layout}`**, chunks {CHUNKS[layout](ny, ny)}, {raw:.2f} GB raw, "
            f"{path.stat().st_size / 1e9:.2f} GB on disk\n"
        )
        print(_table(rows, floor_name, tuned_name), flush=True)


def run_schedulers(ny, years, repeat):
    """Threads against dask's process pool for the fused path (fields layout), interleaved."""
    path = make_file("fields", ny, years)
    cases = {
        "fused, threads": (SETUP, cw_code(path, years=years)),
        "fused, processes (2)": (SETUP, cw_code(path, scheduler="processes", years=years)),
    }
    rows = {name: ([], []) for name in cases}
    for _ in range(repeat):
        for name, (setup, code) in cases.items():
            wall, peak = _run(setup, code)[:2]
            rows[name][0].append(wall)
            rows[name][1].append(peak)
    print(f"### Threads or processes, fields layout, {years} years on {ny} x {ny}, {repeat} rounds\n")
    print("| scheduler | median wall (s) | range (s) | peak memory (MiB) |\n|---|---|---|---|")
    for name, (walls, peaks) in rows.items():
        print(
            f"| {name} | {statistics.median(walls):.1f} | {min(walls):.1f}–{max(walls):.1f} | "
            f"{min(peaks):.0f}–{max(peaks):.0f} |",
            flush=True,
        )


def run_cluster(ny, years, repeat):
    """Threads against 1- and 2-worker LocalClusters (started before timing), fused path."""
    path = make_file("fields", ny, years)
    cluster = "cw.use_cluster(n_workers={n})\nclient = cw.scale.current_client()\n"
    cases = {
        "fused, threads": (SETUP, cw_code(path, years=years)),
        "fused, LocalCluster 1 worker": (SETUP + cluster.format(n=1), cw_code(path, years=years)),
        "fused, LocalCluster 2 workers": (SETUP + cluster.format(n=2), cw_code(path, years=years)),
    }
    rows = {name: ([], []) for name in cases}
    for r in range(repeat):
        for name, (setup, code) in cases.items():
            wall, peak = _run(setup, code)[:2]
            rows[name][0].append(wall)
            rows[name][1].append(peak)
            print(json.dumps({"round": r, "case": name, "wall": wall, "peak": peak}), file=sys.stderr, flush=True)
    overhead = _run(
        SETUP + "cw.use_cluster(n_workers=2)\nclient = cw.scale.current_client()\n"
        "tasks = [dask.delayed(abs)(i) for i in range(4000)]\n",
        "dask.compute(*tasks)",
    )
    count = _run(
        SETUP,
        cw_code(path, years=years).replace(".compute()", "")
        + "\nprint('TASKS', len(dask.optimize(ds)[0].__dask_graph__()))",
    )
    base = statistics.median(rows["fused, threads"][0])
    print(f"### Cluster, fields layout, {years} years on {ny} x {ny}, {repeat} rounds\n")
    print("| method | median wall (s) | range (s) | / threads | peak memory (MiB) |\n|---|---|---|---|---|")
    for name, (walls, peaks) in rows.items():
        med = statistics.median(walls)
        print(
            f"| {name} | {med:.1f} | {min(walls):.1f}–{max(walls):.1f} | {med / base:.2f} | "
            f"{min(peaks):.0f}–{max(peaks):.0f} |",
            flush=True,
        )
    print(
        f"\nScheduler overhead on the 2-worker LocalCluster: 4000 independent trivial tasks "
        f"in {overhead[0]:.1f} s, i.e. {overhead[0] / 4000 * 1e3:.2f} ms per task; the fused bundle on this "
        f"file has {count[2]} tasks after optimisation."
    )


def main():
    args = sys.argv[1:]
    if args and args[0] == "--schedulers":
        run_schedulers(int(args[1]), int(args[2]), int(args[3]))
        return
    if args and args[0] == "--cluster":
        run_cluster(int(args[1]), int(args[2]), int(args[3]))
        return
    ny, years, repeat = int(args[0]), int(args[1]), int(args[2])
    run_layouts(ny, years, repeat, args[3:] or list(CHUNKS))


if __name__ == "__main__":
    main()
