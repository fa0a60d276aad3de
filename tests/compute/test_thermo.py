"""Checks of climwidgets.compute.thermo against handbook tables and the published Magnus form."""

import numpy as np
import pytest
import xarray as xr

from climwidgets.compute.thermo import (
    clausius_clapeyron_rate,
    moist_adiabatic_lapse_rate,
    saturation_vapor_density,
    saturation_vapor_pressure,
)

T_C = np.array([0.0, 10.0, 20.0, 30.0])


def test_against_crc_handbook_table():
    # CRC Handbook of Chemistry and Physics, 73rd ed. (1992-93), "Vapor pressure of water", kPa;
    # the Magnus form is within 0.3 % of it over 0-30 degC
    crc_kpa = np.array([0.61129, 1.2281, 2.3388, 4.2455])
    np.testing.assert_allclose(saturation_vapor_pressure(T_C) / 1000.0, crc_kpa, rtol=3e-3)


def test_alduchov_eskridge_formula_values():
    # Alduchov & Eskridge (1996), J. Appl. Meteor. 35, eq. 21: 6.1094 exp(17.625 T / (T + 243.04)) hPa,
    # evaluated by hand to 4-5 significant digits
    np.testing.assert_allclose(saturation_vapor_pressure(T_C) / 100.0, [6.1094, 12.2602, 23.3344, 42.3665], rtol=1e-4)
    assert saturation_vapor_pressure(0.0) == pytest.approx(610.94, rel=1e-12)  # e_s(0) = a exactly


def test_xarray_and_dask_input():
    t = xr.DataArray(T_C, dims="t")
    es = saturation_vapor_pressure(t)
    assert es.attrs["units"] == "Pa"
    lazy = saturation_vapor_pressure(t.chunk(t=2))
    assert lazy.chunks is not None
    np.testing.assert_allclose(lazy.compute(), es)
    np.testing.assert_allclose(saturation_vapor_pressure([0.0, 20.0]), es[[0, 2]])


def test_clausius_clapeyron_rate():
    # analytic derivative of the AE96 Magnus form, b c / (T + c)^2: 6.191 %/K at 20 degC
    assert 100 * clausius_clapeyron_rate(20.0) == pytest.approx(6.191, abs=1e-3)
    # the commonly quoted ~7 %/degC (Atmosphere 2020, 11(8), 786, review of observed CC scaling):
    # the slope lies in 6-7 %/K at 20 degC
    assert 0.06 < clausius_clapeyron_rate(20.0) < 0.07
    # the derivative agrees with a centred difference of ln e_s (second line: analytic vs numeric)
    h = 1e-4
    num = (np.log(saturation_vapor_pressure(20.0 + h)) - np.log(saturation_vapor_pressure(20.0 - h))) / (2 * h)
    assert clausius_clapeyron_rate(20.0) == pytest.approx(num, rel=1e-7)
    # the rate falls with temperature
    assert np.all(np.diff(clausius_clapeyron_rate(T_C)) < 0)


def test_saturation_vapor_density_ideal_gas():
    # rho_v = e_s / (R_v T); at 20 degC about 17.3 g m-3 (from memory, loose tolerance)
    assert saturation_vapor_density(20.0) * 1000 == pytest.approx(17.3, rel=0.01)


def test_moist_adiabatic_lapse_rate_near_handbook_values():
    # From memory (textbook tables, e.g. Wallace & Hobbs): about 4-5 K/km at 20 degC, 1000 hPa,
    # roughly 6.5 K/km near 0 degC; always below the dry rate g/cp of about 9.8 K/km.
    g20 = moist_adiabatic_lapse_rate(20.0, 100000.0) * 1000
    g0 = moist_adiabatic_lapse_rate(0.0, 100000.0) * 1000
    assert 4.0 <= g20 <= 5.0
    assert g0 == pytest.approx(6.5, abs=0.3)
    rates = moist_adiabatic_lapse_rate(np.array([-20.0, 0.0, 20.0, 30.0]), 100000.0) * 1000
    assert np.all(np.diff(rates) < 0) and np.all(rates < 9.8)
