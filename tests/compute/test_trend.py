"""Sen slope and Mann-Kendall test (climwidgets/compute/trend.py).

Sources: Mann (1945), Kendall (1975) and Sen (1968) for the method (from memory); the
Var(S) tie correction and the continuity-corrected Z as implemented in pymannkendall 1.4.3
(source read); scipy.stats.theilslopes and scipy.stats.kendalltau (scipy 1.17.1) as
reference libraries.
"""

import numpy as np
import pytest
import xarray as xr
from scipy import stats

from climwidgets import InputError, ParameterError
from climwidgets.compute.trend import trend

Y = np.array([3.1, 4.5, 2.8, 5.6, 5.0, 6.3, 4.9, 7.2, 6.8, 8.1])
T = np.arange(1, 11)


def test_worked_example():
    # S = 31, Var(S) = 10*9*25/18 = 125, Z = (31 - 1)/sqrt(125), two-sided normal p
    # = 0.0072903581 (computed with scipy; pymannkendall 1.4.3 original_test agrees)
    ds = trend(xr.DataArray(Y, dims="year", coords={"year": T}, attrs={"units": "mm"}))
    z = 30 / np.sqrt(125)
    np.testing.assert_allclose(float(ds.pvalue), 2 * stats.norm.sf(z), rtol=1e-12)
    np.testing.assert_allclose(float(ds.pvalue), 0.0072903581, rtol=1e-6)
    np.testing.assert_allclose(float(ds.slope), 0.45, rtol=1e-12)  # median of 45 pairwise slopes
    np.testing.assert_allclose(float(ds.tau), 31 / 45, rtol=1e-9)
    ref = stats.theilslopes(Y, T)
    np.testing.assert_allclose([float(ds.slope), float(ds.intercept)], [ref.slope, ref.intercept], rtol=1e-12)
    assert int(ds.n) == 10 and ds.slope.attrs["units"] == "mm per year"
    assert set(ds.data_vars) >= {"slope", "pvalue", "intercept", "n"}


def test_ties_against_scipy():
    y = np.array([2.0, 3.0, 3.0, 5.0, 4.0, 4.0, 4.0, 6.0, 5.0, 7.0, 7.0, 6.0])
    t = np.arange(2001, 2013)
    ds = trend(xr.DataArray(y, dims="year", coords={"year": t}))
    ref = stats.theilslopes(y, t)
    np.testing.assert_allclose(float(ds.slope), ref.slope, rtol=1e-12)
    np.testing.assert_allclose(float(ds.intercept), ref.intercept, rtol=1e-12)
    # scipy's kendalltau returns tau_b; its p uses another method, so compare tau only
    np.testing.assert_allclose(float(ds.tau), stats.kendalltau(t, y).statistic, rtol=1e-12)
    # tie-corrected variance by hand: groups of size 2 (3, 5, 6, 7) and 3 (4)
    n = 12
    var = (n * (n - 1) * (2 * n + 5) - 4 * (2 * 1 * 9) - 3 * 2 * 11) / 18
    s = sum(np.sign(y[j] - y[i]) for i in range(n) for j in range(i + 1, n))
    np.testing.assert_allclose(float(ds.pvalue), 2 * stats.norm.sf((s - 1) / np.sqrt(var)), rtol=1e-12)


def test_nans_skipped_per_cell_dask_and_curvilinear():
    rng = np.random.default_rng(4)
    t = np.arange(1981, 2021)
    data = rng.normal(0, 1, (2, 3, t.size)) + 0.05 * (t - t[0])
    data[0, 0, 5:9] = np.nan
    data[1, 2, :] = np.nan  # a cell with no data
    data[1, 1, :-1] = np.nan  # a cell with one value
    lat2d = np.array([[1.0, 1.1, 1.2], [2.0, 2.1, 2.2]])
    da = xr.DataArray(
        data, dims=("y", "x", "year"), coords={"year": t, "lat": (("y", "x"), lat2d), "lon": (("y", "x"), lat2d)}
    )
    ds = trend(da)
    keep = ~np.isnan(data[0, 0])
    ref = stats.theilslopes(data[0, 0][keep], t[keep])
    np.testing.assert_allclose(float(ds.slope[0, 0]), ref.slope, rtol=1e-12)
    np.testing.assert_allclose(float(ds.intercept[0, 0]), ref.intercept, rtol=1e-12)
    np.testing.assert_allclose(float(ds.tau[0, 0]), stats.kendalltau(t[keep], data[0, 0][keep]).statistic, rtol=1e-12)
    assert int(ds.n[0, 0]) == t.size - 4 and ds.lat.dims == ("y", "x")
    assert np.isnan(ds.slope[1, 2]) and np.isnan(ds.pvalue[1, 2]) and int(ds.n[1, 2]) == 0
    assert np.isnan(ds.slope[1, 1]) and np.isnan(ds.pvalue[1, 1])
    lazy = trend(da.chunk({"x": 1, "year": 10}))
    assert lazy.slope.chunks is not None
    xr.testing.assert_allclose(lazy.compute(), ds)


def test_bad_input():
    da = xr.DataArray(Y, dims="year", coords={"year": T})
    with pytest.raises(ParameterError, match="dimension 'time' not found"):
        trend(da, dim="time")
    with pytest.raises(InputError, match="only 1 value"):
        trend(da.isel(year=slice(0, 1)))
    with pytest.raises(ParameterError, match="not numeric"):
        trend(da.assign_coords(year=[str(v) for v in T]))
