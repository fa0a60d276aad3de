"""Season share + annual totals + normals on a large daily file, against the I/O floor.

Usage:  python benchmarks/bench_scale.py [NY] [YEARS] [REPEAT]
        (default 512 x 512, 20 years, 3 runs)

Makes two deterministic files of the same data (zlib level 1 with shuffle, float32,
about 60 % dry days), one per common on-disk layout:
  * "fields": one 2-D field per time step, chunks (1, ny, nx)
  * "tiles":  time-chunked tiles, chunks (365, 64, 64)
and times, side by side, in fresh processes:
  1. I/O floor: one plain streaming read of the whole variable with netCDF4 in large
     chunk-aligned blocks, summing values, one process per core, each reading its share
     of the time axis (HDF5 holds a lock inside a process, so only processes decompress
     in parallel);
  2. climwidgets, threaded scheduler: climatology_bundle(...).compute();
  3. climwidgets on a 2-worker LocalCluster (cw.use_cluster; started before timing);
  4. a plain xarray recipe a user would write: open_dataset(chunks={}), resample to
     months, groupby, compute.
For each: median wall time and peak resident memory of the whole process tree.
"""

from __future__ import annotations

import json
import os
import statistics
import subprocess
import sys
import textwrap

import numpy as np

from _common import DATA, machine_facts

CHUNKS = {"fields": lambda ny, nx: (1, ny, nx), "tiles": lambda ny, nx: (365, 64, 64)}


def make_file(layout: str, ny: int, years: int):
    import netCDF4

    nx = ny
    path = DATA / f"scale_{layout}_{ny}_{years}y.nc"
    if path.exists():
        return path
    DATA.mkdir(parents=True, exist_ok=True)
    t0 = np.datetime64("2001-01-01")
    nt = int((np.datetime64(f"{2001 + years}-01-01") - t0) / np.timedelta64(1, "D"))
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
        rng = np.random.default_rng(42)
        step = 365
        for i in range(0, nt, step):
            n = min(step, nt - i)
            block = rng.gamma(0.7, 6.0, size=(n, ny, nx)).astype("f4")
            block[rng.random((n, ny, nx)) < 0.6] = 0.0
            v[i : i + n] = np.round(block, 1)
    tmp.rename(path)
    return path


_MEMORY_SAMPLER = textwrap.dedent("""
    import threading, time, psutil, os
    _peak = [0]
    def _sample():
        me = psutil.Process(os.getpid())
        while True:
            try:
                rss = me.memory_info().rss + sum(c.memory_info().rss for c in me.children(recursive=True))
            except psutil.Error:
                rss = 0
            _peak[0] = max(_peak[0], rss)
            time.sleep(0.05)
    threading.Thread(target=_sample, daemon=True).start()
""")


def _run(setup: str, code: str) -> tuple[float, float]:
    """Run ``setup`` untimed, then time ``code``; memory is the peak of the process tree."""
    script = (
        _MEMORY_SAMPLER
        + setup
        + "\nimport time\nt0 = time.perf_counter()\n"
        + code
        + "\nwall = time.perf_counter() - t0\nimport json\nprint('RESULT', json.dumps([wall, _peak[0] / 2**20]))\n"
    )
    out = subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, cwd=os.path.dirname(os.path.abspath(__file__))
    )
    if out.returncode != 0:
        raise RuntimeError(out.stderr[-3000:])
    line = [l for l in out.stdout.splitlines() if l.startswith("RESULT")][-1]
    wall, peak = json.loads(line.split(" ", 1)[1])
    tasks = [l.split()[1] for l in out.stdout.splitlines() if l.startswith("TASKS")]  # bench_fused's task count
    return (wall, peak, int(tasks[0])) if tasks else (wall, peak)


def io_floor_code(path, nproc):
    return textwrap.dedent(f"""
        from concurrent.futures import ProcessPoolExecutor
        import netCDF4, numpy as np
        def part(bounds):
            lo, hi = bounds
            with netCDF4.Dataset(r'{path}') as ds:
                v = ds['pr']
                v.set_auto_mask(False)
                ct = v.chunking()[0] if v.chunking() != 'contiguous' else 64
                step = max(ct, (64 // ct) * ct) if ct < 64 else ct
                s = 0.0
                for i in range(lo, hi, step):
                    s += float(np.sum(v[i:min(i + step, hi)], dtype='f8'))
                return s
        with netCDF4.Dataset(r'{path}') as ds:
            nt = ds['pr'].shape[0]
            ct = ds['pr'].chunking()[0]
        edges = [round(i * nt / {nproc} / ct) * ct for i in range({nproc})] + [nt]
        with ProcessPoolExecutor({nproc}) as ex:
            total = sum(ex.map(part, list(zip(edges[:-1], edges[1:]))))
    """)


def cw_code(path, cluster):
    return textwrap.dedent(f"""
        pr = cw.open_precip(r'{path}', validate=False)
        ds = climatology_bundle(pr, months=(7, 8), baseline=(2001, 2010), maxima_days=())
        ds = ds.drop_vars('monthly_totals').compute()
    """)


def xarray_code(path):
    return textwrap.dedent(f"""
        ds = xr.open_dataset(r'{path}', chunks={{}})
        pr = ds['pr']
        monthly = pr.resample(time='MS').sum()
        annual = pr.resample(time='YS').sum()
        summer = monthly.where(monthly.time.dt.month.isin([7, 8])).resample(time='YS').sum()
        share = summer.sum('time') / annual.sum('time')
        normals = monthly.sel(time=slice('2001', '2010')).groupby('time.month').mean()
        share, annual, normals = dask.compute(share, annual, normals)
    """)


SETUP = (
    "import numpy as np, xarray as xr, dask, netCDF4\nimport climwidgets as cw\n"
    "from climwidgets.compute.bundle import climatology_bundle\n"
)


def main():
    ny = int(sys.argv[1]) if len(sys.argv) > 1 else 512
    years = int(sys.argv[2]) if len(sys.argv) > 2 else 20
    repeat = int(sys.argv[3]) if len(sys.argv) > 3 else 3
    nproc = os.cpu_count() or 1
    print(f"### Season share + totals + normals, {years} years daily on {ny} x {ny} ({machine_facts()})\n")
    for layout in CHUNKS:
        path = make_file(layout, ny, years)
        # the cluster is started in the untimed setup: a running cluster is what a user has
        cluster_setup = SETUP + "cw.use_cluster(n_workers=2)\n"
        cases = [
            ("I/O floor (netCDF4, %d processes)" % nproc, io_floor_code(path, nproc), SETUP),
            ("climwidgets, threaded", cw_code(path, False), SETUP),
            ("climwidgets, 2-worker LocalCluster", cw_code(path, True), cluster_setup),
            ("plain xarray recipe (dask, chunks={})", xarray_code(path), SETUP),
        ]
        rows = []
        for name, code, setup in cases:
            runs = [_run(setup, code) for _ in range(repeat)]
            rows.append((name, statistics.median(r[0] for r in runs), max(r[1] for r in runs)))
        floor, plain = rows[0][1], rows[3][1]
        size = path.stat().st_size / 1e9
        raw = 4 * ny * ny * 365.25 * years / 1e9
        print(f"\n**Layout `{layout}`**, chunks {CHUNKS[layout](ny, ny)}, {raw:.2f} GB raw, {size:.2f} GB on disk\n")
        print("| case | median wall (s) | peak memory (MiB) | / I/O floor | / plain recipe |")
        print("|---|---|---|---|---|")
        for name, wall, peak in rows:
            print(f"| {name} | {wall:.1f} | {peak:.0f} | {wall / floor:.2f} | {wall / plain:.2f} |")
        sys.stdout.flush()


if __name__ == "__main__":
    main()
