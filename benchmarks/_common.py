"""Small helpers shared by the benchmark scripts: timing, peak memory, data folder."""

from __future__ import annotations

import os
import resource
import statistics
import subprocess
import sys
import time
from pathlib import Path

DATA = Path(os.environ.get("CW_BENCH_DATA", Path(__file__).parent / "_data"))


def median_time(func, repeat=5, warmup=0):
    for _ in range(warmup):
        func()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        func()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), times


def peak_rss_of(code: str, setup: str = "") -> tuple[float, float, float]:
    """Run ``setup`` then ``code`` in a fresh Python.

    Returns (wall seconds of ``code``, peak resident memory in MiB, growth of the peak
    during ``code`` in MiB) so that imports are not counted against the case.
    """
    wrapper = (
        "import resource, time\n"
        f"{setup}\n"
        "m0 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024\n"
        "t0 = time.perf_counter()\n"
        f"{code}\n"
        "print('WALL', time.perf_counter() - t0)\n"
        "m1 = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024\n"
        "print('PEAK', m1)\n"
        "print('GROWTH', m1 - m0)\n"
    )
    out = subprocess.run([sys.executable, "-c", wrapper], capture_output=True, text=True, check=True).stdout
    vals = dict(line.split() for line in out.splitlines() if line.startswith(("WALL", "PEAK", "GROWTH")))
    return float(vals["WALL"]), float(vals["PEAK"]), float(vals["GROWTH"])


def machine_facts() -> str:
    mem = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    return f"{os.cpu_count()} cores, {mem:.0f} GiB memory, Python {sys.version.split()[0]}"


def self_peak_mib() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
