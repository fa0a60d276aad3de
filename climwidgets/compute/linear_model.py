"""Linear theory of orographic precipitation (Smith & Barstad 2004).

Smith, R. B. and Barstad, I. (2004): A linear theory of orographic precipitation.
J. Atmos. Sci. 61, 1377-1391.  In Fourier space the precipitation from terrain
ĥ(k, l) is

    P̂(k, l) = Cw · i σ ĥ / ((1 − i m Hw) (1 + i σ τc) (1 + i σ τf)),   σ = U k + V l,

the product of the upslope source (Cw · i σ ĥ, the Fourier transform of Cw U·∇h), the
airflow-dynamics factor 1 / (1 − i m Hw), and the delays of cloud-water conversion (τc)
and hydrometeor fallout (τf).  Equation numbers quoted in docstrings are from memory.

The orographic part alone is negative where air descends in the lee (the theory's
evaporation of cloud and falling precipitation).  S&B 2004 add a background rate P∞ from
large-scale (non-orographic) ascent and truncate the sum, P = max(P_orographic + P∞, 0)
(their discussion of the truncation and the background, section 5; the section number
and the exact form are from memory), which is what ``p_background`` does.  Published
values of the delays are τc ≈ τf ≈ 1000 s, range about 200-2000 s (S&B 2004; Smith 2003,
J. Hydrol. 282, 2-9; from memory), of the moist buoyancy frequency Nm 0-0.01 s-1 with
0.005 s-1 a common choice (from memory).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import xarray as xr
from scipy.fft import next_fast_len

from ..errors import ParameterError
from ..provenance import with_history
from . import _crest
from .thermo import LATENT_HEAT_VAPORISATION, R_VAPOUR, moist_adiabatic_lapse_rate, saturation_vapor_density

__all__ = ["linear_orographic_precip", "condensation_coefficient", "water_vapour_scale_height", "vertical_wavenumber"]

STANDARD_LAPSE_RATE = 0.0065  # K m-1, environmental lapse rate of the standard atmosphere


def condensation_coefficient(
    temperature_c: Any, lapse_rate: float = STANDARD_LAPSE_RATE, pressure_pa: float = 101325.0
) -> Any:
    """Thermodynamic uplift sensitivity Cw = ρ_Sref · Γm / γ in kg m-3.

    ρ_Sref is the saturation water-vapour density at the surface, Γm the moist-adiabatic
    lapse rate there and γ the environmental lapse rate (S&B 2004, section 2).
    Precipitation in the upslope limit is Cw · U·∇h (kg m-2 s-1 = mm s-1).

    Parameters
    ----------
    temperature_c
        Surface air temperature, °C (scalar or array).
    lapse_rate
        Environmental lapse rate γ, K m-1 (default 0.0065, the standard atmosphere).
    pressure_pa
        Surface pressure, Pa, for the moist-adiabatic lapse rate.

    Returns
    -------
    numpy.ndarray
        Cw in kg m-3, of the shape of ``temperature_c`` (0-d for a scalar).

    References
    ----------
    Smith, R. B. and Barstad, I. (2004). A linear theory of orographic precipitation.
    Journal of the Atmospheric Sciences, 61(12), 1377-1391.
    https://doi.org/10.1175/1520-0469(2004)061<1377:ALTOOP>2.0.CO;2

    Examples
    --------
    >>> from climwidgets.compute.linear_model import condensation_coefficient
    >>> round(float(condensation_coefficient(10.0)) * 1000, 2)  # g m-3 at 10 °C
    7.62
    """
    gm = moist_adiabatic_lapse_rate(temperature_c, pressure_pa)
    return saturation_vapor_density(temperature_c) * gm / lapse_rate


def water_vapour_scale_height(temperature_c: Any, lapse_rate: float = STANDARD_LAPSE_RATE) -> np.ndarray:
    """Depth of the moist layer Hw = R_v T² / (L γ) in m (S&B 2004, section 2).

    About 2.3 km at 10 °C with γ = 6.5 K/km; it grows with temperature.

    Parameters
    ----------
    temperature_c
        Surface air temperature, °C (scalar or array).
    lapse_rate
        Environmental lapse rate γ, K m-1.

    Returns
    -------
    numpy.ndarray or float
        Hw in m, of the shape of ``temperature_c``.

    References
    ----------
    Smith, R. B. and Barstad, I. (2004). A linear theory of orographic precipitation.
    Journal of the Atmospheric Sciences, 61(12), 1377-1391.
    https://doi.org/10.1175/1520-0469(2004)061<1377:ALTOOP>2.0.CO;2

    Examples
    --------
    >>> from climwidgets.compute.linear_model import water_vapour_scale_height
    >>> round(float(water_vapour_scale_height(10.0)))  # m
    2276
    """
    t: np.ndarray = np.asarray(temperature_c, dtype=float) + 273.15
    return R_VAPOUR * t**2 / (LATENT_HEAT_VAPORISATION * lapse_rate)


def vertical_wavenumber(sigma: Any, k: Any, l: Any, nm: float) -> np.ndarray:
    """Vertical wavenumber m(k, l) of hydrostatic flow over terrain with moist stability Nm.

    m² = (Nm² − σ²) / σ² · (k² + l²)  (S&B 2004, their eq. for m, from memory: eq. 12).
    σ² < Nm²: m is real, propagating waves; its sign is sgn(σ), the radiation condition
    that sends wave energy upward.  σ² > Nm²: m is imaginary, m = i·sqrt(−m²) with a
    positive imaginary part so the disturbance decays with height (evanescent).  σ = 0
    gives m = 0 (the source i σ ĥ vanishes there anyway).

    Parameters
    ----------
    sigma
        Intrinsic frequency σ = U k + V l, s-1 (array).
    k, l
        Horizontal wavenumbers, rad m-1, broadcast against ``sigma``.
    nm
        Moist buoyancy frequency Nm, s-1.

    Returns
    -------
    numpy.ndarray
        Complex m, rad m-1, of the broadcast shape.

    References
    ----------
    Smith, R. B. and Barstad, I. (2004). A linear theory of orographic precipitation.
    Journal of the Atmospheric Sciences, 61(12), 1377-1391.
    https://doi.org/10.1175/1520-0469(2004)061<1377:ALTOOP>2.0.CO;2

    Examples
    --------
    >>> import numpy as np
    >>> from climwidgets.compute.linear_model import vertical_wavenumber
    >>> # propagating (real, with the sign of sigma), evanescent (imaginary), sigma = 0
    >>> m = vertical_wavenumber(np.array([1e-3, -1e-3, 2e-2, 0.0]), 1e-3, 0.0, 0.01)
    >>> (m.real * 1e3).round(3), (m.imag * 1e3).round(3)  # per km
    (array([ 9.95, -9.95,  0.  ,  0.  ]), array([0.   , 0.   , 0.866, 0.   ]))
    """
    sigma = np.asarray(sigma, dtype=float)
    kh2 = np.asarray(k, dtype=float) ** 2 + np.asarray(l, dtype=float) ** 2
    s2 = sigma**2
    with np.errstate(divide="ignore", invalid="ignore"):
        m2 = np.where(s2 > 0, (nm**2 - s2) / np.where(s2 > 0, s2, 1.0) * kh2, 0.0)
    root = np.sqrt(np.abs(m2))
    return np.where(m2 >= 0, np.sign(sigma) * root, 1j * root)


def _lt_core(
    h: np.ndarray,
    dx: float,
    dy: float,
    u: float,
    v: float,
    cw: float,
    hw: float,
    nm: float,
    tau_c: float,
    tau_f: float,
    pad_y: int,
    pad_x: int,
) -> np.ndarray:
    """Precipitation (kg m-2 s-1) on the last two axes (lat, lon) of terrain h (m)."""
    # Sea and missing cells are flat at sea level: the theory needs terrain heights >= 0.
    h = np.maximum(np.nan_to_num(np.asarray(h, dtype=float), nan=0.0), 0.0)
    ny, nx = h.shape[-2:]
    big_y, big_x = next_fast_len(ny + 2 * pad_y), next_fast_len(nx + 2 * pad_x)
    hp = np.zeros(h.shape[:-2] + (big_y, big_x))
    hp[..., pad_y : pad_y + ny, pad_x : pad_x + nx] = h
    k = 2 * np.pi * np.fft.fftfreq(big_x, dx)
    l = 2 * np.pi * np.fft.fftfreq(big_y, dy)
    kk, ll = np.meshgrid(k, l)
    sigma = u * kk + v * ll
    m = vertical_wavenumber(sigma, kk, ll, nm)
    denom = (1 - 1j * m * hw) * (1 + 1j * sigma * tau_c) * (1 + 1j * sigma * tau_f)
    phat = cw * 1j * sigma * np.fft.fft2(hp) / denom
    p = np.fft.ifft2(phat).real
    return p[..., pad_y : pad_y + ny, pad_x : pad_x + nx]


def _spacing(coord: np.ndarray, name: str, func: str) -> float:
    if coord.size < 3:
        raise ParameterError(
            f"the elevation grid has {coord.size} {name} value(s)",
            source=func,
            variable=name,
            expected="at least 3 cells along lat and lon",
            fix="use a larger terrain domain",
        )
    d = np.diff(coord)
    if np.max(np.abs(d - d.mean())) > 1e-6 * abs(d.mean()) + 1e-9:
        raise ParameterError(
            f"the {name} spacing is not uniform: steps range from {d.min():.6g} to {d.max():.6g} degrees",
            source=func,
            variable=name,
            expected="a regular lat/lon grid (the model works with a Fourier transform)",
            fix="regrid the elevation onto a regular grid first, for example with "
            "climwidgets.regrid(elevation, target, method='bilinear')",
        )
    return float(d.mean())


def _positive(value: Any, name: str, func: str, expected: str, fix: str, allow_zero: bool = True) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = float("nan")
    if not np.isfinite(v) or v < 0 or (v == 0 and not allow_zero):
        bound = ">= 0" if allow_zero else "> 0"
        raise ParameterError(
            f"{name}={value!r} must be a finite number {bound}", source=func, variable=name, expected=expected, fix=fix
        )
    return v


def linear_orographic_precip(
    elevation: xr.DataArray,
    wind_speed: float = 10.0,
    wind_from: float = 270.0,
    temperature_c: float = 10.0,
    *,
    nm: float = 0.005,
    hw: float | None = None,
    tau_c: float = 1000.0,
    tau_f: float = 1000.0,
    p_background: float = 0.0,
    duration_hours: float | None = None,
    pad: float = 1.0,
    lapse_rate: float = STANDARD_LAPSE_RATE,
    pressure_pa: float = 101325.0,
) -> xr.DataArray:
    """Orographic precipitation from the linear theory of Smith & Barstad (2004).

    The terrain is Fourier transformed, multiplied by the transfer function

        P̂ = Cw · i σ ĥ / ((1 − i m Hw)(1 + i σ τc)(1 + i σ τf)),   σ = U k + V l,

    transformed back, the background rate added and negative values set to zero.  The
    vertical wavenumber m is given by :func:`vertical_wavenumber` (S&B 2004, eq. 12 from
    memory: m² = (Nm² − σ²)/σ² · (k² + l²), real with sgn(m) = sgn(σ) when σ² < Nm²,
    imaginary with positive imaginary part when σ² > Nm²).  Cw = ρ_Sref Γm / γ
    (:func:`condensation_coefficient`) and Hw = R_v T² / (L γ)
    (:func:`water_vapour_scale_height`) follow S&B 2004 section 2, with ρ_Sref and Γm from
    :mod:`climwidgets.compute.thermo` at the surface temperature and pressure.

    Distances come from the lat/lon spacing on a local tangent plane: metres per degree
    of latitude R·π/180 and of longitude R·π/180·cos(mean latitude), R = 6 371 007.2 m.
    Fine for domains up to a few hundred km; over larger domains the east-west scale
    drifts with latitude.  The domain is zero-padded before the transform so that the
    periodic transform does not carry the lee of one edge onto the other.

    Parameters
    ----------
    elevation
        Terrain height (m) on a regular (lat, lon) grid, lat ascending.  Negative and
        missing values are treated as sea level (0 m); terrain should fall to 0 at the
        domain edges (the padding is at 0 m), else subtract a base level first.
    wind_speed
        Speed of the uniform low-level wind, m s-1, > 0.  Usual 5-25; default 10.
    wind_from
        Direction the wind blows from, degrees clockwise from north, 0-360; default 270
        (westerly, so west-facing slopes are windward).
    temperature_c
        Surface (sea-level) air temperature, °C; sets Cw and Hw.  Usual 0-25; default 10.
    nm
        Moist buoyancy frequency Nm, s-1, >= 0.  Usual 0-0.01; default 0.005.  0 means
        a neutral moist atmosphere (evanescent, potential flow).
    hw
        Water-vapour scale height Hw, m, >= 0.  Default None: R_v T² / (L γ), about
        2-3 km; 0 switches off the airflow-dynamics factor.
    tau_c, tau_f
        Time delays of conversion of cloud water to hydrometeors and of their fallout, s,
        >= 0.  Usual 200-2000; defaults 1000 each (S&B 2004 discuss about 1000 s).
        0 gives instant conversion / fallout.
    p_background
        Background (non-orographic) rate P∞, mm h-1, >= 0, added before negatives are
        truncated: the result is max(P_orographic + P∞, 0) (S&B 2004, from memory).
        Default 0: the orographic part alone, which is 0 wherever the lee descends.
        With P∞ > 0 the lee keeps the background minus the descent's drying, so a
        leeward/windward ratio becomes informative; a light frontal rain of 1-3 mm h-1
        is a plausible choice (light rain is up to about 2.5 mm h-1, common practice).
    duration_hours
        None (default): return a rate in mm h-1.  A number > 0: the depth in mm over that
        many hours of steady conditions.
    pad
        Zero padding on each side, as a fraction of the domain size in that direction,
        >= 0; default 1.0 (the transform sees a domain three times as large in each
        direction).  With a stable atmosphere the mountain-wave response decays slowly:
        on a 130 km domain around a 10 km hill the domain total moves by about 2.5 % from
        pad=0.5 to pad=3 and by under 1 % from pad=1; use more when rain or lee effects
        reach the domain edge, less (down to 0, no padding) to save memory.
    lapse_rate
        Environmental lapse rate γ, K m-1, > 0 and below the dry adiabatic rate
        (0.0098); default 0.0065.
    pressure_pa
        Surface pressure for Γm, Pa; default 101325.

    Returns
    -------
    xarray.DataArray
        ``orographic_precipitation`` on the elevation grid in mm h-1 (or mm with
        ``duration_hours``), with the constants used (Cw, Hw, Γm, U, V) in attrs.  Lazy on
        dask input (the lat/lon plane is brought into one chunk, since the transform
        needs the whole domain).

    Raises
    ------
    climwidgets.errors.ParameterError
        A parameter outside its range (negative, not finite, temperature outside
        -40..45 °C, lapse rate not below the dry adiabatic rate), fewer than 3 cells
        along an axis, or a grid spacing that is not uniform.
    climwidgets.errors.GridError
        An elevation without usable 1-D lat/lon coordinates.

    References
    ----------
    Smith, R. B. and Barstad, I. (2004). A linear theory of orographic precipitation.
    Journal of the Atmospheric Sciences, 61(12), 1377-1391.
    https://doi.org/10.1175/1520-0469(2004)061<1377:ALTOOP>2.0.CO;2

    Smith, R. B. (2003). A linear upslope-time-delay model for orographic precipitation.
    Journal of Hydrology, 282, 2-9.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> import climwidgets as cw
    >>> lat = np.linspace(-0.5, 0.5, 21)
    >>> lon = np.linspace(-170.5, -169.5, 21)  # an invented 1 km hill in the open ocean
    >>> h = 1000.0 * np.exp(-((lat[:, None] / 0.15) ** 2 + ((lon[None, :] + 170.0) / 0.15) ** 2))
    >>> elevation = xr.DataArray(h, dims=("lat", "lon"), coords={"lat": lat, "lon": lon},
    ...                          attrs={"units": "m"})
    >>> rate = cw.linear_orographic_precip(elevation, wind_speed=10.0, wind_from=270.0)
    >>> rate.attrs["units"], round(float(rate.max()), 1)
    ('mm h-1', 2.9)
    >>> row = rate.isel(lat=10)  # through the summit (index 10): wet to the west, dry lee
    >>> round(float(row.isel(lon=7)), 1), round(float(row.isel(lon=13)), 1)
    (2.0, 0.0)
    """
    func = "linear_orographic_precip"
    lat, lon = _crest.grid_coords(elevation, func, "elevation")
    speed = _positive(
        wind_speed,
        "wind_speed",
        func,
        "wind speed in m/s, > 0 (usual 5-25)",
        "pass a positive speed such as wind_speed=10.0",
        allow_zero=False,
    )
    w = _crest.check_wind_from(wind_from, func)
    try:
        t = float(temperature_c)
    except (TypeError, ValueError):
        t = float("nan")
    if not -40.0 <= t <= 45.0:
        raise ParameterError(
            f"temperature_c={temperature_c!r} is outside -40..45 °C",
            source=func,
            variable="temperature_c",
            expected="surface air temperature in °C",
            fix="pass degrees Celsius, e.g. 10.0 (not kelvin)",
        )
    nm = _positive(nm, "nm", func, "moist buoyancy frequency in s-1, >= 0 (usual 0-0.01)", "pass nm=0.005")
    tau_c = _positive(tau_c, "tau_c", func, "time delay in s, >= 0 (usual 200-2000)", "pass tau_c=1000.0")
    tau_f = _positive(tau_f, "tau_f", func, "time delay in s, >= 0 (usual 200-2000)", "pass tau_f=1000.0")
    p_background = _positive(p_background, "p_background", func, "rate in mm/h, >= 0", "pass p_background=0.0")
    pad = _positive(pad, "pad", func, "padding as a fraction of the domain, >= 0", "pass pad=1.0")
    gamma = _positive(
        lapse_rate,
        "lapse_rate",
        func,
        "environmental lapse rate in K/m, 0 < lapse_rate < 0.0098",
        "pass lapse_rate=0.0065",
        allow_zero=False,
    )
    if gamma >= 0.0098:
        raise ParameterError(
            f"lapse_rate={lapse_rate!r} is not below the dry adiabatic rate",
            source=func,
            variable="lapse_rate",
            expected="a stable environmental lapse rate, 0 < lapse_rate < 0.0098 K/m",
            fix="pass K per metre, e.g. 0.0065 (not K/km)",
        )
    if hw is not None:
        hw = _positive(
            hw,
            "hw",
            func,
            "water-vapour scale height in m, >= 0 (usual 1500-3500)",
            "pass hw=None to derive it from the temperature",
        )
    if duration_hours is not None:
        duration_hours = _positive(
            duration_hours,
            "duration_hours",
            func,
            "hours, > 0",
            "pass duration_hours=24 or None for a rate",
            allow_zero=False,
        )
    dlat, dlon = _spacing(lat, "lat", func), _spacing(lon, "lon", func)

    lat0 = float(np.mean(lat))
    dy = _crest.EARTH_RADIUS_M * np.deg2rad(dlat)
    dx = _crest.EARTH_RADIUS_M * np.deg2rad(dlon) * np.cos(np.deg2rad(lat0))
    ex, ny = _crest.wind_axes(w)
    u, v = speed * ex, speed * ny
    cw = float(condensation_coefficient(t, gamma, pressure_pa))
    gm = float(moist_adiabatic_lapse_rate(t, pressure_pa))
    hw_used = float(water_vapour_scale_height(t, gamma)) if hw is None else hw
    pad_y, pad_x = int(round(pad * lat.size)), int(round(pad * lon.size))

    rate: xr.DataArray = xr.apply_ufunc(
        _lt_core,
        elevation,
        kwargs=dict(
            dx=dx, dy=dy, u=u, v=v, cw=cw, hw=hw_used, nm=nm, tau_c=tau_c, tau_f=tau_f, pad_y=pad_y, pad_x=pad_x
        ),
        input_core_dims=[["lat", "lon"]],
        output_core_dims=[["lat", "lon"]],
        dask="parallelized",
        output_dtypes=[float],
        dask_gufunc_kwargs={"allow_rechunk": True},
    )
    # kg m-2 s-1 -> mm h-1 (1 kg m-2 of water is 1 mm deep)
    out = (rate * 3600.0 + p_background).clip(min=0.0)
    if duration_hours is not None:
        out = out * duration_hours
    out = out.transpose(*elevation.dims)
    out.name = "orographic_precipitation"
    out.attrs = {
        "units": "mm" if duration_hours is not None else "mm h-1",
        "long_name": "orographic precipitation, linear theory"
        + (f" over {duration_hours:g} h" if duration_hours is not None else " (rate)"),
        "method": "Smith & Barstad (2004), J. Atmos. Sci. 61, 1377-1391",
        "Cw_kg_m-3": cw,
        "Hw_m": hw_used,
        "moist_lapse_rate_K_m-1": gm,
        "lapse_rate_K_m-1": gamma,
        "wind_u_m_s-1": u,
        "wind_v_m_s-1": v,
        "nm_s-1": nm,
        "tau_c_s": tau_c,
        "tau_f_s": tau_f,
        "p_background_mm_h-1": p_background,
        "grid_dx_m": float(dx),
        "grid_dy_m": float(dy),
    }
    return with_history(
        out,
        func,
        elevation.attrs,
        wind_speed=speed,
        wind_from=w,
        temperature_c=t,
        nm=nm,
        hw=hw_used,
        tau_c=tau_c,
        tau_f=tau_f,
        p_background=p_background,
        duration_hours=duration_hours,
        pad=pad,
        lapse_rate=gamma,
    )
