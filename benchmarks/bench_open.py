"""Opening a large file: open_precip reads metadata only.

Writes a ~2 GB daily file (uncompressed float32, (1, ny, nx) chunks) once, then measures
in fresh processes, side by side:
  * climwidgets.open_precip(path)            (lazy open, units converted lazily)
  * xarray.open_dataset(path, chunks={})     (the plain lazy open, baseline)
  * a full read of the variable with netCDF4 (what reading the data would cost)
reporting median wall time and peak resident memory.
"""

from __future__ import annotations

import statistics
import sys

import numpy as np

from _common import DATA, machine_facts, peak_rss_of

NT, NY, NX = 5114, 320, 320  # 14 years daily on 320 x 320: 5114*320*320*4 B = 2.09 GB


def make_file():
    path = DATA / "open_2gb.nc"
    if path.exists():
        return path
    import netCDF4

    DATA.mkdir(parents=True, exist_ok=True)
    tmp = path.with_suffix(".tmp")
    with netCDF4.Dataset(tmp, "w") as ds:
        ds.createDimension("time", NT)
        ds.createDimension("lat", NY)
        ds.createDimension("lon", NX)
        t = ds.createVariable("time", "f8", ("time",))
        t.units, t.calendar = "days since 2000-01-01", "standard"
        t[:] = np.arange(NT)
        la = ds.createVariable("lat", "f8", ("lat",))
        la.units = "degrees_north"
        la[:] = np.linspace(30, 40, NY)
        lo = ds.createVariable("lon", "f8", ("lon",))
        lo.units = "degrees_east"
        lo[:] = np.linspace(-150, -140, NX)
        v = ds.createVariable("pr", "f4", ("time", "lat", "lon"), chunksizes=(1, NY, NX))
        v.units, v.standard_name = "kg m-2 s-1", "precipitation_flux"
        rng = np.random.default_rng(0)
        block = (rng.gamma(0.6, 3e-5, size=(64, NY, NX))).astype("f4")
        for i in range(0, NT, 64):
            n = min(64, NT - i)
            v[i : i + n] = block[:n]
    tmp.rename(path)
    return path


def main(repeat=5):
    path = make_file()
    setup = "import climwidgets as cw, climwidgets.io.loader, xarray as xr, netCDF4, numpy as np, dask.array"
    cases = {
        "climwidgets open_precip": f"pr = cw.open_precip(r'{path}')",
        "xarray open_dataset(chunks={})": f"ds = xr.open_dataset(r'{path}', chunks={{}})",
        "full read (netCDF4, sum)": (
            f"ds = netCDF4.Dataset(r'{path}')\nv = ds['pr']\n"
            "s = 0.0\nfor i in range(0, v.shape[0], 256): s += float(np.sum(v[i:i+256]))"
        ),
    }
    rows = []
    for name, code in cases.items():
        n = 1 if name.startswith("full") else repeat
        runs = [peak_rss_of(code, setup) for _ in range(n)]
        rows.append((name, *(statistics.median(r[i] for r in runs) for i in range(3))))
    base = rows[1]
    size_gb = path.stat().st_size / 1e9
    print(f"### Opening a {size_gb:.2f} GB file ({machine_facts()})\n")
    print("| case | median wall (s) | memory growth (MiB) | time / xarray open |")
    print("|---|---|---|---|")
    for name, wall, peak, growth in rows:
        print(f"| {name} | {wall:.3f} | {growth:.0f} | {wall / base[1]:.2f} |")
    print("\nImports are done before timing; memory growth is the rise of peak RSS during the case.")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 5)
