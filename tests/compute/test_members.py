"""Ensemble dimensions flow through the compute functions: per-member results equal the
same function applied to each member alone (numpy and dask)."""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.compute.anomaly import tercile_category
from climwidgets.compute.normals import annual_normal, seasonal_normal
from climwidgets.compute.seasonal import seasonal_totals


@pytest.fixture(scope="module")
def ensemble():
    rng = np.random.default_rng(3)
    t = pd.date_range("1991-03-01", "2021-12-31", freq="D")  # starts in March: partial first year
    vals = rng.gamma(0.6, 5.0, (3, t.size, 2, 2))
    vals[1, 40:45, 0, 0] = np.nan  # a gap in one member only
    return xr.DataArray(
        vals,
        dims=("member", "time", "lat", "lon"),
        coords={"member": ["a", "b", "c"], "time": t, "lat": [1.0, 2.0], "lon": [3.0, 4.0]},
        attrs={"units": "mm", "step": "day"},
        name="pr",
    )


FUNCS = {
    "monthly_totals": cw.monthly_totals,
    "annual_totals": lambda p: cw.annual_totals(p, year_start=10),
    "seasonal_totals": lambda p: seasonal_totals(p, (11, 12, 1, 2, 3)),
    "seasonal_fraction": lambda p: cw.seasonal_fraction(p, (7, 8)),
    "normals": cw.normals,
    "annual_normal": annual_normal,
    "seasonal_normal": lambda p: seasonal_normal(p, (6, 7, 8)),
    "anomaly_month": lambda p: cw.anomaly(p, kind="standardized"),
    "anomaly_year": lambda p: cw.anomaly(p, period="year"),
    "terciles": tercile_category,
    "spi": lambda p: cw.spi(p, scale=3),
    "annual_maxima": lambda p: cw.annual_maxima(p, duration_days=3),
}


@pytest.mark.parametrize("name", FUNCS)
def test_per_member_results_equal_per_member_computations(ensemble, name):
    f = FUNCS[name]
    together = f(ensemble)
    assert "member" in together.dims
    for m in ensemble.member.values:
        alone = f(ensemble.sel(member=m, drop=True))
        np.testing.assert_allclose(
            together.sel(member=m).transpose(*alone.dims).values, alone.values, rtol=1e-12, equal_nan=True
        )


@pytest.mark.parametrize("name", ["annual_totals", "normals", "spi"])
def test_members_stay_lazy(ensemble, name):
    lazy = FUNCS[name](ensemble.chunk({"time": 2000, "member": 1}))
    assert lazy.chunks is not None
    np.testing.assert_allclose(lazy.values, FUNCS[name](ensemble).values, rtol=1e-12, atol=1e-12, equal_nan=True)
