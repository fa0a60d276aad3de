"""Tests of climwidgets/provenance.py: the history line every result carries."""

import re

import numpy as np
import xarray as xr

import climwidgets as cw
from climwidgets.provenance import history_line, with_history

# ISO 8601 UTC time stamp, then the package and its version, then the call.
LINE = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ climwidgets (?P<version>\S+): (?P<call>.+)$")


def test_history_line_layout():
    line = history_line("seasonal_fraction", months=(7, 8), how="ratio_of_sums", min_fraction=0.8, n=3)
    m = LINE.match(line)
    assert m is not None, line
    assert m["version"] == cw.__version__
    assert m["call"] == "seasonal_fraction(months=(7, 8), how='ratio_of_sums', min_fraction=0.8, n=3)"


def test_floats_are_short_and_nested_sequences_readable():
    line = history_line("f", x=1 / 3, pairs=[(1.5, 2), (3, "a")])
    assert line.endswith("f(x=0.333333, pairs=((1.5, 2), (3, 'a')))")


def test_with_history_carries_the_input_history_forward():
    source = xr.DataArray(np.zeros(2), dims="time", attrs={"history": "first line"})
    out = with_history(xr.DataArray(np.ones(2), dims="time"), "step_two", source.attrs, k=1)
    first, second = out.attrs["history"].split("\n")
    assert first == "first line" and second.endswith("step_two(k=1)")
    assert source.attrs == {"history": "first line"}  # the input is left as it was


def test_with_history_without_a_source_starts_the_chain():
    out = with_history(xr.DataArray(np.ones(2), dims="time"), "open_precip", None, source="a.nc")
    assert "\n" not in out.attrs["history"] and LINE.match(out.attrs["history"])


def test_public_results_carry_a_history_line():
    time = xr.date_range("2001-01-01", periods=365 * 2, freq="D")
    pr = xr.DataArray(
        np.ones((time.size, 1, 1)),
        dims=("time", "lat", "lon"),
        coords={"time": time, "lat": [0.0], "lon": [0.0]},
        attrs={"units": "mm", "step": "day"},
    )
    last = cw.annual_totals(pr).attrs["history"].splitlines()[-1]
    assert LINE.match(last) and "annual_totals(" in last
