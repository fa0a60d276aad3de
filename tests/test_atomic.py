"""The one atomic writer: exclusive creation, no stray temporaries, stale ones cleaned."""

from __future__ import annotations

import multiprocessing as mp
import os
import time

import pytest

from climwidgets.atomic import STALE_AFTER_S, OutputExistsError, atomic_write, atomic_write_file


def _writer(path, barrier, results, n):
    barrier.wait()
    try:
        atomic_write_file(
            path, lambda fh: fh.write(f"writer {n}\n".encode() * 1000), overwrite=False, what="test output"
        )
        results.put(("ok", n))
    except OutputExistsError:
        results.put(("exists", n))
    except BaseException as exc:  # pragma: no cover - reported below
        results.put((repr(exc), n))


def test_concurrent_writers_without_overwrite_exactly_one_wins(tmp_path):
    # POSIX link(2) fails with EEXIST when the name exists (POSIX.1-2017, link()), so
    # only one of the writers can create the file; every other one is told it exists.
    ctx = mp.get_context("fork")
    n = 8
    path = tmp_path / "out.csv"
    barrier, results = ctx.Barrier(n), ctx.Queue()
    procs = [ctx.Process(target=_writer, args=(path, barrier, results, i)) for i in range(n)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(60)
    outcomes = [results.get(timeout=5) for _ in range(n)]
    winners = [i for kind, i in outcomes if kind == "ok"]
    assert len(winners) == 1, outcomes
    assert sorted(kind for kind, _ in outcomes) == ["exists"] * (n - 1) + ["ok"]
    assert path.read_text() == f"writer {winners[0]}\n" * 1000  # the winner's whole content
    assert [p.name for p in tmp_path.iterdir()] == ["out.csv"]  # no temporary left behind


def test_existing_file_kept_without_overwrite_and_replaced_with_it(tmp_path):
    path = tmp_path / "a.txt"
    path.write_text("old")
    with pytest.raises(OutputExistsError):
        atomic_write_file(path, lambda fh: fh.write(b"new"), overwrite=False)
    assert path.read_text() == "old"
    atomic_write_file(path, lambda fh: fh.write(b"new"), overwrite=True)
    assert path.read_text() == "new"


def test_failed_write_leaves_previous_file_and_no_temporary(tmp_path):
    path = tmp_path / "a.txt"
    path.write_text("old")

    def boom(tmp):
        tmp.write_text("half")
        raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        atomic_write(path, True, boom, "test output")
    assert path.read_text() == "old"
    assert [p.name for p in tmp_path.iterdir()] == ["a.txt"]


def test_stale_temporaries_of_a_killed_run_are_cleaned_fresh_ones_kept(tmp_path):
    path = tmp_path / "report.html"
    stale = tmp_path / ".report.html.abc123.part"
    fresh = tmp_path / ".report.html.def456.part"  # another writer may be busy with it
    other = tmp_path / ".notes.txt.xyz.part"  # belongs to another output
    for p in (stale, fresh, other):
        p.write_text("partial")
    old = time.time() - STALE_AFTER_S - 60
    os.utime(stale, (old, old))
    os.utime(other, (old, old))
    atomic_write_file(path, lambda fh: fh.write(b"<html></html>"), overwrite=False)
    names = sorted(p.name for p in tmp_path.iterdir())
    assert names == sorted([".notes.txt.xyz.part", ".report.html.def456.part", "report.html"])


def test_new_file_gets_the_umask_mode(tmp_path):
    mask = os.umask(0o022)
    try:
        path = atomic_write_file(tmp_path / "m.txt", lambda fh: fh.write(b"x"), overwrite=False)
    finally:
        os.umask(mask)
    assert path.stat().st_mode & 0o777 == 0o644


def test_disk_full_is_an_output_error_naming_the_path(tmp_path):
    import errno

    from climwidgets.atomic import OutputError
    from climwidgets.errors import InputError

    def full(tmp):
        tmp.write_bytes(b"half")
        raise OSError(errno.ENOSPC, "No space left on device")

    with pytest.raises(OutputError) as info:
        atomic_write(tmp_path / "a.nc", False, full, "the NetCDF export")
    err = info.value
    assert isinstance(err, InputError) and isinstance(err, OSError) and err.errno == errno.ENOSPC
    assert str(tmp_path / "a.nc") in str(err) and "disk is full" in str(err) and "Fix: " in str(err)
    assert list(tmp_path.iterdir()) == []


def test_temporaries_of_a_writer_that_is_gone_are_cleaned_at_once(tmp_path):
    import subprocess
    import sys

    from climwidgets.atomic import _host

    gone = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    dead_pid = int(gone.stdout)
    dead = tmp_path / f".a.csv.{_host()}-{dead_pid}.x1.part"
    alive = tmp_path / f".a.csv.{_host()}-{os.getpid()}.x2.part"  # a live writer's, however old
    elsewhere = tmp_path / f".a.csv.0000beef-{dead_pid}.x3.part"  # another host's: only by age
    mine = tmp_path / ".a.csv.notes.txt"  # not a temporary name: never touched
    for p in (dead, alive, elsewhere, mine):
        p.write_text("partial")
    old = time.time() - 2 * STALE_AFTER_S
    os.utime(alive, (old, old))
    atomic_write_file(tmp_path / "a.csv", lambda fh: fh.write(b"x"), overwrite=False)
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted([alive.name, elsewhere.name, mine.name, "a.csv"])


def test_staged_outputs_move_all_or_none(tmp_path):
    from climwidgets.atomic import staged_outputs

    out = tmp_path / "out"
    with staged_outputs(out, overwrite=False) as stage:
        (stage / "a.csv").write_text("a1")
        (stage / "b.nc").write_text("b1")
    assert sorted(p.name for p in out.iterdir()) == ["a.csv", "b.nc"]
    # a failure part-way: the previous set stays, nothing partial, no staging folder
    with pytest.raises(RuntimeError):
        with staged_outputs(out, overwrite=True) as stage:
            (stage / "a.csv").write_text("a2")
            raise RuntimeError("the report failed")
    assert {p.name: p.read_text() for p in out.iterdir()} == {"a.csv": "a1", "b.nc": "b1"}
    # without overwrite one existing name refuses the whole set
    with pytest.raises(OutputExistsError, match="b.nc"):
        with staged_outputs(out, overwrite=False) as stage:
            (stage / "new.csv").write_text("n")
            (stage / "b.nc").write_text("b2")
    assert {p.name: p.read_text() for p in out.iterdir()} == {"a.csv": "a1", "b.nc": "b1"}
    with staged_outputs(out, overwrite=True) as stage:
        (stage / "a.csv").write_text("a3")
        (stage / "b.nc").write_text("b3")
    assert {p.name: p.read_text() for p in out.iterdir()} == {"a.csv": "a3", "b.nc": "b3"}


def test_a_failed_move_puts_the_previous_set_back(tmp_path, monkeypatch):
    from climwidgets import atomic
    from climwidgets.atomic import staged_outputs

    for name in ("a.csv", "b.nc"):
        (tmp_path / name).write_text("old " + name)
    original = atomic._move_into_place

    def second_fails(tmp, path, overwrite):
        if path.name == "b.nc":
            raise OSError(28, "No space left on device")
        original(tmp, path, overwrite)

    monkeypatch.setattr(atomic, "_move_into_place", second_fails)
    with pytest.raises(OSError):
        with staged_outputs(tmp_path, overwrite=True) as stage:
            (stage / "a.csv").write_text("new")
            (stage / "b.nc").write_text("new")
    assert {p.name: p.read_text() for p in tmp_path.iterdir()} == {"a.csv": "old a.csv", "b.nc": "old b.nc"}


def test_stale_staging_folder_of_a_killed_run_is_removed(tmp_path):
    import subprocess
    import sys

    from climwidgets.atomic import _host, staged_outputs

    dead_pid = int(
        subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True).stdout
    )
    left = tmp_path / f".cw-stage.{_host()}-{dead_pid}.abc.part"
    left.mkdir()
    (left / "basin_summary.csv").write_text("half a set")
    users = tmp_path / ".cw-stage-notes"  # not our pattern
    users.mkdir()
    with staged_outputs(tmp_path, overwrite=False) as stage:
        (stage / "x.csv").write_text("x")
    assert sorted(p.name for p in tmp_path.iterdir()) == [".cw-stage-notes", "x.csv"]
