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
        atomic_write_file(path, lambda fh: fh.write(f"writer {n}\n".encode() * 1000), overwrite=False,
                          what="test output")
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
