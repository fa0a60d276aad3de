"""Tests of climwidgets/compute/ensemble.py: ensemble statistics against numpy on the stacked members."""

from __future__ import annotations

import warnings

import numpy as np
import pytest
import xarray as xr

from climwidgets.compute.ensemble import check_members, ensemble_summary, member_dim
from climwidgets.errors import MismatchError, ParameterError


def _field(n_members=5, dim="member", seed=1, nan=False):
    rng = np.random.default_rng(seed)
    values = rng.normal(0.05, 0.1, (n_members, 3, 4))
    if nan:
        values[1, 0, 0] = np.nan
        values[:, 2, 3] = np.nan  # a cell with no member at all
    return xr.DataArray(
        values,
        dims=(dim, "lat", "lon"),
        coords={dim: [f"m{i}" for i in range(n_members)], "lat": [1.0, 2.0, 3.0], "lon": [10.0, 11.0, 12.0, 13.0]},
        attrs={"units": "1", "long_name": "change in seasonal share"},
        name="change",
    )


@pytest.mark.parametrize("nan", [False, True])
def test_statistics_equal_numpy_on_stacked_members(nan):
    da = _field(nan=nan)
    ds = ensemble_summary(da, change="difference")
    v = da.values  # stacked members on axis 0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN cell
        # numpy reference: nan-aware functions on axis 0 (numpy's default quantile method is
        # linear, Hyndman & Fan type 7)
        expected = {
            "mean": np.nanmean(v, 0),
            "median": np.nanmedian(v, 0),
            "min": np.nanmin(v, 0),
            "max": np.nanmax(v, 0),
            "range": np.nanmax(v, 0) - np.nanmin(v, 0),
            "lower_quartile": np.nanquantile(v, 0.25, 0),
            "upper_quartile": np.nanquantile(v, 0.75, 0),
            "iqr": np.nanquantile(v, 0.75, 0) - np.nanquantile(v, 0.25, 0),
            "std": np.nanstd(v, 0, ddof=1),
        }
        n = (~np.isnan(v)).sum(0)
        agree = (np.sign(v) == np.sign(np.nanmedian(v, 0))).sum(0) / np.where(n > 0, n, np.nan)
    for key, ref in expected.items():
        np.testing.assert_allclose(ds[key].values, ref, rtol=1e-12, equal_nan=True, err_msg=key)
    np.testing.assert_allclose(ds["agreement"].values, agree, rtol=1e-12, equal_nan=True)
    np.testing.assert_array_equal(ds["n_members"].values, (~np.isnan(v)).sum(0))
    assert ds["mean"].attrs["units"] == "1" and ds["agreement"].attrs["units"] == "1"
    assert "ensemble mean" in ds["mean"].attrs["long_name"]
    assert "history" in ds.attrs


def test_agreement_by_hand():
    # five members: changes +1, +2, +3, -1, 0 → median +1 (positive); three of five positive
    da = xr.DataArray([1.0, 2.0, 3.0, -1.0, 0.0], dims="member", attrs={"units": "mm"})
    ds = ensemble_summary(da, change="difference")
    assert float(ds["agreement"]) == pytest.approx(3 / 5)
    # as ratios around 1: 1.1, 0.9, 0.8 → median 0.9 (a decrease); two of three agree
    r = xr.DataArray([1.1, 0.9, 0.8], dims="model", attrs={"units": "1"})
    ds = ensemble_summary(r, change="ratio")
    assert float(ds["agreement"]) == pytest.approx(2 / 3)
    assert ds.attrs["member_dim"] == "model"


def test_rounding_noise_is_no_change():
    # by hand: ratios 1 ± 1e-15 (two equal sums divided in floating point) are "no change";
    # with a median of no change, only the members with no change agree (three of four)
    r = xr.DataArray([1.0 + 1e-15, 1.0 - 1e-15, 1.0, 1.2], dims="member", attrs={"units": "1"})
    ds = ensemble_summary(r, change="ratio")
    assert float(ds["agreement"]) == pytest.approx(3 / 4)


def test_no_agreement_for_plain_field_and_single_member_std():
    da = _field(n_members=1)
    ds = ensemble_summary(da)
    assert "agreement" not in ds
    assert bool(ds["std"].isnull().all())
    np.testing.assert_array_equal(ds["mean"].values, da.values[0])


def test_lazy_on_dask_and_same_values():
    da = _field(n_members=4)
    lazy = ensemble_summary(da.chunk({"member": 1, "lat": 2}), change="difference")
    assert all(lazy[k].chunks is not None for k in lazy.data_vars)
    eager = ensemble_summary(da, change="difference")
    xr.testing.assert_allclose(lazy.compute(), eager)


def test_member_dim_detection_and_errors():
    for name in ("member", "realization", "ensemble", "model"):
        assert member_dim(_field(dim=name)) == name
    assert member_dim(_field(dim="run"), dim="run") == "run"
    with pytest.raises(ParameterError, match="no member dimension"):
        member_dim(_field(dim="run"))
    with pytest.raises(ParameterError, match="not a dimension"):
        ensemble_summary(_field(), dim="runs")
    with pytest.raises(ParameterError, match="change="):
        ensemble_summary(_field(), change="percent")
    both = _field().expand_dims(model=["a", "b"])
    with pytest.raises(ParameterError, match="several member-like"):
        ensemble_summary(both)
    assert ensemble_summary(both, dim="model")["mean"].dims == ("member", "lat", "lon")


def test_check_members():
    a, b = _field(), _field(seed=2)
    assert check_members(a, b) == "member"
    assert check_members(a.isel(member=0, drop=True), b.isel(member=0, drop=True)) is None
    with pytest.raises(MismatchError, match="no member dimension"):
        check_members(a, b.isel(member=0, drop=True))
    with pytest.raises(MismatchError, match="different members"):
        check_members(a, b.isel(member=slice(0, 3)))
