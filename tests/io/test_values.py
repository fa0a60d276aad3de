"""io/values.py: stored values to depths (factor, fill codes, negatives, plausible bound)."""

import numpy as np
import pytest
import xarray as xr

from climwidgets.errors import DataValueError
from climwidgets.io import values


def test_convert_block_applies_the_factor_and_leaves_the_input_alone():
    block = np.array([[1.0, 2.0], [0.5, 0.0]], dtype=np.float32)
    before = block.copy()
    # Hand arithmetic: a rate in kg m-2 s-1 over one day is 86 400 mm per unit.
    out = values.convert_block(block, 86400.0, mask_fill=False, guard=True)
    np.testing.assert_allclose(out, [[86400.0, 172800.0], [43200.0, 0.0]])
    assert out.dtype == np.float64
    np.testing.assert_array_equal(block, before)


def test_convert_block_masks_fill_codes_and_zeroes_tiny_negatives():
    block = np.array([1.0, -9999.0, 1e20, -0.005])
    out = values.convert_block(block, 1.0, mask_fill=True, guard=True)
    np.testing.assert_array_equal(np.isnan(out), [False, True, True, False])
    assert out[0] == 1.0 and out[3] == 0.0  # -0.005 mm is within the 0.01 mm tolerance


def test_convert_block_refuses_real_negatives():
    with pytest.raises(DataValueError, match="negative precipitation"):
        values.convert_block(np.array([1.0, -0.5]), 1.0, mask_fill=False, guard=True, source="a.nc", name="pr")


def test_convert_block_refuses_implausible_depths_and_says_where():
    labels = (np.array(["2001-01-01", "2001-01-02"]), np.array([10.0, 11.0]))
    block = np.array([[1.0, 2.0], [3.0, 5000.0]])
    with pytest.raises(DataValueError, match=r"time=2001-01-02, lat=11"):
        values.convert_block(block, 1.0, *labels, mask_fill=False, guard=True, max_depth=1000.0, dims=["time", "lat"])


def test_default_max_depth_is_twice_the_record_envelope():
    # Hand arithmetic from the Jennings (1950) envelope P = 422 mm x D^0.475 (from memory):
    # one hour -> 2 x 422 = 844 mm; 24 h -> 2 x 422 x 24**0.475.
    assert values.default_max_depth(3600.0) == pytest.approx(844.0)
    assert values.default_max_depth(86400.0) == pytest.approx(2 * 422.0 * 24**0.475)


def test_mask_likely_fill_and_needs_fill_heuristics():
    out = values.mask_likely_fill(np.array([-999, 3, 32767], dtype=np.int16))
    np.testing.assert_array_equal(np.isnan(out), [True, False, False])
    assert values.needs_fill_heuristics({}, {})
    assert not values.needs_fill_heuristics({"_FillValue": -1.0}, {})


def test_check_packing_refuses_a_text_scale_factor():
    da = xr.DataArray([1.0], attrs={"scale_factor": "0.1"})
    with pytest.raises(DataValueError, match="scale_factor"):
        values.check_packing(da, "a.nc", "pr")


def test_check_values_refuses_all_missing_and_negatives():
    time = xr.DataArray(np.arange(3), dims="time")
    with pytest.raises(DataValueError, match="no valid values"):
        values.check_values(xr.DataArray([np.nan] * 3, dims="time", coords={"time": time}), "a.nc", "pr")
    with pytest.raises(DataValueError, match="1 negative value"):
        values.check_values(xr.DataArray([1.0, -2.0, 0.0], dims="time", coords={"time": time}), "a.nc", "pr")
