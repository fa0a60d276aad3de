"""Checks of climwidgets.compute.warming: the what-if scaling factors and the cautions."""

import math

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute.thermo import clausius_clapeyron_rate
from climwidgets.compute.warming import CC_RATE_20C, warming_scaling
from climwidgets.errors import ParameterError


def depths():
    return xr.DataArray(
        [[100.0, 50.0], [80.0, 0.0]],
        dims=("lat", "lon"),
        name="estimate",
        attrs={"units": "mm", "history": "made by hand"},
    )


def test_compound_and_exponential_factors():
    # arithmetic identities: (1.07)^2 = 1.1449 and exp(0.14) = 1.150274 (to 7 digits)
    out = warming_scaling(depths(), delta_t=2.0, rate=0.07)
    np.testing.assert_allclose(out / depths(), np.where(depths() > 0, 1.1449, np.nan), rtol=1e-12)
    assert float(out[0, 0]) == pytest.approx(114.49, rel=1e-12)
    exp = warming_scaling(depths(), delta_t=2.0, rate=0.07, convention="exponential")
    assert float(exp[0, 0]) / 100.0 == pytest.approx(1.150274, rel=1e-6)
    assert float(exp[0, 0]) / 100.0 == pytest.approx(math.exp(0.14), rel=1e-14)
    # zero warming changes nothing; attrs and history carried forward
    same = warming_scaling(depths(), delta_t=0.0)
    xr.testing.assert_allclose(same, depths())
    assert out.attrs["units"] == "mm" and out.attrs["warming_convention"] == "compound"
    assert out.attrs["history"].startswith("made by hand\n")
    assert out.attrs["cautions"] == cw.DESIGN_DEPTH_CAUTIONS


def test_default_rate_is_near_clausius_clapeyron():
    # d ln e_s/dT at 20 degC from the Alduchov & Eskridge (1996) Magnus form is 6.191 %/K;
    # the default 7 %/K is the commonly quoted round figure (Atmosphere 2020, 11(8), 786)
    assert CC_RATE_20C == pytest.approx(float(clausius_clapeyron_rate(20.0)))
    assert 100 * CC_RATE_20C == pytest.approx(6.191, abs=1e-3)
    assert "6.2 %/K" in warming_scaling.__doc__ and "7 %" in warming_scaling.__doc__


def test_dataset_dask_and_scenarios():
    ds = xr.Dataset(dict(estimate=depths(), shape=xr.DataArray(-0.1, attrs={"units": "1"})))
    out = warming_scaling(ds, 1.0)
    np.testing.assert_allclose(out["estimate"], depths() * 1.07, rtol=1e-12)
    assert float(out["shape"]) == -0.1  # parameters without depth units are left alone
    lazy = warming_scaling(depths().chunk(lat=1), 1.5)
    assert lazy.chunks is not None
    np.testing.assert_allclose(lazy.compute(), depths() * 1.07**1.5, rtol=1e-12)
    dt = xr.DataArray([1.0, 2.0], dims="scenario")
    both = warming_scaling(depths(), dt)
    np.testing.assert_allclose(both.isel(lat=0, lon=0), [107.0, 114.49], rtol=1e-12)


def test_cautions_content():
    text = " ".join(cw.DESIGN_DEPTH_CAUTIONS).lower()
    for word in ("planning", "point", "stationary", "jurisdiction", "codes", "licensed engineering"):
        assert word in text


def test_errors():
    with pytest.raises(ParameterError) as e:
        warming_scaling(depths(), 2.0, rate=7)
    assert "0.07" in str(e.value) and "rate" in str(e.value)
    with pytest.raises(ParameterError, match="compound"):
        warming_scaling(depths(), 2.0, convention="linear")
    with pytest.raises(ParameterError, match="kelvin"):
        warming_scaling(depths(), float("nan"))
    with pytest.raises(ParameterError, match="DataArray or Dataset"):
        warming_scaling([1.0, 2.0], 2.0)
