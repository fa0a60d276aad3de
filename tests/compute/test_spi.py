"""Standardized Precipitation Index (climwidgets/compute/spi.py).

Sources: McKee, Doesken & Kleist (1993) and the WMO (2012) SPI User Guide (WMO-No. 1090)
for the method and classes; Edwards & McKee (1997), Climatology
Report 97-2, eqs. 3.6-3.8, for the Thom (1958) estimator; xclim 0.62.0 and scipy 1.17.1
as reference libraries.
"""

import warnings

import numpy as np
import pandas as pd
import pytest
import xarray as xr
from scipy import stats

from climwidgets import ParameterError
from climwidgets.compute.spi import spi, spi_category, thom_gamma_fit

# Worked sample: 30 monthly totals (mm), one per year.
S = np.array(
    [
        45.2,
        12.8,
        78.4,
        33.1,
        5.6,
        101.3,
        60.0,
        27.9,
        88.7,
        41.5,
        19.4,
        134.6,
        52.3,
        70.1,
        8.9,
        36.7,
        95.2,
        23.0,
        64.8,
        47.6,
        15.3,
        112.9,
        30.4,
        57.7,
        82.5,
        39.8,
        21.6,
        68.3,
        50.9,
        74.2,
    ]
)
SZ = S.copy()
SZ[[1, 4, 14]] = 0.0  # the 2nd, 5th and 15th values set to zero


def repeated(sample):
    """Each sample value in all 12 months of its year: 360 months, 1991-2020."""
    t = pd.date_range("1991-01-01", periods=360, freq="MS")
    return xr.DataArray(
        np.repeat(sample, 12), dims="time", coords={"time": t}, attrs={"units": "mm", "step": "month"}, name="pr"
    )


def at_january(da):
    return da.values[::12]


@pytest.mark.parametrize(
    "sample, alpha, beta, q",
    [
        # Thom estimates computed with numpy from Edwards & McKee (1997) eqs. 3.6-3.8
        (S, 2.3073958419, 23.1241929530, 0.0),
        (SZ, 3.6405982931, 16.0067300432, 0.1),
    ],
)
def test_thom_parameters_of_the_worked_sample(sample, alpha, beta, q):
    a, b, qq, n = thom_gamma_fit(xr.DataArray(sample, dims="t"), "t")
    np.testing.assert_allclose([float(a), float(b)], [alpha, beta], rtol=1e-9)
    assert float(qq) == pytest.approx(q, abs=1e-15) and int(n) == 30


def xclim_spi(da):
    import xclim

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return xclim.indices.standardized_precipitation_index(
            da.assign_attrs(units="mm/month"), freq=None, window=1, dist="gamma", method="APP", fitkwargs={"floc": 0}
        )


@pytest.mark.parametrize("sample", [S, SZ], ids=["no zeros", "with zeros"])
def test_agrees_with_xclim_app(sample):
    # xclim 0.62.0, method="APP" with floc=0 is the Thom fit with zero-probability mixing;
    # it also clips at +-8.21 and gives Phi^-1(q) for zeros.
    da = repeated(sample)
    ours = spi(da, scale=1, baseline=(1991, 2020))
    np.testing.assert_allclose(ours.values, xclim_spi(da).values, rtol=0, atol=1e-9)
    assert "Thom" in ours.attrs["fit_method"] and ours.attrs["clip"] == 8.21


def test_worked_values_and_zero():
    # H = q + (1 - q) G(x) with the Thom parameters, SPI = scipy.stats.norm.ppf(H)
    # (computed with scipy 1.17.1): x = 5.6 -> -2.261566, x = 134.6 -> 1.862471.
    s = at_january(spi(repeated(S), scale=1, baseline=(1991, 2020)))
    np.testing.assert_allclose(s[[4, 11]], [-2.261566, 1.862471], atol=1e-6)
    sz = at_january(spi(repeated(SZ), scale=1, baseline=(1991, 2020)))
    np.testing.assert_allclose(sz[1], stats.norm.ppf(0.1), atol=1e-12)  # zero -> Phi^-1(q)


@pytest.mark.parametrize("sample", [S, SZ], ids=["no zeros", "with zeros"])
def test_thom_close_to_maximum_likelihood(sample):
    # scipy.stats.gamma.fit(floc=0) is the exact MLE; Thom's approximation differs by
    # less than 2e-3 in SPI on this sample.
    pos = sample[sample > 0]
    a, _, b = stats.gamma.fit(pos, floc=0)
    q = np.mean(sample == 0)
    h = np.where(sample > 0, q + (1 - q) * stats.gamma.cdf(sample, a, scale=b), q)
    ours = at_january(spi(repeated(sample), scale=1, baseline=(1991, 2020)))
    np.testing.assert_allclose(ours, stats.norm.ppf(h), atol=2e-3)


def test_scale_3_running_sums_and_xclim_window():
    rng = np.random.default_rng(11)
    t = pd.date_range("1991-01-01", periods=360, freq="MS")
    vals = rng.gamma(1.5, 25.0, 360)
    da = xr.DataArray(vals, dims="time", coords={"time": t}, attrs={"units": "mm", "step": "month"})
    ours = spi(da, scale=3, baseline=(1991, 2020))
    assert np.isnan(ours[:2]).all() and ours.attrs["scale_months"] == 3
    # same as scale 1 on hand-made 3-month sums (pandas rolling) ending in each month
    sums = da.copy(data=pd.Series(vals).rolling(3).sum().values)
    np.testing.assert_allclose(
        ours.values, spi(sums, scale=1, baseline=(1991, 2020)).values, atol=1e-12, equal_nan=True
    )
    import xclim

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = xclim.indices.standardized_precipitation_index(
            da.assign_attrs(units="mm/month"), freq=None, window=3, dist="gamma", method="APP", fitkwargs={"floc": 0}
        )
    np.testing.assert_allclose(ours.values[2:], ref.values[2:], atol=1e-9)


def test_daily_input_dask_and_curvilinear():
    rng = np.random.default_rng(5)
    t = pd.date_range("2001-01-01", "2005-12-31", freq="D")
    lat2d = np.array([[1.0, 1.2]])
    vals = rng.gamma(0.4, 6.0, (t.size, 1, 2)) * (rng.random((t.size, 1, 2)) < 0.5)
    pr = xr.DataArray(
        vals,
        dims=("time", "y", "x"),
        coords={"time": t, "lat": (("y", "x"), lat2d), "lon": (("y", "x"), lat2d)},
        attrs={"units": "mm", "step": "day"},
    )
    eager = spi(pr, scale=6, baseline=(2001, 2005))
    mon = pr.resample(time="MS").sum().assign_attrs(units="mm", step="month")
    xr.testing.assert_allclose(eager.drop_attrs(), spi(mon, scale=6, baseline=(2001, 2005)).drop_attrs())
    lazy = spi(pr.chunk({"time": 400, "x": 1}), scale=6, baseline=(2001, 2005))
    assert lazy.chunks is not None and eager.lat.dims == ("y", "x")
    xr.testing.assert_allclose(lazy.compute().drop_attrs(), eager.drop_attrs())
    assert spi_category(lazy).chunks is not None


def test_clip_outside_baseline():
    vals = np.concatenate([np.repeat(S, 12), [0.0] * 12, [1e4] * 12])  # 2021 dry, 2022 huge
    t = pd.date_range("1991-01-01", periods=vals.size, freq="MS")
    da = xr.DataArray(vals, dims="time", coords={"time": t}, attrs={"units": "mm", "step": "month"})
    s = spi(da, scale=1, baseline=(1991, 2020))
    np.testing.assert_array_equal(s.values[-24:], [-8.21] * 12 + [8.21] * 12)
    assert float(spi(da, scale=1, baseline=(1991, 2020), clip=5.0).max()) == 5.0


def test_category_boundaries():
    # WMO (2012) SPI User Guide, Table 1 (boundaries as tabulated)
    z = xr.DataArray([-2.5, -2.0, -1.99, -1.5, -1.49, -1.0, -0.99, 0.0, 0.99, 1.0, 1.49, 1.5, 1.99, 2.0, np.nan])
    assert spi_category(z).values.tolist() == [
        "extremely dry",
        "extremely dry",
        "severely dry",
        "severely dry",
        "moderately dry",
        "moderately dry",
        "near normal",
        "near normal",
        "near normal",
        "moderately wet",
        "moderately wet",
        "very wet",
        "very wet",
        "extremely wet",
        "missing",
    ]


def test_bad_parameters():
    da = repeated(S)
    with pytest.raises(ParameterError, match="scale=5 is not an accepted SPI scale.*1, 3, 6, 9, 12, 24"):
        spi(da, scale=5)
    short = da.isel(time=slice(0, 2))
    with pytest.raises(ParameterError, match="2 complete months \\(1991-01 to 1991-02\\), fewer than scale=3"):
        spi(short, scale=3, baseline=(1991, 1991))
    with pytest.raises(ParameterError, match="outside the data period 1991-01 to 2020-12"):
        spi(da, baseline=(1961, 1990))
    with pytest.raises(ParameterError, match="clip"):
        spi(da, clip=-1)
