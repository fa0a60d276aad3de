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
    return xr.DataArray(np.full((n, 2, 3), value), dims=("time", "lat", "lon"),
                        coords={"time": time, "lat": LAT, "lon": LON},
                        attrs={"units": "mm", "step": "month"}, name="pr")


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


@pytest.mark.parametrize("exc", [OSError(errno.ENOSPC, "No space left on device"),
                                 PermissionError(errno.EACCES, "Permission denied")], ids=["disk_full", "permission"])
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


@pytest.mark.parametrize("exc", [OSError(errno.ENOSPC, "No space left on device"),
                                 PermissionError(errno.EACCES, "Permission denied")], ids=["disk_full", "permission"])
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
    ds = xr.DataArray(values, dims=("time", "lat", "lon"), coords={"time": time, "lat": [10.5], "lon": [-160.5]},
                      name="pr", attrs={"units": "mm"}).to_dataset()
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
    (tmp_path / "b.geojson").write_text(json.dumps({"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"name": "square"}, "geometry": {"type": "Polygon", "coordinates": square}}]}))
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


@pytest.mark.parametrize("case", ["monthly_stamps_daily_bounds", "fill_not_declared", "zarr_missing_chunk",
                                  "declared_2e6_grid", "glob_fill_in_later_file"])
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
    (tmp_path / "b.geojson").write_text(json.dumps({"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"name": "square"}, "geometry": {"type": "Polygon", "coordinates": square}}]}))
    code = cli.main(["summary", "--data", source, "--basins", str(tmp_path / "b.geojson"), "--months", "1",
                     "--baseline", "2001-2001", "--out", str(tmp_path / "out")])
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
