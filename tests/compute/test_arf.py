"""Checks of climwidgets.compute.arf.areal_reduction_factor.

Sources beside each check: the closed form of Leclerc & Schaake (1972, MIT Parsons
Laboratory Report 142) fitted to the fixed-area curves of U.S. Weather Bureau Technical
Paper 29 (1957-60); curve readings of TP-29 are from memory.
"""

import math

import numpy as np
import pytest
import xarray as xr

from climwidgets.compute.arf import (
    SQUARE_MILE_KM2,
    ARFExtrapolationWarning,
    areal_reduction_factor,
)
from climwidgets.errors import ParameterError

MI2 = SQUARE_MILE_KM2


def test_published_formula_values():
    # Leclerc & Schaake (1972) form, evaluated by hand (from memory): 24 h, 100 mi² -> 0.945;
    # 24 h, 400 mi² -> 0.914; 1 h, 100 mi² -> 0.790
    got = areal_reduction_factor([24.0, 24.0, 1.0], xr.DataArray([100 * MI2, 400 * MI2, 100 * MI2], dims="duration"))
    np.testing.assert_allclose(got, [0.945, 0.914, 0.790], atol=6e-4)
    # the same formula written out independently
    for t, a in ((24, 100), (6, 50), (0.5, 10), (3, 400)):
        e = math.exp(-1.1 * t**0.25)
        expect = 1 - e + e * math.exp(-0.01 * a)
        assert float(areal_reduction_factor(t, a * MI2)) == pytest.approx(expect, rel=1e-12)


def test_against_tp29_curve_readings_from_memory():
    # TP-29 fixed-area curves (as reproduced in NOAA Atlas 2, 1973), read from memory:
    # at 400 mi² the 24-hour curve is near 91 %, the 30-minute curve near 60 %; at 10 mi²
    # every curve is above 90 %.  Tolerance covers reading the printed curves.
    assert float(areal_reduction_factor(24.0, 400 * MI2)) == pytest.approx(0.91, abs=0.02)
    assert float(areal_reduction_factor(0.5, 400 * MI2)) == pytest.approx(0.60, abs=0.03)
    assert (areal_reduction_factor([0.5, 1, 3, 6, 24], 10 * MI2) > 0.9).all()


def test_shape_of_the_curves():
    t = np.array([0.5, 1, 2, 3, 6, 12, 24])
    a = np.array([0.0, 10, 100, 500, 1000])
    f = areal_reduction_factor(t, a)
    assert f.dims == ("duration", "area")
    np.testing.assert_allclose(f[:, 0], 1.0)  # no reduction at zero area
    assert (np.diff(f.values[:, 1:], axis=0) > 0).all()  # rises with duration (area > 0)
    assert (np.diff(f.values, axis=1) < 0).all()  # falls with area
    assert f.attrs["extrapolated"] == 0 and f.attrs["units"] == "1"


def test_extrapolation_is_flagged():
    with pytest.warns(ARFExtrapolationWarning, match="extrapolation"):
        f = areal_reduction_factor(48.0, 100.0)
    assert f.attrs["extrapolated"] == 1
    with pytest.warns(ARFExtrapolationWarning):
        areal_reduction_factor(6.0, 5000.0)


def test_bad_input():
    with pytest.raises(ParameterError, match="duration_hours"):
        areal_reduction_factor(0.0, 10.0)
    with pytest.raises(ParameterError, match="area_km2"):
        areal_reduction_factor(1.0, -1.0)
    with pytest.raises(ParameterError, match="area_km2"):
        areal_reduction_factor(1.0, float("nan"))
