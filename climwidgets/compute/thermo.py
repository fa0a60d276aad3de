"""Moist thermodynamics used by the warming what-if and the orographic model.

Saturation vapour pressure over water uses the Magnus form with the coefficients of
Alduchov & Eskridge (1996, J. Appl. Meteor. 35, 601-609, eq. 21):
``e_s = 610.94 * exp(17.625 T / (T + 243.04))`` Pa, T in degrees Celsius.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

# Alduchov & Eskridge (1996), eq. 21 (over water); a in Pa, b dimensionless, c in degC.
MAGNUS_A_PA = 610.94
MAGNUS_B = 17.625
MAGNUS_C_DEGC = 243.04

# Physical constants (common textbook values).
R_DRY = 287.04  # J kg-1 K-1, gas constant of dry air
R_VAPOUR = 461.5  # J kg-1 K-1, gas constant of water vapour
LATENT_HEAT_VAPORISATION = 2.501e6  # J kg-1 at 0 degC
CP_DRY = 1004.0  # J kg-1 K-1
GRAVITY = 9.80665  # m s-2 (standard gravity)
EPSILON = R_DRY / R_VAPOUR


def _apply(func: Callable[[Any], Any], temperature_c: Any) -> Any:
    """Apply a numpy formula to scalars, arrays or xarray objects alike."""
    try:
        import xarray as xr

        if isinstance(temperature_c, xr.DataArray):
            return xr.apply_ufunc(func, temperature_c, dask="allowed", keep_attrs=False)
    except ImportError:  # pragma: no cover
        pass
    return func(np.asarray(temperature_c, dtype=float))


def saturation_vapor_pressure(temperature_c: Any) -> Any:
    """Saturation vapour pressure over liquid water, in Pa.

    Magnus form with the Alduchov & Eskridge (1996) coefficients; accurate to about
    0.3 % against the IAPWS formulation between 0 and 30 degC.

    Parameters
    ----------
    temperature_c : float, array_like or xarray.DataArray
        Air temperature in degrees Celsius.

    Returns
    -------
    numpy.ndarray or xarray.DataArray
        Saturation vapour pressure in Pa (a DataArray gets ``units="Pa"``),
        a 0-d array for a scalar; a DataArray stays one (lazy on dask).

    References
    ----------
    Alduchov, O. A. and Eskridge, R. E. (1996). Improved Magnus form approximation of
    saturation vapor pressure. Journal of Applied Meteorology, 35(4), 601-609.
    https://doi.org/10.1175/1520-0450(1996)035<0601:IMFAOS>2.0.CO;2

    Examples
    --------
    >>> import climwidgets as cw
    >>> round(float(cw.saturation_vapor_pressure(20.0)), 1)  # handbook tables: 2339 Pa
    2333.4
    >>> import numpy as np
    >>> cw.saturation_vapor_pressure(np.array([0.0, 10.0, 30.0])).round(0)
    array([ 611., 1226., 4237.])
    """

    def f(t: Any) -> Any:
        return MAGNUS_A_PA * np.exp(MAGNUS_B * t / (t + MAGNUS_C_DEGC))

    out = _apply(f, temperature_c)
    if hasattr(out, "attrs"):
        out.attrs.update(
            units="Pa",
            long_name="saturation vapour pressure over water",
            formula="Magnus form, Alduchov & Eskridge (1996) eq. 21",
        )
    return out


def clausius_clapeyron_rate(temperature_c: Any) -> Any:
    """Fractional increase of saturation vapour pressure per kelvin, d ln(e_s)/dT (1/K).

    Analytic derivative of the Magnus form: ``b c / (T + c)^2``; about 0.062 per K at 20 degC.

    Parameters
    ----------
    temperature_c : float, array_like or xarray.DataArray
        Air temperature in degrees Celsius.

    Returns
    -------
    numpy.ndarray or xarray.DataArray
        The rate in 1/K,
        a 0-d array for a scalar; a DataArray stays one (lazy on dask).

    References
    ----------
    Alduchov, O. A. and Eskridge, R. E. (1996). Improved Magnus form approximation of
    saturation vapor pressure. Journal of Applied Meteorology, 35(4), 601-609.
    https://doi.org/10.1175/1520-0450(1996)035<0601:IMFAOS>2.0.CO;2

    Examples
    --------
    >>> from climwidgets.compute.thermo import clausius_clapeyron_rate
    >>> round(float(clausius_clapeyron_rate(20.0)), 4)  # about 6 % per kelvin
    0.0619
    """
    return _apply(lambda t: MAGNUS_B * MAGNUS_C_DEGC / (t + MAGNUS_C_DEGC) ** 2, temperature_c)


def saturation_vapor_density(temperature_c: Any) -> Any:
    """Saturation water-vapour density in kg m-3 (ideal gas: e_s / (R_v T)).

    Parameters
    ----------
    temperature_c : float, array_like or xarray.DataArray
        Air temperature in degrees Celsius.

    Returns
    -------
    numpy.ndarray or xarray.DataArray
        The density in kg m-3,
        a 0-d array for a scalar; a DataArray stays one (lazy on dask).

    References
    ----------
    Alduchov, O. A. and Eskridge, R. E. (1996). Improved Magnus form approximation of
    saturation vapor pressure. Journal of Applied Meteorology, 35(4), 601-609.
    https://doi.org/10.1175/1520-0450(1996)035<0601:IMFAOS>2.0.CO;2

    Examples
    --------
    >>> from climwidgets.compute.thermo import saturation_vapor_density
    >>> round(float(saturation_vapor_density(20.0)) * 1000, 2)  # g m-3
    17.25
    """
    return _apply(lambda t: saturation_vapor_pressure(t) / (R_VAPOUR * (t + 273.15)), temperature_c)


def moist_adiabatic_lapse_rate(temperature_c: Any, pressure_pa: float = 101325.0) -> Any:
    """Saturated (pseudo-)adiabatic lapse rate in K m-1.

    Gamma_m = g (1 + L r_s / (R_d T)) / (c_p + L^2 r_s eps / (R_d T^2)), the usual textbook
    form (for example Wallace & Hobbs, Atmospheric Science, 2nd ed., eq. 3.89 — from memory),
    with r_s the saturation mixing ratio at the given pressure.

    Parameters
    ----------
    temperature_c : float, array_like or xarray.DataArray
        Air temperature in degrees Celsius.
    pressure_pa : float, default 101325.0
        Air pressure in Pa.

    Returns
    -------
    numpy.ndarray or xarray.DataArray
        The lapse rate in K m-1,
        a 0-d array for a scalar; a DataArray stays one (lazy on dask).

    References
    ----------
    Wallace, J. M. and Hobbs, P. V. (2006). Atmospheric Science: An Introductory Survey,
    2nd ed. Academic Press (the saturated adiabatic lapse rate; equation from memory).

    Examples
    --------
    >>> from climwidgets.compute.thermo import moist_adiabatic_lapse_rate
    >>> round(float(moist_adiabatic_lapse_rate(20.0)) * 1000, 2)  # K per km at 1013.25 hPa
    4.25
    """

    def f(t: Any) -> Any:
        tk = t + 273.15
        es = MAGNUS_A_PA * np.exp(MAGNUS_B * t / (t + MAGNUS_C_DEGC))
        rs = EPSILON * es / (pressure_pa - es)
        lv = LATENT_HEAT_VAPORISATION
        return GRAVITY * (1 + lv * rs / (R_DRY * tk)) / (CP_DRY + lv**2 * rs * EPSILON / (R_DRY * tk**2))

    return _apply(f, temperature_c)
