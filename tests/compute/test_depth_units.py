"""Checks of climwidgets.compute.depth_units against pint (1 inch = 25.4 mm exactly)."""

import numpy as np
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute.depth_units import MM_PER_INCH, convert_depth
from climwidgets.errors import ParameterError


def test_inch_constant_against_pint():
    pint = pytest.importorskip("pint")
    ureg = pint.UnitRegistry()
    assert ureg.Quantity(1.0, "inch").to("millimeter").magnitude == pytest.approx(MM_PER_INCH, rel=1e-15)
    assert cw.MM_PER_INCH == 25.4


def test_convert_only_depths_and_keep_input():
    ds = xr.Dataset(
        {
            "estimate": ("period", [25.4, 50.8], {"units": "mm"}),
            "shape": ((), -0.1, {"units": "1"}),
            "n_years": ((), 40.0),
        }
    )
    out = convert_depth(ds, "in")
    np.testing.assert_allclose(out["estimate"], [1.0, 2.0])
    assert out["estimate"].attrs["units"] == "in" and out["shape"].attrs["units"] == "1"
    assert float(out["shape"]) == -0.1 and out.attrs["depth_units"] == "in"
    assert ds["estimate"].attrs["units"] == "mm" and float(ds["estimate"][0]) == 25.4  # input untouched
    assert convert_depth(ds, "mm") is ds
    lazy = convert_depth(ds.chunk(), "in")
    assert lazy["estimate"].chunks is not None
    da = convert_depth(ds["estimate"], "in")
    assert da.attrs["units"] == "in" and da.attrs["mm_per_inch"] == 25.4


def test_bad_units():
    with pytest.raises(ParameterError, match="'mm' or 'in'"):
        convert_depth(xr.DataArray([1.0], attrs={"units": "mm"}), "ft")
    with pytest.raises(ParameterError, match="cannot convert"):
        convert_depth([1.0], "in")
