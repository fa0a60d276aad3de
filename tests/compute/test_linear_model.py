"""Checks of the linear orographic precipitation model (Smith & Barstad 2004)."""

from __future__ import annotations

import dask.array as da
import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute.linear_model import condensation_coefficient, vertical_wavenumber, water_vapour_scale_height
from climwidgets.compute.thermo import moist_adiabatic_lapse_rate, saturation_vapor_density
from climwidgets.errors import ParameterError

R = 6_371_007.2  # the module's sphere radius for metres per degree
A_M = 10e3  # hill half-width (e-folding) in m
H0_M = 1000.0
UPSLOPE = dict(nm=0.0, hw=0.0, tau_c=0.0, tau_f=0.0)


def _hill(step=0.01, half=0.6, lat_c=0.0):
    """Gaussian hill h0·exp(-(x²+y²)/a²) on a regular grid, well resolved (a ≈ 9 cells)."""
    lat = lat_c + np.arange(-half, half + 1e-9, step)
    lon = np.arange(-half, half + 1e-9, step)
    y = R * np.deg2rad(lat - lat_c)[:, None]
    x = R * np.deg2rad(lon)[None, :] * np.cos(np.deg2rad(lat.mean()))
    h = H0_M * np.exp(-(x**2 + y**2) / A_M**2)
    z = xr.DataArray(h, coords={"lat": lat, "lon": lon}, dims=("lat", "lon"), attrs={"units": "m"})
    return z, x[0], y[:, 0]


@pytest.fixture(scope="module")
def hill():
    return _hill()


def test_upslope_limit_matches_finite_differences_and_analytic(hill):
    """τc, τf -> 0 and m·Hw -> 0 (Nm = 0, Hw = 0) leave P = Cw·max(U·∇h, 0).

    Smith & Barstad (2004, J. Atmos. Sci. 61, 1377-1391): the upslope model is the limit
    of the transfer function without delays and airflow dynamics.  Checked against a
    centred finite difference (numpy.gradient) and against the analytic Gaussian:
    peak Cw·U·h0·√2/a·e^(-1/2) at x = -a/√2, and total Cw·U·h0·a·√π (kg s-1), since the
    windward half integrates ∂h/∂x to h(0, y).
    """
    z, x, y = hill
    u = 10.0
    p = cw.linear_orographic_precip(z, u, 270.0, 10.0, **UPSLOPE)
    c_w = p.attrs["Cw_kg_m-3"]
    dx, dy = x[1] - x[0], y[1] - y[0]
    fd = c_w * np.maximum(u * np.gradient(z.values, dx, axis=1), 0.0) * 3600.0  # mm/h
    # spectral vs second-order FD differentiation at ~9 cells per half-width: ~1 %
    assert float(p.max()) == pytest.approx(fd.max(), rel=0.02)
    assert float(p.sum()) == pytest.approx(fd.sum(), rel=0.02)
    assert np.max(np.abs(p.values - fd)) < 0.02 * fd.max()
    peak = c_w * u * H0_M * np.sqrt(2) / A_M * np.exp(-0.5) * 3600.0
    assert float(p.max()) == pytest.approx(peak, rel=0.01)  # grid misses x = -a/√2 slightly
    total_kg_s = float(p.sum()) * dx * dy / 3600.0
    assert total_kg_s == pytest.approx(c_w * u * H0_M * A_M * np.sqrt(np.pi), rel=0.01)
    # windward (west) half only, as the upslope model says
    assert float(p.where(p.lon > 0.05).max()) < 1e-9


def test_doubling_wind_doubles_upslope_precipitation(hill):
    z, _, _ = hill
    p1 = cw.linear_orographic_precip(z, 8.0, 270.0, 10.0, **UPSLOPE)
    p2 = cw.linear_orographic_precip(z, 16.0, 270.0, 10.0, **UPSLOPE)
    np.testing.assert_allclose(p2.values, 2 * p1.values, rtol=1e-9, atol=1e-12)


def test_full_model_rain_shadow_and_non_negative(hill):
    z, _, _ = hill
    p = cw.linear_orographic_precip(z, 10.0, 270.0, 10.0)
    assert float(p.min()) >= 0.0
    assert float(p.sum()) > 0.0
    west = float(p.where(p.lon < 0).sum())
    east = float(p.where(p.lon > 0).sum())
    assert east < west  # the lee gets less than the windward side
    assert float(p.lon[int(p.max("lat").argmax("lon"))]) < 0  # maximum upwind of the summit
    # an easterly wind flips the sides
    pe = cw.linear_orographic_precip(z, 10.0, 90.0, 10.0)
    assert float(pe.where(pe.lon > 0).sum()) > float(pe.where(pe.lon < 0).sum())
    # delays and dynamics spread and weaken the upslope peak
    assert float(p.max()) < float(cw.linear_orographic_precip(z, 10.0, 270.0, 10.0, **UPSLOPE).max())


def test_padding_changes_little(hill):
    z, _, _ = hill
    p1 = cw.linear_orographic_precip(z)  # default pad=1.0
    p2 = cw.linear_orographic_precip(z, pad=3.0)
    assert np.max(np.abs(p2.values - p1.values)) < 0.01 * float(p1.max())
    assert float(p2.sum()) == pytest.approx(float(p1.sum()), rel=0.01)


def test_background_duration_units_history(hill):
    z, _, _ = hill
    rate0 = cw.linear_orographic_precip(z)
    rate = cw.linear_orographic_precip(z, p_background=0.5)
    assert rate.attrs["units"] == "mm h-1"
    wet = rate0.values > 0  # background is added before negatives are truncated
    np.testing.assert_allclose(rate.values[wet], rate0.values[wet] + 0.5, rtol=1e-12)
    assert float(rate.min()) < 0.5  # the lee still dries below the background
    depth = cw.linear_orographic_precip(z, p_background=0.5, duration_hours=24)
    assert depth.attrs["units"] == "mm"
    np.testing.assert_allclose(depth.values, 24 * rate.values, rtol=1e-12)
    assert "linear_orographic_precip" in depth.attrs["history"]


def test_dask_input_gives_dask_output(hill):
    z, _, _ = hill
    zd = z.copy(data=da.from_array(z.values, chunks=(60, 60)))
    out = cw.linear_orographic_precip(zd)
    assert isinstance(out.data, da.Array)
    np.testing.assert_allclose(out.values, cw.linear_orographic_precip(z).values, rtol=1e-10)


def test_vertical_wavenumber_branches():
    """S&B (2004): m real with sgn(m) = sgn(σ) when σ² < Nm²; imaginary, Im m > 0, else."""
    k = np.array([1e-4, -1e-4, 1e-3])
    sigma = 10.0 * k  # U = 10 m/s along x
    m = vertical_wavenumber(sigma, k, 0 * k, nm=0.005)
    # σ² = 1e-6 < Nm² = 2.5e-5: m = sgn(σ)·sqrt((Nm²-σ²)/σ²)·|k|
    assert m[0].imag == 0 and m[0].real == pytest.approx(np.sqrt((2.5e-5 - 1e-6) / 1e-6) * 1e-4)
    assert m[1].real == pytest.approx(-m[0].real)
    # σ² = 1e-4 > Nm²: evanescent, decays with height
    assert m[2].real == 0 and m[2].imag == pytest.approx(np.sqrt((1e-4 - 2.5e-5) / 1e-4) * 1e-3)
    # Nm = 0: m = i·|K| (potential flow)
    assert vertical_wavenumber(sigma, k, 0 * k, nm=0.0)[2] == pytest.approx(1j * 1e-3)


def test_cw_hw_and_moist_lapse_rate_plausible():
    # Moist-adiabatic lapse rate near 1000 hPa: about 4.3 K/km at 20 °C and 6.5 K/km at
    # 0 °C (from memory: pseudo-adiabatic tables, e.g. Wallace & Hobbs, Atmospheric
    # Science, 2nd ed., ch. 3).  A loose band only: thermo has its own tests.
    assert 4.0e-3 < float(moist_adiabatic_lapse_rate(20.0, 100000.0)) < 5.0e-3
    assert 6.0e-3 < float(moist_adiabatic_lapse_rate(0.0, 100000.0)) < 7.0e-3
    # ρ_Sref from the CRC Handbook of Chemistry and Physics, 73rd ed. (1992-93), "Vapor
    # pressure of water": e_s(20 °C) = 2.3388 kPa; ideal gas with R_v = 461.5 J kg-1 K-1
    # (from memory).  Magnus forms sit within 0.3 % of the table (Alduchov & Eskridge 1996).
    rho_crc = 2338.8 / (461.5 * 293.15)
    assert float(saturation_vapor_density(20.0)) == pytest.approx(rho_crc, rel=3e-3)
    c_w = float(condensation_coefficient(20.0, 0.0065, 100000.0))
    assert c_w == pytest.approx(rho_crc * float(moist_adiabatic_lapse_rate(20.0, 100000.0)) / 0.0065, rel=3e-3)
    assert 0.005 < c_w < 0.02  # kg m-3: ρ_S of order 1e-2 times Γm/γ below 1
    # Hw = R_v T²/(L γ) (S&B 2004): about 2.3 km at 10 °C, 6.5 K/km (L = 2.501e6 J/kg,
    # from memory); S&B describe Hw as a few km (from memory).
    hw = float(water_vapour_scale_height(10.0, 0.0065))
    assert hw == pytest.approx(461.5 * 283.15**2 / (2.501e6 * 0.0065), rel=1e-9)
    assert 2000 < hw < 3000


@pytest.mark.parametrize(
    "kwargs, variable, words",
    [
        (dict(wind_speed=0.0), "wind_speed", "> 0"),
        (dict(wind_speed=-3.0), "wind_speed", "> 0"),
        (dict(wind_from=400.0), "wind_from", "0-360"),
        (dict(wind_from=-1.0), "wind_from", "0-360"),
        (dict(nm=-0.01), "nm", ">= 0"),
        (dict(tau_c=-1.0), "tau_c", ">= 0"),
        (dict(lapse_rate=6.5), "lapse_rate", "dry adiabatic"),
        (dict(temperature_c=290.0), "temperature_c", "Celsius"),
        (dict(duration_hours=0), "duration_hours", "> 0"),
    ],
)
def test_bad_parameters(hill, kwargs, variable, words):
    z, _, _ = hill
    with pytest.raises(ParameterError) as err:
        cw.linear_orographic_precip(z, **kwargs)
    assert err.value.variable == variable
    assert words in str(err.value)


def test_non_uniform_grid_is_refused():
    z, _, _ = _hill(step=0.05)
    lon = z.lon.values.copy()
    lon[5:] += 0.01
    with pytest.raises(ParameterError) as err:
        cw.linear_orographic_precip(z.assign_coords(lon=lon))
    msg = str(err.value)
    assert "lon spacing is not uniform" in msg and "regrid" in msg


def test_zero_background_is_the_earlier_output(hill):
    """Regression: with p_background=0 (the default) the numbers are those the model gave
    before the background term was wired into the windward/leeward view (values recorded
    from the code at commit 47a67d8 on this hill)."""
    z, _, _ = hill
    cells = ((60, 50), (60, 60), (60, 70), (40, 55), (80, 65))
    for kwargs, total, peak, values in [
        (
            {},
            1338.0384378233762,
            3.3677457765967,
            (1.5970125772168955, 3.006619355956781, 0.0, 0.25522847762176576, 0.1340889525907481),
        ),
        (
            dict(wind_speed=15.0, wind_from=240.0, temperature_c=5.0),
            1468.6226935370405,
            3.7137889639295043,
            (1.2678693855505687, 3.7137889639295043, 0.21445052095462908, 0.19431347299185944, 0.0),
        ),
    ]:
        p = cw.linear_orographic_precip(z, **kwargs).values
        assert float(p.sum()) == pytest.approx(total, rel=1e-9)
        assert float(p.max()) == pytest.approx(peak, rel=1e-9)
        np.testing.assert_allclose([p[i, j] for i, j in cells], values, rtol=1e-9, atol=1e-12)
        p0 = cw.linear_orographic_precip(z, p_background=0.0, **kwargs).values
        np.testing.assert_array_equal(p0, p)


def test_positive_background_wets_the_lee(hill):
    """The orographic part is 0 in the lee of the hill; a background large enough to
    outweigh the descent keeps every lee cell wet (P = max(P_oro + P∞, 0))."""
    z, _, _ = hill
    lee = z.lon > 0.05
    p0 = cw.linear_orographic_precip(z)
    assert float((p0.where(lee) == 0).sum()) > 0  # dry cells in the lee without background
    raw_min = float(cw.linear_orographic_precip(z, p_background=100.0).min()) - 100.0  # most negative P_oro
    assert raw_min < 0
    p = cw.linear_orographic_precip(z, p_background=-raw_min + 0.5)
    assert float(p.where(lee).min()) >= 0.5 - 1e-9
    ratio = float(p.where(lee).mean()) / float(p.where(z.lon < -0.05).mean())
    assert 0 < ratio < 1  # still a rain shadow, no longer an empty one


def test_one_dimensional_ridge_with_one_delay_matches_the_analytic_answer():
    """A Gaussian ridge h0·exp(-x²/a²) (uniform along y), wind along x, Nm = Hw = τf = 0:
    the transfer function Cw·iσĥ/(1 + iσ τc) is the upslope source Cw·U·h'(x) convolved
    with the downstream delay kernel exp(-s/L)/L, L = U·τc.  Worked by hand: with
    E(x) = (√π a / 2L)·exp(-x²/a²)·erfcx(a/2L − x/a), the convolution of the Gaussian with
    the kernel, P(x) = Cw·U·h0·(g(x) − E(x))/L, g = exp(-x²/a²) (dE/dx = (g − E)/L).
    Checked before truncation (large background subtracted) and after."""
    from scipy.special import erfcx

    a, h0, u, tau = 10e3, 1000.0, 10.0, 1000.0
    lat = np.arange(-0.1, 0.1 + 1e-9, 0.01)
    lon = np.arange(-1.5, 1.5 + 1e-9, 0.01)  # ±167 km: the ridge and its delayed rain fit
    x = R * np.deg2rad(lon)  # at the equator, cos(lat0) = 1
    g = np.exp(-((x / a) ** 2))
    z = xr.DataArray(
        np.repeat((h0 * g)[None, :], lat.size, axis=0),
        coords={"lat": lat, "lon": lon},
        dims=("lat", "lon"),
        attrs={"units": "m"},
    )
    bg = 1000.0  # mm/h, far above any drying, so nothing is truncated
    p = cw.linear_orographic_precip(z, u, 270.0, 10.0, nm=0.0, hw=0.0, tau_c=tau, tau_f=0.0, p_background=bg, pad=2.0)
    c_w = p.attrs["Cw_kg_m-3"]
    big_l = u * tau
    e = np.sqrt(np.pi) * a / (2 * big_l) * g * erfcx(a / (2 * big_l) - x / a)
    expected = c_w * u * h0 * (g - e) / big_l * 3600.0  # mm/h
    row = p.isel(lat=10).values - bg
    # spectral derivative at 1.1 km spacing on a 10 km ridge: better than 0.1 % of the peak
    assert np.max(np.abs(row - expected)) < 1e-3 * np.max(np.abs(expected))
    assert x[np.argmax(row)] > -a / np.sqrt(2) + 2e3  # downstream of the upslope peak at -a/√2
    # the same ridge without background is truncated at zero exactly where expected < 0
    p0 = cw.linear_orographic_precip(z, u, 270.0, 10.0, nm=0.0, hw=0.0, tau_c=tau, tau_f=0.0, pad=2.0)
    np.testing.assert_allclose(p0.isel(lat=10).values, np.maximum(expected, 0.0), atol=1e-3 * np.max(np.abs(expected)))
