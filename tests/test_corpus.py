"""cw.open_precip on the corpus of malformed and awkward inputs (tests/corpus/make_corpus.py).

Every case either opens with the stated values or raises the stated ``cw.InputError``
subclass whose message names the file, says what is wrong and suggests a fix; no other
exception escapes, no case hangs (each runs under a generous per-case limit), and no input
file changes (checksums before and after).
"""

from __future__ import annotations

import hashlib
import os
import threading
from pathlib import Path

import numpy as np
import pytest

import climwidgets as cw
from climwidgets.errors import DataValueError
from climwidgets.io.timeaxis import CANONICAL_STEPS

from .corpus.make_corpus import CASES, HUGE_SHAPE, Opens, Raises, build_corpus, markdown_table

BIG = 64 * 2**20
CASE_TIMEOUT = 120  # seconds: a guard against hangs (a FIFO, a lock), not a speed check


def _within(seconds, func):
    """``func()`` in a daemon thread: its value or its exception, or a failure if it hangs."""
    box = {}

    def run():
        try:
            box["value"] = func()
        except BaseException as exc:  # handed to the test below
            box["error"] = exc

    worker = threading.Thread(target=run, daemon=True)
    worker.start()
    worker.join(seconds)
    assert not worker.is_alive(), f"no answer within {seconds} s (a hang)"
    if "error" in box:
        raise box["error"]
    return box.get("value")


def fingerprint(path: Path):
    """sha256 of the file; for files over 64 MB (the sparse one) size, mtime and the hashes
    of its first and last MB, so that the check does not read gigabytes of holes."""
    st = path.stat()
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        if st.st_size <= BIG:
            h.update(fh.read())
        else:
            h.update(fh.read(2**20))
            fh.seek(-(2**20), os.SEEK_END)
            h.update(fh.read())
    return st.st_size, st.st_mtime_ns, h.hexdigest()


@pytest.fixture(scope="session")
def corpus(tmp_path_factory):
    folder = tmp_path_factory.mktemp("corpus")
    built = build_corpus(folder)
    return {name: (case, source, {p: fingerprint(p) for p in files}) for name, (case, source, files) in built.items()}


def test_corpus_is_large_enough_and_names_are_unique():
    names = [c.name for c in CASES]
    assert len(names) >= 30 and len(set(names)) == len(names)


@pytest.mark.parametrize("name", [c.name for c in CASES])
def test_case(corpus, name):
    case, source, prints = corpus[name]
    expect = case.expect
    if isinstance(expect, Opens):
        pr = _within(CASE_TIMEOUT, lambda: cw.open_precip(source))
        assert pr.attrs["units"] == "mm" and pr.attrs["step"] in CANONICAL_STEPS
        _within(CASE_TIMEOUT, lambda: expect.check(pr))
    else:
        assert isinstance(expect, Raises)
        with pytest.raises(cw.InputError) as info:
            # an error may only surface when values are read; it must still be ours
            _within(CASE_TIMEOUT, lambda: cw.open_precip(source).values)
        err = info.value
        assert isinstance(err, expect.error), f"{type(err).__name__}: {err}"
        text = str(err)
        for word in expect.words:
            assert word in text, f"{word!r} not in: {text}"
        named = [Path(p).name for p in prints] + [Path(str(source)).name]
        assert any(n in text for n in named), f"the message names no file: {text}"
        assert "Fix: " in text, f"no fix suggested: {text}"
        assert err.__cause__ is None  # no chained traceback from inside a dependency
    for path, before in prints.items():
        assert fingerprint(path) == before, f"{path} changed"


def test_negative_values_found_while_reading_name_the_file(corpus):
    """With validate=False the negative guard runs chunk by chunk as data are read."""
    case, source, prints = corpus["negative"]
    pr = cw.open_precip(source, validate=False)
    with pytest.raises(DataValueError) as info:
        pr.values
    assert "negative.nc" in str(info.value) and "Fix: " in str(info.value)
    assert all(fingerprint(p) == v for p, v in prints.items())


def test_huge_sparse_file_is_not_read_at_open(corpus, monkeypatch):
    """Opening reads coordinates only: count reads of the data variable through xarray's backend."""
    from xarray.backends import netCDF4_

    case, source, _ = corpus["huge_sparse"]
    reads = []
    original = netCDF4_.NetCDF4ArrayWrapper.__getitem__

    def spy(self, key):
        if self.variable_name == "pr":
            reads.append(key)
        return original(self, key)

    monkeypatch.setattr(netCDF4_.NetCDF4ArrayWrapper, "__getitem__", spy)
    pr = cw.open_precip(source)
    assert reads == [] and pr.shape == HUGE_SHAPE
    one = pr.isel(time=0, lat=0, lon=slice(0, 3)).values
    assert len(reads) >= 1 and np.all(one == 0.0)


def test_packed_file_gives_the_same_values_on_both_readers(corpus, monkeypatch):
    from climwidgets.io import loader

    case, source, _ = corpus["packed_int16"]
    direct = cw.open_precip(source)
    monkeypatch.setattr(loader, "DIRECT_CHUNK_READS", False)
    backend = cw.open_precip(source)
    assert direct.attrs["reader"] != backend.attrs["reader"]
    np.testing.assert_array_equal(direct.values, backend.values)


def test_readme_table_lists_every_case():
    readme = (Path(__file__).parent / "corpus" / "README.md").read_text()
    for line in markdown_table().splitlines()[2:]:
        assert line in readme, f"README table is missing or out of date for: {line}"


# ------------------------------------------------------------------ the command line on bad basins, folders, options
from .corpus.make_corpus import JOB_CASES, build_job_corpus, job_markdown_table  # noqa: E402

CASE_TIMEOUT_S = 120  # generous for 2 shared cores; a hang shows as a failure, not a stuck run


@pytest.fixture(scope="session")
def job_corpus(tmp_path_factory):
    folder = tmp_path_factory.mktemp("job_corpus")
    built = build_job_corpus(folder)
    return {name: (case, argv, {p: fingerprint(p) for p in files}) for name, (case, argv, files) in built.items()}


def _run_cli(argv, timeout):
    """``climwidgets ARGV`` in-process on a worker thread: (exit code, stdout, stderr), or a
    failure when it does not end within ``timeout`` seconds."""
    import contextlib
    import io
    import threading

    from climwidgets import cli

    result, out, err = {}, io.StringIO(), io.StringIO()

    def target():
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            result["code"] = cli.main([str(a) for a in argv])

    worker = threading.Thread(target=target, daemon=True)
    worker.start()
    worker.join(timeout)
    assert not worker.is_alive(), f"climwidgets {' '.join(map(str, argv))} did not end within {timeout} s"
    return result["code"], out.getvalue(), err.getvalue()


@pytest.mark.parametrize("name", [c.name for c in JOB_CASES])
def test_job_case(job_corpus, name):
    case, argv, prints = job_corpus[name]
    code, out, err = _run_cli(argv, CASE_TIMEOUT_S)
    assert code == case.exit_code, err
    if code == 0:
        assert [Path(p).name for p in out.splitlines()] == [
            "basin_summary.csv",
            "seasonal_share_normals.nc",
            "basin_report.html",
        ]
    else:
        assert out == ""
        last = err.strip().splitlines()[-1]
        assert "Traceback" not in err and "internal error" not in err, err
        for word in case.words:
            assert word in last, f"{word!r} not in: {last}"
        named = list(case.names) or [Path(p).name for p in prints] + [Path(str(a)).name for a in argv if "/" in str(a)]
        assert any(n in last for n in named), f"the message names neither file nor option: {last}"
        if not any(n.startswith("--") for n in case.names):  # argparse's own lines end with the expected kind
            assert "Fix: " in last, f"no fix suggested: {last}"
    for path, before in prints.items():
        assert fingerprint(path) == before, f"{path} changed"


def test_readme_table_lists_every_job_case():
    readme = (Path(__file__).parent / "corpus" / "README.md").read_text()
    for line in job_markdown_table().splitlines()[2:]:
        assert line in readme, f"README table is missing or out of date for: {line}"


def test_variable_shorter_than_time_reads_the_same_on_both_readers(corpus, monkeypatch):
    """Records never written are missing on the direct reader and on xarray's backend alike
    (the netCDF library pads them with its default fill, which must not become a depth)."""
    from climwidgets.io import loader

    case, source, _ = corpus["int16_shorter_than_time"]
    direct = cw.open_precip(source)
    monkeypatch.setattr(loader, "DIRECT_CHUNK_READS", False)
    backend = cw.open_precip(source)
    assert direct.attrs["reader"] != backend.attrs["reader"]
    np.testing.assert_array_equal(direct.values, backend.values)
    case.expect.check(backend)
