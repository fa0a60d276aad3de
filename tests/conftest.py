"""Fixtures shared across the suite."""

import gc
import sys

import pytest

from climwidgets import demo


@pytest.fixture(scope="session")
def demo_files(tmp_path_factory):
    """The invented demo at its small "test" size, generated once per test session.

    Tests must treat these files as read-only (they are shared).
    """
    return demo.generate(tmp_path_factory.getbasetemp() / "cw_demo_test", quiet=True, size="test")


_TESTS_SINCE_FULL_COLLECTION = [0]
FULL_COLLECTION_EVERY = 25  # tests; a full collection of the suite's heap takes ~0.5 s


@pytest.fixture(autouse=True)
def _cycles_collected_in_the_main_thread():
    """Once a test has used distributed, collect reference cycles only here, between tests.

    The cluster tests leave threads behind (distributed's event loop, a killed worker's
    process watcher).  Python's cycle collector runs in whichever thread happens to
    allocate, so such a thread could finalize a netCDF file of a test while the main thread
    reads HDF5, which is not thread-safe: a segmentation fault seen about once in three full
    runs in tests/test_fuzz.py.  With automatic collection off during each test and
    collections made here, files are only ever closed on the main thread.  The young
    generations are collected after every test (cheap: most cycles die young) and the
    whole heap every FULL_COLLECTION_EVERY tests (a full collection after every test
    doubled the suite's time).
    """
    if "distributed" not in sys.modules:
        yield
        return
    gc.disable()
    try:
        yield
    finally:
        _TESTS_SINCE_FULL_COLLECTION[0] += 1
        if _TESTS_SINCE_FULL_COLLECTION[0] >= FULL_COLLECTION_EVERY:
            _TESTS_SINCE_FULL_COLLECTION[0] = 0
            gc.collect()
        else:
            gc.collect(1)
        gc.enable()
