"""compute/_qdm.py: multiplicative quantile delta mapping (QDM).

Reference: Cannon, Sobie & Murdock (2015), J. Climate 28, 6938-6959, eq. 4-6: a future value at
non-exceedance probability tau is mapped to F_obs^-1(tau) * x_fut / F_hist^-1(tau), so the
model's relative change at each quantile is carried over to the observations.
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

from climwidgets.compute._qdm import quantile_delta_map
from climwidgets.errors import InsufficientDataError


def _series(values, start):
    time = pd.date_range(start, periods=len(values), freq="D")
    return xr.DataArray(np.asarray(values, float), dims="time", coords={"time": time})


def _wet(rng, n, scale):
    return rng.gamma(0.8, scale, n) + 1.0  # every day wet (above the trace)


def test_each_value_keeps_its_quantiles_relative_change():
    rng = np.random.default_rng(1)
    obs = _series(_wet(rng, 31, 4.0), "2001-01-01")
    hist = _series(_wet(rng, 25, 6.0), "2002-01-01")
    fut = _series(_wet(rng, 20, 9.0), "2003-01-01")
    out = quantile_delta_map(obs, hist, fut, "month", trace=0.1, max_ratio=10.0, seed=0, jitter=False)
    f = fut.values
    tau = np.argsort(np.argsort(f)) / (f.size - 1.0)  # rank / (n - 1), no ties
    # Outside reference: numpy.quantile (its default "linear" method is Hyndman & Fan type 7).
    q_obs = np.array([np.quantile(obs.values, t) for t in tau])
    q_hist = np.array([np.quantile(hist.values, t) for t in tau])
    # Cannon et al. (2015) eq. 6: adjusted / obs quantile == future / historical quantile.
    np.testing.assert_allclose(out.values / q_obs, f / q_hist, rtol=1e-12)


def test_uniform_factor_in_the_model_scales_every_observed_quantile():
    # Hand arithmetic: fut = 1.5 * hist (same length) means a relative change of 1.5 at every
    # quantile, so the adjusted series is the observations' distribution times 1.5.
    rng = np.random.default_rng(2)
    obs = _series(_wet(rng, 28, 3.0), "2001-02-01")
    hist = _series(_wet(rng, 28, 5.0), "2002-02-01")
    fut = _series(1.5 * hist.values, "2003-02-01")
    out = quantile_delta_map(obs, hist, fut, "month", trace=0.1, max_ratio=10.0, seed=0, jitter=False)
    np.testing.assert_allclose(np.sort(out.values), 1.5 * np.sort(obs.values), rtol=1e-12)
    assert out["time"].equals(fut["time"])


def test_no_model_bias_leaves_the_future_run_unchanged():
    rng = np.random.default_rng(3)
    obs = _series(_wet(rng, 31, 4.0), "2001-01-01")
    fut = _series(_wet(rng, 31, 7.0), "2003-01-01")
    out = quantile_delta_map(obs, obs, fut, "month", trace=0.1, max_ratio=10.0, seed=0, jitter=False)
    np.testing.assert_allclose(out.values, fut.values, rtol=1e-12)


def test_dry_amounts_are_deterministic_and_stay_dry():
    rng = np.random.default_rng(4)
    values = np.where(rng.random(31) < 0.4, 0.0, _wet(rng, 31, 4.0))
    obs, hist = _series(values, "2001-01-01"), _series(values, "2002-01-01")
    fut = _series(values, "2003-01-01")
    a = quantile_delta_map(obs, hist, fut, "month", trace=0.1, max_ratio=10.0, seed=7)
    b = quantile_delta_map(obs, hist, fut, "month", trace=0.1, max_ratio=10.0, seed=7)
    np.testing.assert_array_equal(a.values, b.values)
    assert np.all(a.values[values == 0.0] == 0.0)


def test_a_future_month_without_calibration_data_is_refused():
    rng = np.random.default_rng(5)
    obs = _series(_wet(rng, 31, 4.0), "2001-01-01")
    fut = _series(_wet(rng, 28, 4.0), "2003-02-01")
    with pytest.raises(InsufficientDataError, match="month 2"):
        quantile_delta_map(obs, obs, fut, "month", trace=0.1, max_ratio=10.0, seed=0)
