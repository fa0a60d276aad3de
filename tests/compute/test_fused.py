"""The fused climatology pass (compute/_fused.py) against the plain resample/groupby path.

The plain path (xarray's resample and groupby on float64 mm) is the reference: the fused
path must give the same monthly totals to float32 rounding (its sums of at most one month
of steps run in the stored float32; 1e-6 relative is float32's 2**-23 ≈ 1.2e-7 per
addition times the few dozen additions of a month), and exactly the same annual maxima,
missing values, coordinates and attrs.
"""

import collections

import dask
import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute import _fused
from climwidgets.compute.bundle import climatology_bundle
from climwidgets.errors import DataValueError


def _without_history(attrs):
    return {k: v for k, v in attrs.items() if k != "history"}


def _write(path, years=3, chunks=(30, 4, 5), missing=False, fill=None, scale=1.0, units="mm", negative=None):
    t = pd.date_range("2001-01-01", f"{2000 + years}-12-31", freq="D")
    rng = np.random.default_rng(7)
    data = rng.gamma(0.6, 5.0, size=(t.size, 4, 5)).astype("f4")
    data[rng.random(data.shape) < 0.5] = 0.0
    if missing:
        data[rng.random(data.shape) < 0.002] = np.nan  # scattered missing days
        data[400:450, 1, 2] = np.nan  # a 50-day gap in one cell: that year's maximum is missing
    if negative is not None:
        data[100, 0, 0] = negative
    data = data / np.float32(scale)
    enc = {"chunksizes": chunks, "zlib": True}
    if fill is not None:
        data = np.where(np.isnan(data), np.float32(fill), data)
        enc["_FillValue"] = None  # no _FillValue attribute: the loader's fill heuristics apply
    ds = xr.Dataset(
        {"pr": (("time", "lat", "lon"), data, {"units": units, "standard_name": "precipitation_amount"})},
        coords={
            "time": t,
            "lat": ("lat", np.arange(4.0), {"units": "degrees_north"}),
            "lon": ("lon", np.arange(5.0), {"units": "degrees_east"}),
        },
    )
    ds.to_netcdf(path, encoding={"pr": enc})
    return path


def _both(pr, **kw):
    fused = climatology_bundle(pr, compute=True, **kw)
    _fused.ENABLED = False
    try:
        plain = climatology_bundle(pr, compute=True, **kw)
    finally:
        _fused.ENABLED = True
    return fused, plain


def _assert_same(fused, plain):
    assert set(fused.data_vars) == set(plain.data_vars)
    for name in plain.data_vars:
        a, b = fused[name], plain[name]
        assert a.dims == b.dims and a.dtype == b.dtype, name
        xr.testing.assert_identical(a.coords.to_dataset(), b.coords.to_dataset())
        assert _without_history(a.attrs) == _without_history(b.attrs), name
        np.testing.assert_array_equal(np.isnan(a.values), np.isnan(b.values), err_msg=name)
        if name.startswith("annual_max"):
            np.testing.assert_array_equal(a.values, b.values, err_msg=name)  # a maximum has no rounding
        else:
            np.testing.assert_allclose(a.values, b.values, rtol=1e-6, atol=1e-9, equal_nan=True, err_msg=name)


@pytest.mark.parametrize("chunks", [{"time": 90}, {"time": 17}, {"time": 365, "lat": 2, "lon": 3}, "auto"])
@pytest.mark.parametrize("year_start,months", [(1, (7, 8)), (10, (11, 12, 1, 2, 3))])
def test_fused_matches_plain_path(tmp_path, chunks, year_start, months):
    pr = cw.open_precip(_write(tmp_path / "d.nc", missing=True), chunks=chunks, validate=False)
    assert _fused.applicable(pr, "day", (1,))
    fused, plain = _both(pr, months=months, baseline=(2001, 2003), year_start=year_start, maxima_days=(1,))
    _assert_same(fused, plain)
    assert np.isnan(plain["annual_max_1day"].sel(lat=1, lon=2)).any()  # the gap is seen by both


def test_fused_reads_stored_float32_and_converts_the_sums(tmp_path, monkeypatch):
    """Rates in kg m-2 s-1: the factor 86400 is applied to monthly sums, never to daily float64 copies."""
    seen = []
    original = _fused._depth_block

    def spy(block, *args):
        seen.append(np.asarray(block).dtype)
        return original(block, *args)

    monkeypatch.setattr(_fused, "_depth_block", spy)
    pr = cw.open_precip(_write(tmp_path / "d.nc", scale=86400.0, units="kg m-2 s-1"), validate=False)
    fused, plain = _both(pr, baseline=(2001, 2003))
    assert seen and set(seen) == {np.dtype("float32")}
    _assert_same(fused, plain)


def test_fused_applies_the_loaders_fill_heuristics(tmp_path):
    pr = cw.open_precip(_write(tmp_path / "d.nc", missing=True, fill=-9999.0), validate=False)
    assert "missing_value_heuristics" in pr.attrs
    fused, plain = _both(pr, baseline=(2001, 2003))
    _assert_same(fused, plain)
    assert np.isnan(fused["monthly_totals"]).any()


def test_fused_refuses_negative_depths_and_zeroes_tiny_ones(tmp_path):
    pr = cw.open_precip(_write(tmp_path / "bad.nc", negative=-5.0), validate=False)
    with pytest.raises(DataValueError, match="negative precipitation"):
        climatology_bundle(pr, compute=True)
    pr = cw.open_precip(_write(tmp_path / "tiny.nc", negative=-0.001), validate=False)
    fused, plain = _both(pr, baseline=(2001, 2003))
    _assert_same(fused, plain)


def test_fused_on_converted_values_when_the_array_was_changed(tmp_path):
    """Eager validation or user arithmetic changes the dask array: the fused pass reduces it as given."""
    path = _write(tmp_path / "d.nc", missing=True)
    with xr.set_options(keep_attrs=True):  # the units stay through the arithmetic (xarray 2025.1 drops them)
        changed = cw.open_precip(path, validate=False).chunk({"time": 50}) * 1.0
    for pr in (cw.open_precip(path, validate=True), changed):
        assert _fused._stored_record(pr) is None
        fused, plain = _both(pr, baseline=(2001, 2003))
        _assert_same(fused, plain)


def test_one_task_per_chunk_read_and_only_partials_leave_it(tmp_path):
    """After dask's optimisation the read is inside the partials task: no task hands on a daily block."""
    pr = cw.open_precip(_write(tmp_path / "d.nc", years=4), chunks={"time": 90}, validate=False)
    ds = climatology_bundle(pr, baseline=(2001, 2004))
    (opt,) = dask.optimize(ds)
    kinds = collections.Counter(
        str(k[0] if isinstance(k, tuple) else k).rsplit("-", 1)[0] for k in opt.__dask_graph__()
    )
    # by prefix: dask 2024.6 appends a token to map_blocks' name and keeps block_info in tasks of
    # its own (small dicts, not daily blocks)
    assert sum(n for k, n in kinds.items() if k.startswith("climatology-partials")) == len(pr.chunks[0])
    assert not [k for k in kinds if k.startswith(("open_precip", "convert_block"))]


def test_longer_maxima_and_monthly_input_use_the_plain_path(tmp_path):
    pr = cw.open_precip(_write(tmp_path / "d.nc"), validate=False)
    assert not _fused.applicable(pr, "day", (1, 3))
    assert not _fused.applicable(pr.compute(), "day", (1,))
    assert _fused.applicable(pr, "day", ())
    ds = climatology_bundle(pr, baseline=(2001, 2003), maxima_days=(1, 3), compute=True)
    np.testing.assert_array_equal(ds["annual_max_1day"], cw.annual_maxima(pr, duration_days=1))
