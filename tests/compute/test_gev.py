"""Checks of climwidgets.compute.gev: L-moments, GEV/Gumbel fits, return levels, bootstrap."""

import math
import warnings

import lmoments3
import numpy as np
import pytest
import xarray as xr
from lmoments3 import distr
from scipy import stats

import climwidgets as cw
from climwidgets.compute.gev import _params_from_lmoments, lmoments
from climwidgets.compute.warming import DESIGN_DEPTH_CAUTIONS
from climwidgets.errors import InsufficientDataError, ParameterError

# 40 annual daily maxima (mm), a worked example; values below are computed from the
# published formulas of Hosking (1990) and Hosking & Wallis (1997) and checked with lmoments3 1.0.8.
X = np.array(
    [
        38.2,
        52.7,
        41.9,
        67.3,
        45.0,
        33.8,
        59.4,
        48.6,
        72.1,
        40.3,
        55.8,
        36.4,
        88.9,
        47.2,
        43.5,
        61.0,
        39.7,
        50.1,
        95.6,
        44.8,
        57.3,
        35.9,
        49.4,
        66.2,
        42.6,
        53.9,
        78.5,
        46.1,
        37.5,
        58.8,
        51.2,
        63.7,
        41.1,
        70.4,
        45.7,
        34.6,
        54.5,
        112.3,
        48.0,
        60.2,
    ]
)
PERIODS = (2, 10, 50, 100)


def series(x=X):
    return xr.DataArray(
        np.asarray(x, float),
        dims="year",
        coords={"year": np.arange(1981, 1981 + len(x))},
        name="annual_max",
        attrs={"units": "mm", "duration": "1 day"},
    )


def test_pwm_and_lmoments_worked_example():
    m = lmoments(X)
    # Unbiased PWMs b0..b3 and L-moments (Hosking 1990; Hosking & Wallis 1997, sec. 2.4)
    np.testing.assert_allclose(
        [m["b0"], m["b1"], m["b2"], m["b3"]], [54.255, 31.6541025641, 23.0339203779, 18.3569342926], rtol=1e-9
    )
    np.testing.assert_allclose([m["l2"], m["t3"], m["t4"]], [9.0532051282, 0.2798905853, 0.1894693935], rtol=1e-9)
    # lmoments3 1.0.8 lmom_ratios: l1, l2, t3, t4
    np.testing.assert_allclose([m["l1"], m["l2"], m["t3"], m["t4"]], lmoments3.lmom_ratios(X, 4), rtol=1e-9)
    # the gridded path gives the same sample L-moments
    ds = cw.gev_lmoments(series())
    np.testing.assert_allclose([ds.l1, ds.l2, ds.t3, ds.t4], lmoments3.lmom_ratios(X, 4), rtol=1e-9)


def test_gev_fit_worked_example_hosking_approximation():
    ds = cw.gev_lmoments(series())
    # k = 7.8590c + 2.9554c^2 (Hosking, Wallis & Wood 1985), alpha and xi from Hosking (1990),
    # computed directly from the published formulas
    np.testing.assert_allclose(ds["shape"], -0.1649214713, rtol=1e-9)
    np.testing.assert_allclose(ds["loc"], 45.82876886, rtol=1e-9)
    np.testing.assert_allclose(ds["scale"], 10.93903397, rtol=1e-9)
    assert "scipy.stats.genextreme" in ds.attrs["sign_convention"]
    assert "k > 0 bounded upper tail" in ds.attrs["sign_convention"]
    assert ds["loc"].attrs["units"] == "mm" and "history" in ds.attrs
    # lmoments3 1.0.8 uses Hosking's rational approximation (PELGEV): k within 1e-3
    ref = distr.gev.lmom_fit(X)
    assert abs(float(ds["shape"]) - ref["c"]) < 1e-3


def test_return_levels_worked_example():
    rl = cw.return_levels(series(), periods=PERIODS, n_boot=200)
    # x(F) = xi + alpha/k (1 - (-ln F)^k), F = 1 - 1/T (Hosking & Wallis 1997), from the formulas directly
    np.testing.assert_allclose(rl["estimate"].sel(period=100), 121.139755, rtol=1e-8)
    np.testing.assert_allclose(rl["estimate"], [49.961718, 75.635388, 105.733959, 121.139755], rtol=1e-7)
    # scipy.stats.genextreme with c = Hosking's k (same sign convention)
    F = 1 - 1 / np.asarray(PERIODS, float)
    sp = stats.genextreme.ppf(F, c=float(rl["shape"]), loc=float(rl["loc"]), scale=float(rl["scale"]))
    np.testing.assert_allclose(rl["estimate"], sp, rtol=1e-12)
    # lmoments3 1.0.8 distr.gev quantiles: within rtol 1e-3 (different shape approximation)
    ref = distr.gev.lmom_fit(X)
    np.testing.assert_allclose(rl["estimate"], distr.gev.ppf(F, **ref), rtol=1e-3)
    assert (rl["lower"] < rl["estimate"]).all() and (rl["upper"] > rl["estimate"]).all()
    assert rl.attrs["cautions"] == DESIGN_DEPTH_CAUTIONS
    assert rl["estimate"].attrs["units"] == "mm" and rl["period"].attrs["units"] == "years"
    assert rl["estimate"].dims == ("period",)


def test_gumbel_worked_example():
    g = cw.gev_lmoments(series(), dist="gumbel")
    # alpha = l2 / ln 2, xi = l1 - gamma alpha (Hosking & Wallis 1997), computed directly
    np.testing.assert_allclose(g["scale"], 13.06101414, rtol=1e-9)
    np.testing.assert_allclose(g["loc"], 46.71597804, rtol=1e-9)
    # lmoments3 1.0.8 distr.gum agrees
    ref = distr.gum.lmom_fit(X)
    np.testing.assert_allclose([g["loc"], g["scale"]], [ref["loc"], ref["scale"]], rtol=1e-9)
    rl = cw.return_levels(series(), periods=PERIODS, dist="gumbel", n_boot=200)
    np.testing.assert_allclose(rl["estimate"], [51.503008, 76.108058, 97.679254, 106.798592], rtol=1e-8)
    np.testing.assert_allclose(rl["estimate"], distr.gum.ppf(1 - 1 / np.asarray(PERIODS, float), **ref), rtol=1e-9)


def test_gumbel_reduced_variate_100_year():
    # y_T = -ln(-ln(1 - 1/T)) (closed form); 4.60014923 at T = 100
    y100 = -math.log(-math.log(0.99))
    assert y100 == pytest.approx(4.60014923, rel=1e-8)
    g = cw.gev_lmoments(series(), dist="gumbel")
    rl = cw.return_levels(series(), periods=(100,), dist="gumbel", n_boot=100)
    np.testing.assert_allclose(rl["estimate"].sel(period=100), g["loc"] + g["scale"] * 4.60014923, rtol=1e-8)


def test_gumbel_switch_near_zero_shape():
    # At the Gumbel L-skewness t3 = ln(9/8)/ln 2 the approximation gives k ~ 1e-16:
    # the Gumbel formulas apply (lmoments3 switches at |k| < 1e-5 too)
    t3 = math.log(9 / 8) / math.log(2)
    loc, scale, k = _params_from_lmoments(50.0, 8.0, t3, "gev")
    assert k == 0.0
    assert scale == pytest.approx(8.0 / math.log(2), rel=1e-12)
    assert loc == pytest.approx(50.0 - 0.5772156649015329 * 8.0 / math.log(2), rel=1e-12)


def test_return_period_is_inverse():
    rl = cw.return_levels(series(), periods=PERIODS, n_boot=100)
    T = cw.return_period(rl, rl["estimate"])
    np.testing.assert_allclose(T, PERIODS, rtol=1e-9)
    assert T.attrs["units"] == "years"
    # from the maxima directly, a scalar depth; scipy.stats.genextreme.sf as the reference
    T2 = cw.return_period(series(), 90.0)
    sf = stats.genextreme.sf(90.0, c=float(rl["shape"]), loc=float(rl["loc"]), scale=float(rl["scale"]))
    np.testing.assert_allclose(T2, 1 / sf, rtol=1e-9)
    # beyond the upper bound of a bounded tail (k > 0): never exceeded
    params = xr.Dataset(dict(loc=10.0, scale=2.0, shape=0.5))
    assert np.isinf(cw.return_period(params, 10.0 + 2.0 / 0.5 + 1.0))


def test_missing_years_and_short_cells():
    x = X.copy()
    grid = np.stack([x, x, x])
    grid[1, [3, 17, 30]] = np.nan  # three missing years in cell 1
    grid[2, 5:] = np.nan  # cell 2 has only 5 years
    da = xr.DataArray(grid.T, dims=("year", "cell"), attrs={"units": "mm"})
    ds = cw.gev_lmoments(da)
    # cell 1 equals the fit of the series with those years removed
    ref = cw.gev_lmoments(series(np.delete(x, [3, 17, 30])))
    np.testing.assert_allclose(ds["shape"][1], ref["shape"], rtol=1e-12)
    np.testing.assert_allclose(ds["n_years"], [40, 37, 5])
    assert np.isnan(ds["loc"][2]) and ds.attrs["n_cells_insufficient"] == 1
    # dask in -> dask out, same numbers
    lazy = cw.gev_lmoments(da.chunk(cell=1, year=10))
    assert lazy["shape"].chunks is not None
    xr.testing.assert_allclose(lazy.compute(), ds.drop_attrs(deep=False))


def test_parameter_recovery_both_signs():
    # Seeded samples from known GEVs (scipy.stats.genextreme, c = k), 200 cells x 60 years each
    rng = np.random.default_rng(42)
    for k in (0.15, -0.15):
        x = stats.genextreme.rvs(c=k, loc=40.0, scale=10.0, size=(60, 200), random_state=rng)
        ds = cw.gev_lmoments(xr.DataArray(x, dims=("year", "cell"), attrs={"units": "mm"}))
        # mean over 200 cells: standard errors are ~0.01 in k and ~0.1 mm in loc, scale
        assert float(ds["shape"].mean()) == pytest.approx(k, abs=0.03)
        assert float(ds["loc"].mean()) == pytest.approx(40.0, abs=0.5)
        assert float(ds["scale"].mean()) == pytest.approx(10.0, abs=0.5)
        assert np.sign(float(ds["shape"].median())) == np.sign(k)


def test_bootstrap_coverage_and_dask():
    # 200 independent 40-year records from a known GEV, as 200 cells; the 90 % interval of the
    # 100-year level should cover the true level at roughly the nominal rate.
    k, loc, scale = -0.1, 40.0, 10.0
    truth = stats.genextreme.ppf(0.99, c=k, loc=loc, scale=scale)
    x = stats.genextreme.rvs(c=k, loc=loc, scale=scale, size=(40, 200), random_state=np.random.default_rng(7))
    da = xr.DataArray(x, dims=("year", "cell"), attrs={"units": "mm"})
    rl = cw.return_levels(da, periods=(100,), ci=0.9, n_boot=200, seed=3)
    hit = ((rl["lower"] <= truth) & (truth <= rl["upper"])).sel(period=100)
    assert 0.8 <= float(hit.mean()) <= 0.97
    # dask in -> dask out, same numbers (common random numbers make chunking irrelevant)
    rd = cw.return_levels(da.chunk(cell=64), periods=(100,), ci=0.9, n_boot=200, seed=3)
    assert rd["upper"].chunks is not None
    xr.testing.assert_allclose(rd.compute(), rl)
    # seeded: the same call twice gives the same interval
    again = cw.return_levels(da.isel(cell=slice(0, 5)), periods=(100,), n_boot=200, seed=3)
    xr.testing.assert_equal(again[["lower", "upper"]], rl[["lower", "upper"]].isel(cell=slice(0, 5)))


def test_gev_mle_matches_convention_and_likelihood():
    x = stats.genextreme.rvs(c=-0.2, loc=30.0, scale=8.0, size=300, random_state=np.random.default_rng(5))
    mle = cw.gev_mle(x)
    assert float(mle["shape"]) == pytest.approx(-0.2, abs=0.1)  # same sign convention as scipy's c
    lm = cw.gev_lmoments(series(x))

    def loglik(ds):
        return stats.genextreme.logpdf(x, c=float(ds["shape"]), loc=float(ds["loc"]), scale=float(ds["scale"])).sum()

    assert loglik(mle) >= loglik(lm) - 1e-6  # the MLE maximises the scipy likelihood
    assert float(mle["loc"]) == pytest.approx(float(lm["loc"]), rel=0.05)
    with pytest.raises(ParameterError, match="one series"):
        cw.gev_mle(np.ones((20, 2)))


def test_errors():
    with pytest.raises(InsufficientDataError) as e:
        cw.gev_lmoments(series(X[:8]))
    assert "only 8 years" in str(e.value) and "min_years=10" in str(e.value) and "Fix:" in str(e.value)
    with pytest.raises(InsufficientDataError, match="only 8"):
        cw.return_levels(series(X[:8]))
    short = np.full((20, 2), np.nan)
    short[:5] = 30.0
    with pytest.raises(InsufficientDataError, match="no series has 10"):
        cw.gev_lmoments(xr.DataArray(short, dims=("year", "cell")))
    for bad in ((1, 10), (0.5,), (), (10, float("nan"))):
        with pytest.raises(ParameterError) as e:
            cw.return_levels(series(), periods=bad)
        assert "greater than 1" in str(e.value)
    with pytest.raises(ParameterError, match="between 0 and 1"):
        cw.return_levels(series(), ci=90)
    with pytest.raises(ParameterError, match="'gev' or 'gumbel'"):
        cw.gev_lmoments(series(), dist="weibull")
    with pytest.raises(ParameterError, match="'year' dimension"):
        cw.gev_lmoments(xr.DataArray(X, dims="time"))


# ----------------------------------------------------------------------------- heavy tails


def population_t3(k):
    """GEV L-skewness for Hosking's k (Hosking 1990): 2 (1 - 3^-k) / (1 - 2^-k) - 3."""
    return 2 * (1 - 3.0**-k) / (1 - 2.0**-k) - 3


@pytest.mark.parametrize("k", [-0.8, -0.7, -0.6, -0.5, -0.3, 0.3, 0.5, 0.8, 1.5])
def test_shape_over_the_whole_range_against_lmoments3(k):
    t3 = population_t3(k)
    loc, scale, shape = (float(v) for v in _params_from_lmoments(50.0, 12.0, t3, "gev"))
    # lmoments3 1.0.8 distr.gev.lmom_fit (Hosking's PELGEV: rational approximation plus
    # Newton-Raphson for heavy tails) on the same L-moment ratios
    ref = distr.gev.lmom_fit(lmom_ratios=[50.0, 12.0, t3, 0.3])
    F = 1 - 1 / 100
    ours_100 = stats.genextreme.ppf(F, c=shape, loc=loc, scale=scale)
    ref_100 = distr.gev.ppf(F, **ref)
    assert ours_100 == pytest.approx(ref_100, rel=0.01)  # the bar: within 1 %
    if abs(k) > 0.5:  # exact inversion outside the approximation's range
        assert shape == pytest.approx(k, abs=1e-9)
        assert shape == pytest.approx(ref["c"], abs=2e-4)
    else:  # the approximation's result is kept there: |dk| < 1e-3 (Hosking, Wallis & Wood 1985)
        c = 2 / (3 + t3) - math.log(2) / math.log(3)
        assert shape == pytest.approx(7.8590 * c + 2.9554 * c * c, rel=1e-12)
        assert shape == pytest.approx(k, abs=1e-3)


def test_heavy_tailed_samples_against_lmoments3():
    # samples from scipy.stats.genextreme with c = k = -0.7: the gridded fit and lmoments3 agree
    x = stats.genextreme.rvs(c=-0.7, loc=40, scale=10, size=(6, 60), random_state=np.random.default_rng(5))
    rl = cw.return_levels(xr.DataArray(x, dims=("cell", "year"), attrs={"units": "mm"}), periods=(100,), n_boot=50)
    for i in range(6):
        ref = distr.gev.lmom_fit(x[i])
        assert float(rl["estimate"].isel(cell=i, period=0)) == pytest.approx(distr.gev.ppf(0.99, **ref), rel=0.01)


def test_shape_near_the_heavy_end_and_outside_the_range():
    # t3 = 0.98 (k near -0.97): the approximation was 77 % off in the 100-year depth there;
    # lmoments3 1.0.8 distr.gev.lmom_fit gives the same depth within 1 %
    loc, scale, k = (float(v) for v in _params_from_lmoments(50.0, 12.0, 0.98, "gev"))
    assert population_t3(k) == pytest.approx(0.98, abs=1e-12) and -1 < k < -0.9
    ref = distr.gev.lmom_fit(lmom_ratios=[50.0, 12.0, 0.98, 0.9])
    assert stats.genextreme.ppf(0.99, c=k, loc=loc, scale=scale) == pytest.approx(distr.gev.ppf(0.99, **ref), rel=0.01)
    # t3 >= 1 cannot come from a sample and k <= -1 has no finite mean: no fit
    assert np.isnan(_params_from_lmoments(50.0, 12.0, 1.0, "gev")[2])


def test_nanquantile_linear_is_numpys_nanquantile():
    # Reference: numpy.nanquantile(method="linear") (Hyndman & Fan type 7), bit for bit, on
    # random data with NaN, an all-NaN slice, a one-value slice, q at 0 and 1, several axes.
    from climwidgets.compute.gev import nanquantile_linear

    rng = np.random.default_rng(11)
    for shape, axis in (((6, 300, 4), 1), ((57,), 0), ((3, 4, 9), -1), ((9, 3), 0), ((5, 2000), 1)):
        a = rng.normal(50.0, 20.0, size=shape)
        a[rng.random(shape) < 0.25] = np.nan
        if len(shape) > 1:
            moved = np.moveaxis(a, axis, -1)
            moved[(0,) * (moved.ndim - 1)] = np.nan  # a slice without any value
            moved[(-1,) * (moved.ndim - 1)][1:] = np.nan  # a slice with one value
        for q in ([0.05, 0.95], 0.5, [0.0, 1.0, 1 / 3], [[0.1, 0.2], [0.7, 0.999]]):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)  # numpy warns on the all-NaN slice
                if np.ndim(q) == 2:  # numpy 1.26 orders a 2-D q's result otherwise: one row at a time
                    expected = np.stack([np.nanquantile(a, row, axis=axis) for row in q])
                else:
                    expected = np.nanquantile(a, q, axis=axis)
            got = nanquantile_linear(a, q, axis=axis)
            assert got.shape == np.shape(expected)
            np.testing.assert_array_equal(got, expected)
    complete = rng.normal(size=(40, 501))  # no NaN: the partial-sort path
    np.testing.assert_array_equal(
        nanquantile_linear(complete, [0.05, 0.5, 0.95], axis=1), np.quantile(complete, [0.05, 0.5, 0.95], axis=1)
    )


def test_vectorised_bootstrap_matches_a_per_cell_bootstrap():
    # Reference: the bootstrap written out cell by cell — replicates drawn with
    # scipy.stats.genextreme.ppf (scipy's c is Hosking's k) from the first n uniforms of each
    # row of the common table, refitted one cell at a time, percentiles by numpy.nanquantile.
    from climwidgets.compute.gev import _bootstrap_block, _fit_block, _quantile

    rng = np.random.default_rng(12)
    x = stats.genextreme.rvs(c=-0.15, loc=40.0, scale=12.0, size=(9, 30), random_state=rng)
    x[1, :4] = np.nan  # 26 years
    x[2, ::3] = np.nan  # 20 years
    x[3, 5:] = np.nan  # too short: no fit, no interval
    x[4] = 1e3 * rng.pareto(0.4, 30)  # very heavy tailed: fitted k about -0.9
    F = 1.0 - 1.0 / np.array([2.0, 10.0, 100.0])
    n_boot, ci, seed = 300, 0.9, 4
    for dist in ("gev", "gumbel"):
        est, lo, hi = _bootstrap_block(x, F, dist, 10, ci, n_boot, seed)
        u = np.clip(np.random.default_rng(seed).random((n_boot, x.shape[1])), 1e-300, 1.0)
        for c in range(x.shape[0]):
            loc, scale, k, n = (float(v[0]) for v in _fit_block(x[c : c + 1], dist, 10)[:4])
            if not np.isfinite(loc):
                assert np.isnan(lo[c]).all() and np.isnan(hi[c]).all()
                continue
            sample = stats.genextreme.ppf(u[:, : int(n)], c=k, loc=loc, scale=scale)
            bl, bs, bk = _fit_block(sample, dist, 10)[:3]
            xt = _quantile(F[None, :], bl[:, None], bs[:, None], bk[:, None])
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", RuntimeWarning)
                ref_lo, ref_hi = np.nanquantile(xt, [(1 - ci) / 2, (1 + ci) / 2], axis=0)
            np.testing.assert_allclose(lo[c], ref_lo, rtol=1e-9)
            np.testing.assert_allclose(hi[c], ref_hi, rtol=1e-9)
