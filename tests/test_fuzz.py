"""A short, reproducible fuzzing run of the loader.

Hypothesis mutates a valid small NetCDF file: it truncates the bytes, overwrites byte
runs, or rewrites attributes and coordinates through netCDF4 before the file is read.
Whatever comes out, ``cw.open_precip`` (and reading the values) must either succeed with
depths >= 0 in mm or raise a ``cw.InputError``; any other exception is a crash.
The budget is fixed (100 examples each, derandomize=True), so CI runs the same inputs each
time.
"""

from __future__ import annotations

import os
import tempfile
import warnings

import netCDF4
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import climwidgets as cw

from .corpus.make_corpus import _dataset, _write, field_values

# CW_FUZZ_EXAMPLES=2000 CW_FUZZ_RANDOM=1 runs a longer, randomized search by hand
FUZZ = settings(
    max_examples=int(os.environ.get("CW_FUZZ_EXAMPLES", 100)),
    deadline=None,
    derandomize=not os.environ.get("CW_FUZZ_RANDOM"),
    database=None,
    suppress_health_check=[HealthCheck.too_slow],
)
_SEEDS = {}


def seed_bytes(fmt: str) -> bytes:
    """A valid small file (deflate-chunked NetCDF-4 or NetCDF-3 classic), made once."""
    if fmt not in _SEEDS:
        with tempfile.TemporaryDirectory() as d:
            ds = _dataset(field_values(12) + 1.0)
            ds["time_bnds"] = (("time", "nv"), np.stack([np.arange(12.0), np.arange(12.0) + 1], axis=1))
            ds["time"].attrs["bounds"] = "time_bnds"
            enc = {"pr": {"zlib": True, "chunksizes": (4, 3, 4)}} if fmt == "NETCDF4" else {}
            path = _write(ds, os.path.join(d, "seed.nc"), fmt=fmt, encoding=enc)
            _SEEDS[fmt] = open(path, "rb").read()
    return _SEEDS[fmt]


def load(path):
    """What a user does: open, then read the values."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # dependencies may warn about odd files; only errors count here
        pr = cw.open_precip(path)
        values = pr.values
    finite = values[np.isfinite(values)]
    assert pr.attrs["units"] == "mm"
    assert np.all(finite >= 0.0), "a file that opens must give depths >= 0"


def run_or_input_error(path):
    before = open(path, "rb").read()
    try:
        load(path)
    except cw.InputError as exc:
        assert "Fix: " in str(exc) or exc.fix is None  # every message with a remedy says so
        assert os.path.basename(path) in str(exc) or exc.source is None
    assert open(path, "rb").read() == before, "the input file was modified"


byte_edits = st.lists(st.tuples(st.floats(0.0, 1.0), st.binary(min_size=1, max_size=8)), min_size=1, max_size=6)


@pytest.mark.slow
@given(
    fmt=st.sampled_from(["NETCDF4", "NETCDF3_CLASSIC"]),
    cut=st.one_of(st.none(), st.floats(0.0, 1.0)),
    edits=st.one_of(st.just([]), byte_edits),
)
@FUZZ
def test_mutated_bytes_give_input_error_or_open(tmp_path_factory, fmt, cut, edits):
    data = bytearray(seed_bytes(fmt))
    for where, chunk in edits:
        at = int(where * (len(data) - 1))
        data[at : at + len(chunk)] = chunk
    if cut is not None:
        data = data[: int(cut * len(data))]
    path = tmp_path_factory.mktemp("fuzz") / "mutated.nc"
    path.write_bytes(bytes(data))
    run_or_input_error(str(path))


attr_values = st.one_of(
    st.text(max_size=12),
    st.sampled_from(
        [
            "mm",
            "kg m-2 s-1",
            "m",
            "mm/month",
            "days since 1-1-1",
            "hours since 2001",
            "noleap",
            "360_day",
            "bogus",
            "",
            "degrees_north",
            "degrees_east",
        ]
    ),
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(-(2**31), 2**31 - 1),
)
targets = st.sampled_from(
    [
        ("pr", "units"),
        ("pr", "scale_factor"),
        ("pr", "add_offset"),
        ("pr", "missing_value"),
        ("pr", "standard_name"),
        ("time", "units"),
        ("time", "calendar"),
        ("time", "bounds"),
        ("lat", "units"),
        ("lon", "units"),
        ("lat", "standard_name"),
        ("lon", "bounds"),
    ]
)
coordinate_edits = st.sampled_from(
    [
        "none",
        "lat_nan",
        "lat_huge",
        "lon_repeat",
        "time_repeat",
        "time_reverse",
        "time_nan",
        "data_negative",
        "data_inf",
        "data_all_nan",
    ]
)


@pytest.mark.slow
@given(changes=st.lists(st.tuples(targets, attr_values), max_size=3), edit=coordinate_edits)
@FUZZ
def test_mutated_attributes_give_input_error_or_open(tmp_path_factory, changes, edit):
    path = tmp_path_factory.mktemp("fuzz") / "attrs.nc"
    path.write_bytes(seed_bytes("NETCDF4"))
    with netCDF4.Dataset(path, "a") as f:
        f.set_auto_maskandscale(False)
        for (var, name), value in changes:
            try:
                f[var].setncattr(name, value)
            except (TypeError, ValueError, AttributeError, RuntimeError):
                pass  # netCDF4 refuses some values outright: nothing to test then
        if edit == "lat_nan":
            f["lat"][1] = np.nan
        elif edit == "lat_huge":
            f["lat"][0] = 1e6
        elif edit == "lon_repeat":
            f["lon"][1] = f["lon"][0]
        elif edit == "time_repeat":
            f["time"][3] = f["time"][2]
        elif edit == "time_reverse":
            f["time"][:] = f["time"][::-1]
        elif edit == "time_nan":
            f["time"][5] = np.nan
        elif edit == "data_negative":
            f["pr"][2, 1, 1] = -50.0
        elif edit == "data_inf":
            f["pr"][2, 1, 1] = np.inf
        elif edit == "data_all_nan":
            f["pr"][:] = np.nan
    run_or_input_error(str(path))
