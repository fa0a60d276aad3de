"""Climate-change signals per basin (climwidgets/analyses/scenario.py).

Hand-checked case: a field of 10 mm in every month but July and August, 40 mm in those,
everywhere; the future multiplies the July–August amounts of member k by F[k].  Then the
seasonal share is 80 / 180 historically and 80 F / (80 F + 100) in the future, and the
annual normal changes by (80 F + 100) / 180 − 1 (arithmetic by hand, no outside library).
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses.meta import frame
from climwidgets.analyses.scenario import basin_signals
from climwidgets.compute.scenario import SCENARIO_CAUTIONS

WEST = cw.Basin.from_vertices([(-149.0, -34.0), (-147.0, -34.0), (-147.0, -32.0), (-149.0, -32.0)], name="west")
EAST = cw.Basin.from_vertices([(-147.0, -33.0), (-145.0, -33.0), (-145.0, -31.0), (-147.0, -31.0)], name="east")
F = np.array([1.0, 1.25, 1.5, 0.9])


def _run(first, factors):
    lat = np.arange(-34.75, -30.0, 0.5)
    lon = np.arange(-149.75, -144.0, 0.5)
    time = pd.date_range(f"{first}-01-01", periods=12 * 20, freq="MS")
    summer = np.isin(time.month, (7, 8))
    data = np.where(summer[None, :], 40.0 * factors[:, None], 10.0)[:, :, None, None] * np.ones((lat.size, lon.size))
    return xr.DataArray(data, dims=("member", "time", "lat", "lon"),
                        coords={"member": ["a", "b", "c", "d"], "time": time, "lat": lat, "lon": lon},
                        attrs={"units": "mm", "step": "month",
                               "standard_name": "lwe_thickness_of_precipitation_amount"})


@pytest.fixture(scope="module")
def signals():
    return basin_signals(_run(1981, np.ones(4)), _run(2041, F), [WEST, EAST]).compute()


def test_per_member_changes_match_the_hand_computation(signals):
    share = 80.0 * F / (80.0 * F + 100.0) - 80.0 / 180.0
    normal = (80.0 * F + 100.0) / 180.0 - 1.0
    for basin in ("west", "east"):
        np.testing.assert_allclose(signals["share_change_1"].sel(basin=basin).values, share, rtol=1e-10, atol=1e-14)
        np.testing.assert_allclose(signals["normal_change_1"].sel(basin=basin).values, normal, rtol=1e-10,
                                   atol=1e-14)


def test_ensemble_figures_equal_numpy_on_the_members(signals):
    for name in ("share_change_1", "normal_change_1"):
        stacked = signals[name].transpose("basin", "member").values
        np.testing.assert_allclose(signals[f"{name}_mean"].values, stacked.mean(axis=1), rtol=1e-12)
        np.testing.assert_allclose(signals[f"{name}_lower"].values, stacked.min(axis=1), rtol=1e-12)
        np.testing.assert_allclose(signals[f"{name}_upper"].values, stacked.max(axis=1), rtol=1e-12)
    # signs 0, +, +, −; median > 0, so two of four agree
    np.testing.assert_allclose(signals["share_change_1_agreement"].values, 0.5)


def test_table_labels_periods_and_cautions(signals):
    shown = frame(signals, display=True)
    assert "change in seasonal share, ensemble mean [% points]" in shown.columns
    assert "change in annual normal, highest member [%]" in shown.columns
    assert signals.attrs["historical_period"] == [1981, 2000]
    assert signals.attrs["future_period"] == [2041, 2060]
    assert signals.attrs["cautions"] == list(SCENARIO_CAUTIONS)
