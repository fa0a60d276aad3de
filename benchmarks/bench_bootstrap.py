"""The return-level bootstrap on the demo grid: before and after the vectorised refit and quantiles.

Usage:  python benchmarks/bench_bootstrap.py [REPEAT] [N_BOOT]      (defaults 3, 2000)

Input (deterministic): annual maxima from a GEV whose parameters vary smoothly over the
grid (``bench_gev.make_maxima``), 40 years on 40 x 50 cells — the size of the full demo
grid (0.1 degree over 4 x 5 degrees) — with 0.5 % of the values missing, so that cells
with 39 and 38 years occur beside complete ones. Side by side, interleaved, every case in
a fresh process:

  1. ``cw.return_levels(n_boot=N_BOOT)``, 5 periods, with the bootstrap core of the commit
     given by ``BEFORE`` (default 47a67d8, read with ``git show``): sampling and refitting
     every replicate elementwise, ``np.quantile`` plus ``np.nanquantile`` cell by cell
     where a refit failed;
  2. the same call with the current code (sorted draws shared by all cells, one matrix
     product per cell for the probability-weighted moments, ``nanquantile_linear``).

Then, in this process, the percentile step alone on a table of the bootstrap's shape
(cells x periods x N_BOOT, 2 % NaN): ``numpy.nanquantile`` against ``nanquantile_linear``,
with the largest difference between the two (0 expected: the same formula).
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
from pathlib import Path

import numpy as np

from _common import DATA, machine_facts, median_time, peak_rss_of

HERE = Path(__file__).parent
BEFORE = os.environ.get("BEFORE", "47a67d8")
NY, NX = 40, 50


def before_module() -> Path:
    """The bootstrap of commit BEFORE as a file (the whole gev.py of that commit)."""
    DATA.mkdir(parents=True, exist_ok=True)
    path = DATA / f"gev_{BEFORE}.py"
    if not path.exists():
        text = subprocess.run(
            ["git", "show", f"{BEFORE}:climwidgets/compute/gev.py"],
            cwd=HERE,
            capture_output=True,
            text=True,
            check=True,
        ).stdout
        path.write_text(text)
    return path


def main(repeat=3, n_boot=2000):
    setup = (
        f"import sys; sys.path.insert(0, r'{HERE}')\n"
        "import numpy as np, climwidgets as cw, climwidgets.compute.gev as gev\n"
        "from bench_gev import make_maxima\n"
        f"am = make_maxima({NY}, {NX}, seed=3)\n"
    )
    patch = (
        "import importlib.util\n"
        f"spec = importlib.util.spec_from_file_location('climwidgets.compute._gev_before', r'{before_module()}')\n"
        "old = importlib.util.module_from_spec(spec); spec.loader.exec_module(old)\n"
        "gev._bootstrap_block = old._bootstrap_block\n"
    )
    code = f"ds = cw.return_levels(am, n_boot={n_boot})"
    cases = {
        f"return_levels, bootstrap of {BEFORE} (before)": setup + patch,
        "return_levels, vectorised bootstrap (now)": setup,
    }
    rows = {name: [] for name in cases}
    for _ in range(repeat):
        for name, s in cases.items():
            wall, _, growth = peak_rss_of(code, s)
            rows[name].append((wall, growth))
    first = statistics.median(w for w, _ in rows[next(iter(rows))])
    print(
        f"### Return-level bootstrap, {NY} x {NX} cells x 40 years, {n_boot} samples, 5 periods ({machine_facts()})\n"
    )
    print("| case | median wall (s) | range (s) | memory growth (MiB) | time / before |")
    print("|---|---|---|---|---|")
    for name, runs in rows.items():
        walls = [w for w, _ in runs]
        med = statistics.median(walls)
        print(
            f"| {name} | {med:.2f} | {min(walls):.2f}–{max(walls):.2f} | "
            f"{statistics.median(g for _, g in runs):.0f} | {med / first:.2f} |"
        )

    import warnings

    from climwidgets.compute.gev import nanquantile_linear

    rng = np.random.default_rng(0)
    table = rng.gumbel(50.0, 10.0, size=(NY * NX, 5, n_boot))
    table[rng.random(table.shape) < 0.02] = np.nan
    q = [0.05, 0.95]

    def numpy_way():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            return np.nanquantile(table, q, axis=-1)

    t_np, _ = median_time(numpy_way, repeat)
    t_cw, _ = median_time(lambda: nanquantile_linear(table, q, axis=-1), repeat)
    diff = np.nanmax(np.abs(numpy_way() - nanquantile_linear(table, q, axis=-1)))
    print(
        f"\nPercentiles alone, {NY * NX * 5:,} slices of {n_boot} values with 2 % NaN: "
        f"numpy.nanquantile {t_np:.2f} s, nanquantile_linear {t_cw:.2f} s "
        f"({t_np / t_cw:.0f}× faster); largest difference {diff:.1e}."
    )


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:3]))
