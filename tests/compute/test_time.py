"""The input contract of the compute functions (climwidgets/compute/_time.py).

Any depth or rate units the loader accepts are converted; attributes lost through xarray
arithmetic raise an error that says how to keep them.  Hand-computed totals: a constant
rate over known steps (1 kg m-2 of water = 1 mm, 1 in = 25.4 mm exactly, 86 400 s per day;
SI Brochure and the international inch, from memory).
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.errors import TimeAxisError, UnitsError


def _daily(units="mm", step="day", value=1.0, names=("time", "lat", "lon")):
    t = pd.date_range("2001-01-01", "2002-12-31", freq="D")
    attrs = {k: v for k, v in (("units", units), ("step", step)) if v is not None}
    return xr.DataArray(
        np.full((t.size, 2, 2), value),
        dims=names,
        coords={names[0]: t, names[1]: [1.0, 2.0], names[2]: [3.0, 4.0]},
        attrs=attrs,
        name="pr",
    )


@pytest.mark.parametrize(
    "units,value,per_day_mm",
    [
        ("mm", 2.0, 2.0),
        ("cm", 0.2, 2.0),
        ("in", 1.0, 25.4),
        ("kg m-2", 2.0, 2.0),
        ("mm/day", 2.0, 2.0),
        ("mm/h", 0.5, 12.0),
        ("kg m-2 s-1", 1e-5, 0.864),
        ("m", 0.002, 2.0),
    ],
)
def test_any_accepted_units_give_hand_computed_totals(units, value, per_day_mm):
    annual = cw.annual_totals(_daily(units, value=value))
    np.testing.assert_allclose(annual.values, per_day_mm * 365, rtol=1e-12)  # 2001 and 2002: 365 days


def test_step_is_found_from_the_stamps_when_absent():
    annual = cw.annual_totals(_daily("mm/day", step=None, value=1.0))
    np.testing.assert_allclose(annual.values, 365.0)


def test_cf_names_are_accepted():
    pr = _daily(names=("valid_time", "latitude", "longitude"))
    annual = cw.annual_totals(pr)
    assert annual.dims == ("year", "lat", "lon")
    np.testing.assert_allclose(annual.values, 365.0)


def test_arithmetic_that_dropped_attrs_is_refused_with_the_fix():
    pr = _daily()
    # xarray releases differ in their default (older ones drop attrs in arithmetic); ask for it
    with xr.set_options(keep_attrs=False):
        dropped = pr * 1.05
    with pytest.raises(UnitsError, match="no attributes at all.*pr \\* 1.05 drops.*keep_attrs=True.*assign_attrs"):
        cw.annual_totals(dropped)
    with xr.set_options(keep_attrs=True):
        scaled = pr * 1.05
    np.testing.assert_allclose(cw.annual_totals(scaled).values, 1.05 * 365, rtol=1e-12)
    np.testing.assert_allclose(cw.annual_totals((pr * 1.05).assign_attrs(pr.attrs)).values, 1.05 * 365, rtol=1e-12)
    with pytest.raises(UnitsError, match="no 'units' attribute"):
        cw.monthly_totals(pr.drop_attrs().assign_attrs(step="day"))


def test_other_bad_inputs_are_explained():
    with pytest.raises(UnitsError, match="per-month units 'mm/month' but day steps"):
        cw.annual_totals(_daily("mm/month"))
    with pytest.raises(UnitsError, match="not a precipitation depth or rate"):
        cw.annual_totals(_daily("m2"))
    half_hourly = (
        _daily()
        .isel(time=slice(0, 48))
        .assign_coords(time=pd.date_range("2001-01-01", periods=48, freq="30min"))
        .assign_attrs(step=None)
    )
    half_hourly.attrs.pop("step")
    with pytest.raises(TimeAxisError, match="30min steps.*open_precip\\(pr\\).*hourly totals"):
        cw.monthly_totals(half_hourly)


def test_conversion_is_lazy_and_the_input_untouched():
    pr = _daily("mm/day").chunk({"time": 100})
    before = pr.copy(deep=True)
    out = cw.monthly_totals(pr)
    assert out.chunks is not None
    xr.testing.assert_identical(pr, before)
