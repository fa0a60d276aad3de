"""Checks of climwidgets.compute.regional (Hosking & Wallis 1997, Regional Frequency Analysis).

Sources beside each check.  No published site-by-site worked example was at hand, so
D_i is checked against Hosking & Wallis (1997) Table 3.1 and the properties of section 3.2
(from memory), and against scipy's Mahalanobis distance; H against regions homogeneous
and heterogeneous by construction; the growth curve against lmoments3 1.0.8 fitted to the
pooled ratios computed here with lmoments3's own sample L-moments.
"""

import math

import lmoments3
import numpy as np
import pytest
import xarray as xr
from lmoments3 import distr
from scipy import stats
from scipy.spatial.distance import mahalanobis

import climwidgets as cw
from climwidgets.compute.regional import (
    DISCORDANCY_CRITICAL,
    discordancy,
    discordancy_critical,
)
from climwidgets.compute.warming import DESIGN_DEPTH_CAUTIONS
from climwidgets.errors import ParameterError

PERIODS = (2, 10, 50, 100)


def region(l_cv, n_years=40, shape=(4, 5), k=-0.1, seed=0, lengths=None):
    """Annual maxima on a grid: GEV growth with L-CV ``l_cv`` (scalar or per cell) times an index.

    The GEV (scipy c = Hosking's k) has mean 1 and the given L-CV (Hosking 1990 formulas).
    """
    rng = np.random.default_rng(seed)
    cv = np.broadcast_to(np.asarray(l_cv, float), shape)
    g = math.gamma(1 + k)
    # L-CV of a GEV with mean 1: l2 / l1; scale from l2 = a (1 - 2^-k) G / k, loc from l1 = 1
    scale = cv * k / ((1 - 2.0 ** (-k)) * g)
    loc = 1 - scale * (1 - g) / k
    u = rng.random((n_years, *shape))
    x = loc + scale / k * (1 - (-np.log(u)) ** k)
    index = rng.uniform(30, 90, shape)
    x = x * index
    if lengths is not None:  # shorter records: NaN at the start
        for (j, i), n in np.ndenumerate(lengths):
            x[: n_years - n, j, i] = np.nan
    return xr.DataArray(
        x,
        dims=("year", "lat", "lon"),
        name="annual_max",
        attrs={"units": "mm"},
        coords={
            "year": np.arange(1961, 1961 + n_years),
            "lat": 10.0 + np.arange(shape[0]) * 0.5,
            "lon": -30.0 + np.arange(shape[1]) * 0.5,
        },
    )


def test_discordancy_properties_and_scipy():
    rng = np.random.default_rng(1)
    t, t3, t4 = rng.normal(0.2, 0.03, 12), rng.normal(0.15, 0.05, 12), rng.normal(0.15, 0.04, 12)
    d = discordancy(t, t3, t4)
    # Hosking & Wallis (1997) sec. 3.2 (from memory): the D_i average 1, and D_i <= (N - 1) / 3
    assert d.sum() == pytest.approx(12.0, rel=1e-12)
    assert d.max() <= 11 / 3
    # the same as N / (3 (N - 1)) times the squared Mahalanobis distance with the sample
    # covariance (scipy.spatial.distance.mahalanobis; numpy.cov)
    u = np.stack([t, t3, t4], axis=1)
    vi = np.linalg.inv(np.cov(u.T))
    ref = [12 / (3 * 11) * mahalanobis(row, u.mean(axis=0), vi) ** 2 for row in u]
    np.testing.assert_allclose(d, ref, rtol=1e-10)
    # an outlier is flagged against Table 3.1's critical value for N = 12 (2.757, from memory)
    t[0] = 0.45
    assert discordancy(t, t3, t4)[0] > discordancy_critical(12) == 2.757


def test_critical_values_table_3_1():
    # Hosking & Wallis (1997) Table 3.1 (from memory)
    assert [discordancy_critical(n) for n in range(5, 16)] == [
        1.333,
        1.648,
        1.917,
        2.140,
        2.329,
        2.491,
        2.632,
        2.757,
        2.869,
        2.971,
        3.0,
    ]
    assert discordancy_critical(40) == 3.0 and np.isnan(discordancy_critical(4))
    assert len(DISCORDANCY_CRITICAL) == 10


def test_homogeneous_regions_have_small_h():
    # four regions, each one GEV growth curve (L-CV 0.2) by construction; H should be ~N(0, 1)
    shape = (8, 10)
    am = region(0.2, shape=shape, seed=3)
    labels = xr.DataArray(np.repeat(np.arange(4), 20).reshape(shape), dims=("lat", "lon"))
    ds = cw.regional_frequency(am, regions=labels, periods=PERIODS, n_sim=200, n_boot=100)
    assert (ds["H1"] < 2).all() and float(ds["H1"].mean()) < 1
    assert (ds["n_sites"] == 20).all() and (ds["kappa_used"] == 1).all()


def test_heterogeneous_region_has_large_h():
    # L-CV from 0.1 to 0.4 across the cells: definitely heterogeneous by construction
    cv = np.linspace(0.1, 0.4, 20).reshape(4, 5)
    ds = cw.regional_frequency(region(cv, seed=4), periods=PERIODS, n_sim=200, n_boot=100)
    assert ds["H1"].item() > 2


def test_growth_curve_is_the_pooled_lmoment_fit():
    lengths = np.full((4, 5), 40)
    lengths[0, :3] = 25  # unequal record lengths make the weighting matter
    am = region(0.22, seed=5, lengths=lengths)
    ds = cw.regional_frequency(am, periods=PERIODS, n_sim=100, n_boot=100)
    # pooled, record-length-weighted L-moment ratios from lmoments3.lmom_ratios per cell
    n, t, t3, t4, l1 = [], [], [], [], []
    for j in range(4):
        for i in range(5):
            x = am.values[:, j, i]
            x = x[np.isfinite(x)]
            r = lmoments3.lmom_ratios(x, 4)
            n.append(x.size), l1.append(r[0]), t.append(r[1] / r[0]), t3.append(r[2]), t4.append(r[3])
    w = np.asarray(n) / np.sum(n)
    tr, t3r, t4r = w @ t, w @ t3, w @ t4
    assert ds["t_R"].item() == pytest.approx(tr, rel=1e-10)
    assert ds["t3_R"].item() == pytest.approx(t3r, rel=1e-10)
    assert ds["t4_R"].item() == pytest.approx(t4r, rel=1e-10)
    # lmoments3 1.0.8 distr.gev.lmom_fit on (1, t_R, t3_R, t4_R): the growth curve (PELGEV vs
    # Hosking's 1985 approximation: within 1e-3)
    ref = distr.gev.lmom_fit(lmom_ratios=[1.0, tr, t3r, t4r])
    F = 1 - 1 / np.asarray(PERIODS, float)
    np.testing.assert_allclose(ds["growth"].isel(region=0), distr.gev.ppf(F, **ref), rtol=1e-3)
    # scipy.stats.genextreme with the growth-curve parameters (c = Hosking's k)
    sp = stats.genextreme.ppf(
        F, c=ds["growth_shape"].item(), loc=ds["growth_loc"].item(), scale=ds["growth_scale"].item()
    )
    np.testing.assert_allclose(ds["growth"].isel(region=0), sp, rtol=1e-10)
    # each cell's estimate = its index (mean annual maximum) x growth
    est = ds["estimate"].transpose("lat", "lon", "period").values
    np.testing.assert_allclose(est, np.asarray(l1).reshape(4, 5, 1) * sp[None, None, :], rtol=1e-10)
    np.testing.assert_allclose(ds["index"].values.ravel(), l1, rtol=1e-12)
    # discordancy of the region equals the function on the same ratios
    np.testing.assert_allclose(ds["discordancy"].values.ravel(), discordancy(t, t3, t4), rtol=1e-9)


def test_intervals_seed_and_dask():
    am = region(0.2, seed=6)
    ds = cw.regional_frequency(am, periods=PERIODS, n_sim=100, n_boot=200, seed=7)
    assert (ds["lower"] < ds["estimate"]).all() and (ds["estimate"] < ds["upper"]).all()
    assert (ds["growth_lower"] < ds["growth"]).all() and (ds["growth"] < ds["growth_upper"]).all()
    assert (ds["estimate"].diff("period") > 0).all()
    assert ds.attrs["cautions"] == DESIGN_DEPTH_CAUTIONS
    again = cw.regional_frequency(am, periods=PERIODS, n_sim=100, n_boot=200, seed=7)
    xr.testing.assert_identical(ds.drop_attrs(), again.drop_attrs())  # seeded: reproducible
    lazy = cw.regional_frequency(am.chunk(lat=2), periods=PERIODS, n_sim=100, n_boot=200, seed=7)
    assert lazy["H1"].chunks is not None and lazy["estimate"].chunks is not None
    xr.testing.assert_allclose(lazy.compute().drop_attrs(), ds.drop_attrs())


def test_basin_regions_and_excluded_cells():
    am = region(0.2, seed=8)
    west = cw.Basin.from_vertices([(-30.3, 9.7), (-29.2, 9.7), (-29.2, 11.8), (-30.3, 11.8)], name="west")
    east = cw.Basin.from_vertices([(-29.2, 9.7), (-27.7, 9.7), (-27.7, 11.8), (-29.2, 11.8)], name="east")
    ds = cw.regional_frequency(am, regions=[west, east], periods=PERIODS, n_sim=100, n_boot=100)
    assert list(ds["region"].values) == ["west", "east"]
    assert int(ds["n_sites"].sel(region="west")) + int(ds["n_sites"].sel(region="east")) == 20
    assert set(np.unique(ds["cell_region"].values)) == {"west", "east"}
    labels = xr.DataArray(np.where(np.arange(20).reshape(4, 5) < 15, 1.0, np.nan), dims=("lat", "lon"))
    part = cw.regional_frequency(am, regions=labels, periods=PERIODS, n_sim=100, n_boot=100)
    assert part["n_sites"].item() == 15
    assert np.isnan(part["estimate"].values[3, :, 0]).all() and np.isnan(part["discordancy"].values[3]).all()


def test_bad_input():
    am = region(0.2)
    with pytest.raises(ParameterError, match="n_sim"):
        cw.regional_frequency(am, n_sim=10)
    with pytest.raises(ParameterError, match="regions"):
        cw.regional_frequency(am, regions=["nope"])
    with pytest.raises(ParameterError, match="no cell"):
        cw.regional_frequency(am, regions=xr.full_like(am.isel(year=0, drop=True), np.nan))
    with pytest.raises(ParameterError, match="greater than 1"):
        cw.regional_frequency(am, periods=(1,))


# Hosking's own reference implementation, the R package lmomRFA 3.0-1 (J. R. M. Hosking,
# February 2015; function regtst.s in R/lmomRFA.r, read in its published source): the
# critical discordancy values of Hosking & Wallis (1997) Table 3.1 to four decimals
# (vector dc1, N = 5 ... 14), and the heterogeneity measure H written out below.
LMOMRFA_DC1 = {
    5: 1.3330,
    6: 1.6481,
    7: 1.9166,
    8: 2.1401,
    9: 2.3287,
    10: 2.4906,
    11: 2.6321,
    12: 2.7573,
    13: 2.8694,
    14: 2.9709,
}


def test_critical_values_match_the_lmomrfa_reference():
    for n, value in LMOMRFA_DC1.items():
        assert discordancy_critical(n) == pytest.approx(value, abs=6e-4)
    assert discordancy_critical(15) == 3.0  # lmomRFA: 3 from N = 15 on


def _h_as_in_lmomrfa(x, n_sim, seed):
    """H1..H3 following lmomRFA's regtst.s step by step, with lmoments3 for the L-moments
    and the kappa/GLO quantiles (an independent path: per-site loops, its own random draws).

    Kappa fitted to the regional (1, t_R, t3_R, t4_R) when t4_R <= (1 + 5 t3_R^2) / 6, else
    the generalized logistic (kappa with h = -1); each simulated region has the observed
    record lengths; V1 = sqrt(weighted mean of (t - t_R)^2), V2 = weighted mean of the
    (t, t3) distances, V3 of the (t3, t4) distances, weights the record lengths;
    H = (V_obs - mean V_sim) / sd V_sim.
    """
    import lmoments3 as lm
    from lmoments3 import distr

    sites = [s[np.isfinite(s)] for s in x]
    n = np.array([s.size for s in sites], float)

    def ratios(samples):
        r = np.array([lm.lmom_ratios(s, nmom=4) for s in samples])
        return np.stack([r[:, 1] / r[:, 0], r[:, 2], r[:, 3]], axis=1)  # t, t3, t4

    def v(r):
        reg = (n[:, None] * r).sum(0) / n.sum()
        d = r - reg
        return np.array(
            [
                np.sqrt((n * d[:, 0] ** 2).sum() / n.sum()),
                (n * np.hypot(d[:, 0], d[:, 1])).sum() / n.sum(),
                (n * np.hypot(d[:, 1], d[:, 2])).sum() / n.sum(),
            ]
        ), reg

    v_obs, (tr, t3r, t4r) = v(ratios(sites))
    if t4r <= (1 + 5 * t3r**2) / 6:
        dist = distr.kap(**distr.kap.lmom_fit(lmom_ratios=[1.0, tr, t3r, t4r]))
    else:
        dist = distr.glo(**distr.glo.lmom_fit(lmom_ratios=[1.0, tr, t3r, t4r]))
    rng = np.random.default_rng(seed)
    with np.errstate(invalid="ignore", divide="ignore"):
        sims = np.array([v(ratios([dist.ppf(rng.random(int(m))) for m in n]))[0] for _ in range(n_sim)])
    return (v_obs - sims.mean(0)) / sims.std(0, ddof=1)


@pytest.mark.parametrize("cv, seed", [(0.2, 11), (np.linspace(0.15, 0.27, 12).reshape(3, 4), 12)])
def test_heterogeneity_matches_the_lmomrfa_algorithm(cv, seed):
    lengths = np.full((3, 4), 35)
    lengths[0, :2] = 22  # unequal record lengths
    am = region(cv, n_years=35, shape=(3, 4), seed=seed, lengths=lengths)
    ds = cw.regional_frequency(am, periods=PERIODS, n_sim=1000, n_boot=50, seed=1)
    ours = np.array([ds[h].item() for h in ("H1", "H2", "H3")])
    ref = _h_as_in_lmomrfa(am.transpose("lat", "lon", "year").values.reshape(12, -1), n_sim=1000, seed=2)
    # two independent simulations of 1000 regions: H differs by Monte Carlo error only
    # (its sd is about |H| / sqrt(2 n_sim) + a few hundredths for the simulated sd)
    assert np.all(np.abs(ours - ref) <= 0.12 + 0.05 * np.abs(ref)), (ours, ref)
