"""Faults in the middle of work: a killed dask worker, a full disk, a refused write, an interrupt.

* Disk full and permission errors are simulated with monkeypatch (OSError with errno
  ENOSPC / PermissionError raised part-way through the write): tests run as root, where
  chmod does not stop writes, and a tiny tmpfs cannot be mounted here.
* The killed worker is a real one: a LocalCluster of 2 worker processes, one killed with
  SIGKILL while tasks are running.
"""

from __future__ import annotations

import errno
import os
import signal
import threading
import time
from pathlib import Path

import dask.array as dsa
import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw

LAT = np.array([-30.75, -30.25])
LON = np.array([-140.75, -140.25, -139.75])


def _field(n=24, value=2.0):
    time = pd.date_range("2001-01-01", periods=n, freq="MS")
    return xr.DataArray(
        np.full((n, 2, 3), value),
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": LAT, "lon": LON},
        attrs={"units": "mm", "step": "month"},
        name="pr",
    )


def _leftovers(folder: Path):
    return [p.name for p in folder.iterdir() if p.name.startswith(".") or p.suffix == ".part"]


# ------------------------------------------------------------------ exports
def _failing_write_text(exc):
    original = Path.write_text

    def write_text(self, text, *args, **kwargs):
        original(self, text[: len(text) // 2], *args, **kwargs)  # half the file reaches the disk
        raise exc

    return write_text


def _failing_write_bytes(exc):
    original = Path.write_bytes

    def write_bytes(self, data):
        original(self, data[: len(data) // 2])  # half the file reaches the disk
        raise exc

    return write_bytes


@pytest.mark.parametrize(
    "exc",
    [OSError(errno.ENOSPC, "No space left on device"), PermissionError(errno.EACCES, "Permission denied")],
    ids=["disk_full", "permission"],
)
@pytest.mark.parametrize("what", ["csv", "report"])
def test_failed_text_export_keeps_previous_file(tmp_path, monkeypatch, exc, what):
    target = tmp_path / f"out.{'csv' if what == 'csv' else 'html'}"
    target.write_text("previous version\n")
    table = pd.DataFrame({"basin": ["upper"], "annual_mm": [1234.5]}).set_index("basin")
    monkeypatch.setattr(Path, "write_text", _failing_write_text(exc))
    monkeypatch.setattr(Path, "write_bytes", _failing_write_bytes(exc))  # the CSV writer writes bytes
    with pytest.raises(OSError) as info:
        if what == "csv":
            cw.to_csv(table, target, overwrite=True)
        else:
            cw.write_report(table, target, overwrite=True, title="t")
    assert info.value.errno == exc.errno and isinstance(info.value, type(exc))
    assert str(target) in str(info.value) and "untouched" in str(info.value)  # says which file, nothing lost
    assert target.read_text() == "previous version\n"  # untouched
    assert _leftovers(tmp_path) == []  # the partial temporary file is gone


@pytest.mark.parametrize(
    "exc",
    [OSError(errno.ENOSPC, "No space left on device"), PermissionError(errno.EACCES, "Permission denied")],
    ids=["disk_full", "permission"],
)
def test_failed_netcdf_export_keeps_previous_file(tmp_path, monkeypatch, exc):
    from climwidgets.report import netcdf

    target = tmp_path / "out.nc"
    cw.to_netcdf(_field(value=1.0), target)
    before = target.read_bytes()
    original = netcdf._write_dataset

    def half_then_fail(ds, tmp, encoding):
        original(ds, tmp, encoding)
        with open(tmp, "r+b") as fh:  # the temporary file exists, cut short, when the disk fills
            fh.truncate(os.path.getsize(tmp) // 2)
        raise exc

    monkeypatch.setattr(netcdf, "_write_dataset", half_then_fail)
    with pytest.raises(OSError) as info:
        cw.to_netcdf(_field(value=5.0), target, overwrite=True)
    assert info.value.errno == exc.errno
    assert target.read_bytes() == before
    assert _leftovers(tmp_path) == []
    np.testing.assert_allclose(cw.open_precip(target)[:1].values, 1.0)


# ------------------------------------------------------------------ awkward inputs through a job
def _one_cell_file(path, bounds):
    time = pd.date_range("1991-01-01", "1993-12-31", freq="D")
    values = np.where(time.month.isin([7, 8]), 2.0, 1.0)[:, None, None]
    ds = xr.DataArray(
        values,
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": [10.5], "lon": [-160.5]},
        name="pr",
        attrs={"units": "mm"},
    ).to_dataset()
    if bounds:
        ds["lat_bnds"] = (("lat", "nv"), [[10.0, 11.0]])
        ds["lon_bnds"] = (("lon", "nv"), [[-161.0, -160.0]])
        ds["lat"].attrs["bounds"], ds["lon"].attrs["bounds"] = "lat_bnds", "lon_bnds"
    ds.to_netcdf(path)
    return path


@pytest.mark.parametrize("bounds", [True, False], ids=["bounds", "no_bounds"])
def test_one_cell_grid_summary_writes_every_output_or_refuses_before_writing(tmp_path, bounds):
    import json

    from climwidgets import jobs

    data = _one_cell_file(tmp_path / "one_cell.nc", bounds)
    before = data.read_bytes()
    square = [[[-161, 10], [-160, 10], [-160, 11], [-161, 11], [-161, 10]]]
    (tmp_path / "b.geojson").write_text(
        json.dumps(
            {
                "type": "FeatureCollection",
                "features": [
                    {
                        "type": "Feature",
                        "properties": {"name": "square"},
                        "geometry": {"type": "Polygon", "coordinates": square},
                    }
                ],
            }
        )
    )
    out = tmp_path / "out"
    if not bounds:  # the size of the cell is unknown: refused at open, nothing written
        with pytest.raises(cw.InputError, match="one_cell.nc.*single latitude"):
            jobs.run_summary(data, tmp_path / "b.geojson", (7, 8), (1991, 1993), out)
        assert not out.exists() or list(out.iterdir()) == []
    else:
        result = jobs.run_summary(data, tmp_path / "b.geojson", (7, 8), (1991, 1993), out)
        assert all(p.exists() for p in result.paths.values())  # the report's maps draw the one cell
        # area of the 1 x 1 degree cell between 10 and 11 N on the authalic sphere (R = 6371.0072 km):
        # R^2 x pi/180 x (sin 11 - sin 10), hand-computed
        area = 6371.0072**2 * np.pi / 180 * (np.sin(np.radians(11)) - np.sin(np.radians(10)))
        assert result.table.loc["square", "area_km2"] == pytest.approx(area, rel=1e-6)
    assert data.read_bytes() == before


@pytest.mark.parametrize(
    "case",
    [
        "monthly_stamps_daily_bounds",
        "fill_not_declared",
        "zarr_missing_chunk",
        "declared_2e6_grid",
        "glob_fill_in_later_file",
    ],
)
def test_awkward_inputs_through_the_command_line_exit_0_or_2_naming_the_file(tmp_path, capsys, case):
    """The summary command on corpus inputs: a full answer (exit 0) or one line naming the file (exit 2)."""
    import json

    from climwidgets import cli

    from .corpus.make_corpus import CASES, Opens

    found = next(c for c in CASES if c.name == case)
    folder = tmp_path / case
    folder.mkdir()
    source = found.build(folder)
    before = {p: p.read_bytes() for p in folder.rglob("*") if p.is_file()}
    square = [[[-142, -32], [-139, -32], [-139, -29], [-142, -29], [-142, -32]]]
    (tmp_path / "b.geojson").write_text(
        json.dumps(
            {
                "type": "FeatureCollection",
                "features": [
                    {
                        "type": "Feature",
                        "properties": {"name": "square"},
                        "geometry": {"type": "Polygon", "coordinates": square},
                    }
                ],
            }
        )
    )
    code = cli.main(
        [
            "summary",
            "--data",
            source,
            "--basins",
            str(tmp_path / "b.geojson"),
            "--months",
            "1",
            "--baseline",
            "2001-2001",
            "--out",
            str(tmp_path / "out"),
        ]
    )
    err = capsys.readouterr().err
    if isinstance(found.expect, Opens):
        assert code in (0, 2), err  # a one-week record may be too short for a summary: said, not crashed
    else:
        assert code == 2, err
        assert Path(str(source)).name in err or any(p.name in err for p in before), err
    assert {p: p.read_bytes() for p in before} == before  # inputs unchanged


# ------------------------------------------------------------------ widgets
class _Interrupted:
    """Makes the first compute call raise KeyboardInterrupt (as Ctrl-C in the kernel would)."""

    def __init__(self):
        self.armed = True

    def __call__(self):
        if self.armed:
            self.armed = False
            raise KeyboardInterrupt


def _widget(trap):
    import ipywidgets as widgets

    from climwidgets.widgets.base import BaseWidget

    class Totals(BaseWidget):
        def __init__(self, pr):
            self.pr = pr
            self.year_start = widgets.IntSlider(value=1, min=1, max=12)
            super().__init__()
            self.watch(self.year_start)

        def build_controls(self):
            return [self.year_start]

        def parameters(self):
            return {"year_start": self.year_start.value}

        def compute(self, year_start):
            trap()
            return cw.annual_totals(self.pr, year_start=year_start).mean("year")

    return Totals(_field())


def test_keyboard_interrupt_in_compute_now_leaves_widget_usable():
    trap = _Interrupted()
    w = _widget(trap)
    with pytest.raises(KeyboardInterrupt):  # the interrupt reaches the user, as Ctrl-C should
        w.compute_now()
    assert w.progress.layout.visibility == "hidden"
    assert w.wait(timeout=5) is None  # nothing pending, no half result
    with w.quiet():
        w.year_start.value = 1
    result = w.compute_now()
    np.testing.assert_allclose(result.values, 24.0)  # 12 months x 2 mm
    assert w.error is None


def test_keyboard_interrupt_in_background_computation_leaves_widget_usable(monkeypatch):
    trap = _Interrupted()
    seen = []
    monkeypatch.setattr(threading, "excepthook", lambda args: seen.append(args.exc_type))
    w = _widget(trap)
    w.refresh()
    w.wait(timeout=30)  # returns: the interrupted run still signals that it is done
    assert seen == [] and w.result is None  # caught in the worker thread, no stray traceback
    assert "Interrupted" in w.message.value
    assert w.progress.layout.visibility == "hidden"
    w.year_start.value = 2  # a following parameter change computes normally
    result = w.wait(timeout=30)
    assert result is not None and np.allclose(result.values, 24.0)


# ------------------------------------------------------------------ cluster
def _slow_block(block):
    time.sleep(0.15)  # keeps tasks running long enough to kill a worker under them (no timing asserted)
    return block * 2.0


@pytest.fixture
def cluster():
    from climwidgets.scale import close_cluster

    client = cw.use_cluster(n_workers=2, threads_per_worker=1, memory_limit="1GiB")
    try:
        yield client
    finally:
        close_cluster()


def _kill_one_worker_when_busy(client, timeout=30.0):
    pids = client.run(os.getpid)
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        busy = [w for w, tasks in client.processing().items() if tasks]
        if busy:
            os.kill(pids[busy[0]], signal.SIGKILL)
            return pids[busy[0]]
        time.sleep(0.02)
    raise AssertionError("no task started on the cluster")


@pytest.mark.slow
def test_killed_worker_computation_completes_or_fails_clearly(cluster):
    from distributed import wait

    data = dsa.ones((40, 2, 3), chunks=(1, 2, 3))
    lazy = dsa.map_blocks(_slow_block, data, dtype=float).sum()
    future = cluster.compute(lazy)
    killed = _kill_one_worker_when_busy(cluster)
    wait([future], timeout=120)
    try:
        value = future.result()
    except Exception as exc:  # distributed gives up on a task only after repeated worker deaths
        assert "KilledWorker" in type(exc).__name__ or "worker" in str(exc).lower()
    else:
        assert value == 40 * 6 * 2.0  # dask rescheduled the lost tasks: the full answer
    assert killed not in cluster.run(os.getpid).values()


@pytest.mark.slow
def test_killed_worker_during_export_leaves_no_partial_file(cluster, tmp_path):
    target = tmp_path / "result.nc"
    pr = _field(n=40).chunk({"time": 1})
    lazy = xr.apply_ufunc(_slow_block, pr, dask="parallelized", output_dtypes=[float], keep_attrs=True)
    outcome = {}

    def export():
        try:
            outcome["path"] = cw.to_netcdf(lazy, target)
        except BaseException as exc:  # recorded and checked below
            outcome["error"] = exc

    t = threading.Thread(target=export)
    t.start()
    _kill_one_worker_when_busy(cluster)
    t.join(180)
    assert not t.is_alive()
    if "error" in outcome:
        assert not target.exists()
    else:
        with xr.open_dataset(target) as ds:
            np.testing.assert_allclose(ds["pr"].values, 4.0)  # complete and right
    assert _leftovers(tmp_path) == []


# ------------------------------------------------------------------ exports: races, Ctrl-C, full disk
def _export_once(kind, path, barrier, results, n):
    from climwidgets.atomic import OutputExistsError

    barrier.wait()
    try:
        if kind == "csv":
            table = pd.DataFrame({"writer": [n]}, index=pd.Index(["upper"], name="basin"))
            cw.to_csv(table, path, overwrite=False)
        else:
            cw.to_netcdf(_field(value=float(n)), path, overwrite=False)
        results.put(("ok", n))
    except OutputExistsError:
        results.put(("exists", n))
    except BaseException as exc:  # pragma: no cover - reported by the assertion
        results.put((repr(exc), n))


@pytest.mark.parametrize("kind", ["csv", "netcdf"])
def test_concurrent_exports_without_overwrite_exactly_one_wins(tmp_path, kind):
    # N processes export to one path with overwrite=False: POSIX link(2) refuses an
    # existing name (POSIX.1-2017, link(): EEXIST), so exactly one export can create it and
    # every other one gets OutputExistsError; the winner's file is whole.
    import multiprocessing as mp

    ctx = mp.get_context("fork")
    n = 6
    path = tmp_path / ("table.csv" if kind == "csv" else "maps.nc")
    barrier, results = ctx.Barrier(n), ctx.Queue()
    procs = [ctx.Process(target=_export_once, args=(kind, path, barrier, results, i)) for i in range(n)]
    for p in procs:
        p.start()
    outcomes = [results.get(timeout=120) for _ in range(n)]
    for p in procs:
        p.join(30)
    assert sorted(k for k, _ in outcomes) == ["exists"] * (n - 1) + ["ok"], outcomes
    (winner,) = [i for k, i in outcomes if k == "ok"]
    if kind == "csv":
        from climwidgets.report.tables import read_csv, read_metadata

        assert read_csv(path)["writer"].tolist() == [winner]
        assert read_metadata(path)["url"] == "table.csv"  # its metadata file is the winner's too
    else:
        np.testing.assert_allclose(cw.open_precip(path).values, float(winner))
    assert _leftovers(tmp_path) == []


_INTERRUPTED_EXPORT = r"""
import sys, time
import dask.array as dsa, numpy as np, pandas as pd, xarray as xr
import climwidgets as cw
from climwidgets.report import netcdf

target, phase = sys.argv[1], sys.argv[2]

def slow(block):
    time.sleep(0.05)  # keeps the computation running long enough to interrupt it
    return block

n = 400
data = dsa.map_blocks(slow, dsa.ones((n, 4, 5), chunks=(1, 4, 5)), dtype=float)
if phase == "write":  # the interrupt arrives while the library writes the file
    data = np.ones((n, 4, 5))
    original = netcdf._write_dataset
    def slow_write(ds, tmp, encoding):
        original(ds, tmp, encoding)
        time.sleep(5)
    netcdf._write_dataset = slow_write
da = xr.DataArray(data, dims=("time", "lat", "lon"), name="pr", attrs={"units": "mm", "step": "day"},
                  coords={"time": pd.date_range("2001-01-01", periods=n), "lat": np.arange(4.0) - 30,
                          "lon": np.arange(5.0) - 140})
print("exporting", flush=True)
try:
    cw.to_netcdf(da, target, overwrite=True)
except KeyboardInterrupt:
    print("interrupted", flush=True)
    sys.exit(130)
print("finished", flush=True)
"""


@pytest.mark.parametrize("phase", ["compute", "write"])
def test_ctrl_c_during_netcdf_export_ends_cleanly_with_previous_file(tmp_path, phase):
    """SIGINT in a real process (as Ctrl-C sends it): no hang (a timeout), exit by the
    KeyboardInterrupt handler, the previous file byte for byte, no temporary left."""
    import subprocess
    import sys

    target = tmp_path / "maps.nc"
    cw.to_netcdf(_field(value=1.0), target)
    before = target.read_bytes()
    script = tmp_path / "export.py"
    script.write_text(_INTERRUPTED_EXPORT)
    env = dict(os.environ, PYTHONPATH=str(Path(cw.__file__).resolve().parent.parent))
    proc = subprocess.Popen(
        [sys.executable, str(script), str(target), phase],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )
    try:
        assert proc.stdout.readline().strip() == "exporting"
        time.sleep(1.5)  # inside the computation (20 s of blocks) or the slowed write
        proc.send_signal(signal.SIGINT)
        out, err = proc.communicate(timeout=90)
    finally:
        if proc.poll() is None:  # pragma: no cover - a hang: end it and fail below
            proc.kill()
            proc.communicate()
    assert proc.returncode == 130, (proc.returncode, err[-2000:])
    assert out.strip() == "interrupted"
    assert target.read_bytes() == before
    assert _leftovers(tmp_path) == []


def test_netcdf_hdf_error_on_a_full_disk_is_reported_as_disk_full(tmp_path, monkeypatch):
    # The netCDF library reports a full disk as "NetCDF: HDF error" (a RuntimeError, no
    # errno); the export checks the free space and says what happened.
    from climwidgets.atomic import OutputError
    from climwidgets.report import netcdf

    target = tmp_path / "maps.nc"
    cw.to_netcdf(_field(value=1.0), target)
    before = target.read_bytes()

    def hdf_error(ds, tmp, encoding):
        Path(tmp).write_bytes(b"\x89HDF half")
        raise RuntimeError("NetCDF: HDF error")

    monkeypatch.setattr(netcdf, "_write_dataset", hdf_error)
    monkeypatch.setattr(netcdf, "_free_bytes", lambda folder: 4096)
    with pytest.raises(OutputError) as info:
        cw.to_netcdf(_field(value=5.0), target, overwrite=True)
    err = info.value
    assert err.errno == errno.ENOSPC and isinstance(err, cw.InputError)
    assert str(target) in str(err) and "disk is full" in str(err) and "Fix: " in str(err)
    assert target.read_bytes() == before and _leftovers(tmp_path) == []
    # with room on the disk the same library error is not passed off as a full disk
    monkeypatch.setattr(netcdf, "_free_bytes", lambda folder: 10 * 2**30)
    with pytest.raises(RuntimeError, match="HDF error"):
        cw.to_netcdf(_field(value=5.0), target, overwrite=True)


@pytest.fixture
def small_tmpfs(tmp_path):
    """A real 1 MiB tmpfs, when this machine lets the tests mount one (root with
    CAP_SYS_ADMIN); skipped, saying so, where it does not."""
    import shutil
    import subprocess

    where = tmp_path / "small"
    where.mkdir()
    if os.geteuid() != 0 or shutil.which("mount") is None:
        pytest.skip("cannot mount a tmpfs here (not root); disk full is simulated in the tests above")
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=1m", "tmpfs", str(where)], capture_output=True)
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here ({done.stderr.decode().strip()}); disk full is simulated above")
    try:
        yield where
    finally:
        subprocess.run(["umount", "-l", str(where)], capture_output=True)


@pytest.mark.parametrize("kind", ["csv", "netcdf"])
def test_export_to_a_really_full_disk_says_so_and_keeps_the_previous_file(small_tmpfs, kind):
    from climwidgets.atomic import OutputError

    rng = np.random.default_rng(0)
    target = small_tmpfs / ("table.csv" if kind == "csv" else "maps.nc")
    small = pd.DataFrame({"x": [1.5]}) if kind == "csv" else _field(value=1.0)
    big = (
        pd.DataFrame({"x": rng.random(200_000)})
        if kind == "csv"
        else _field(n=24)
        .copy(data=rng.random((24, 2, 3)))
        .reindex(time=pd.date_range("2001-01-01", periods=24000, freq="h"), fill_value=0.5)
        .assign_attrs(units="mm", step="hour")
    )
    if kind == "netcdf":
        big = big.copy(data=rng.random(big.shape))  # incompressible: 1.1 MB even with zlib
    write = cw.to_csv if kind == "csv" else cw.to_netcdf
    write(small, target)
    before = target.read_bytes()
    with pytest.raises(OutputError) as info:
        write(big, target, overwrite=True)
    assert info.value.errno == errno.ENOSPC and str(target) in str(info.value)
    assert target.read_bytes() == before and _leftovers(small_tmpfs) == []


# ------------------------------------------------------------------ jobs: interrupted or killed mid-way
_SLOW_JOB = r"""
import json, sys, time
import numpy as np, pandas as pd, xarray as xr
from climwidgets import jobs
from climwidgets.report import html

folder, out, overwrite = sys.argv[1], sys.argv[2], sys.argv[3] == "1"
original = html.write_report

def slow_report(*args, **kwargs):  # the CSV, its metadata and the NetCDF are staged by now
    print("writing the report", flush=True)
    time.sleep(30)
    return original(*args, **kwargs)

html.write_report = slow_report
try:
    jobs.run_summary(f"{folder}/small.nc", f"{folder}/b.geojson", (7, 8), (1991, 1993), out, overwrite=overwrite,
                     figures=False)
except KeyboardInterrupt:
    print("interrupted", flush=True)
    sys.exit(130)
print("finished", flush=True)
"""


def _small_job_inputs(folder):
    import json

    time_ = pd.date_range("1991-01-01", "1993-12-31", freq="D")
    xr.DataArray(
        np.ones((time_.size, 2, 2)),
        dims=("time", "lat", "lon"),
        name="pr",
        coords={"time": time_, "lat": [10.25, 10.75], "lon": [-160.75, -160.25]},
        attrs={"units": "mm", "standard_name": "lwe_thickness_of_precipitation_amount"},
    ).to_dataset().to_netcdf(folder / "small.nc")
    ring = [[-161, 10], [-160, 10], [-160, 11], [-161, 11], [-161, 10]]
    (folder / "b.geojson").write_text(
        json.dumps(
            {
                "type": "FeatureCollection",
                "features": [
                    {
                        "type": "Feature",
                        "properties": {"name": "square"},
                        "geometry": {"type": "Polygon", "coordinates": [ring]},
                    }
                ],
            }
        )
    )


def _start_slow_job(tmp_path, out, overwrite):
    import subprocess
    import sys

    script = tmp_path / "job.py"
    script.write_text(_SLOW_JOB)
    env = dict(os.environ, PYTHONPATH=str(Path(cw.__file__).resolve().parent.parent))
    proc = subprocess.Popen(
        [sys.executable, str(script), str(tmp_path), str(out), "1" if overwrite else "0"],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=env,
    )
    line = proc.stdout.readline().strip()
    if line != "writing the report":  # pragma: no cover - reported with the child's errors
        proc.kill()
        raise AssertionError(f"the job did not reach the report: {line!r} {proc.communicate()[1][-2000:]}")
    return proc


def _set(folder):
    return {p.name: p.read_bytes() for p in folder.iterdir()}


@pytest.mark.parametrize("how", ["ctrl_c", "kill"])
def test_a_job_interrupted_or_killed_mid_way_leaves_the_previous_set(tmp_path, how):
    from climwidgets import jobs

    _small_job_inputs(tmp_path)
    out = tmp_path / "out"
    jobs.run_summary(tmp_path / "small.nc", tmp_path / "b.geojson", (7, 8), (1991, 1993), out, figures=False)
    before = _set(out)
    proc = _start_slow_job(tmp_path, out, overwrite=True)
    try:
        proc.send_signal(signal.SIGINT if how == "ctrl_c" else signal.SIGKILL)
        out_text, err = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:  # pragma: no cover - a hang
            proc.kill()
    if how == "ctrl_c":
        assert proc.returncode == 130 and out_text.strip() == "interrupted", err[-2000:]
        assert _set(out) == before  # every file as it was, and no staging folder left
    else:
        assert proc.returncode == -signal.SIGKILL
        left = [n for n in _set_names(out) if n.startswith(".cw-stage.")]
        assert len(left) == 1  # a killed process cleans nothing: its staging folder stays ...
        assert {p.name: p.read_bytes() for p in out.iterdir() if p.is_file()} == before  # ... beside the old set
        jobs.run_summary(
            tmp_path / "small.nc", tmp_path / "b.geojson", (7, 8), (1991, 1993), out, overwrite=True, figures=False
        )
        assert not any(n.startswith(".") for n in _set_names(out))  # ... until the next run removes it


def _set_names(folder):
    return sorted(p.name for p in folder.iterdir())


def test_a_job_killed_before_its_first_outputs_needs_no_overwrite_next_time(tmp_path):
    from climwidgets import jobs

    _small_job_inputs(tmp_path)
    out = tmp_path / "out"
    proc = _start_slow_job(tmp_path, out, overwrite=False)
    proc.kill()
    proc.communicate(timeout=60)
    assert all(n.startswith(".cw-stage.") for n in _set_names(out))  # no output in place: no partial set
    result = jobs.run_summary(
        tmp_path / "small.nc", tmp_path / "b.geojson", (7, 8), (1991, 1993), out, figures=False
    )  # without overwrite
    assert _set_names(out) == [
        "basin_report.html",
        "basin_summary.csv",
        "basin_summary.csv-metadata.json",
        "seasonal_share_normals.nc",
    ]
    assert all(p.is_file() for p in result.paths.values())
