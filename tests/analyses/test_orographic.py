"""analyses/orographic.py: observed windward/leeward contrast beside the linear model's.

References: the public functions called directly with the same parameters (cw.annual_totals,
cw.rain_shadow, cw.linear_orographic_precip), checked against outside sources in
tests/compute; the scene's own known answer (a wet west slope, so the lee of a westerly is drier).
"""

import numpy as np
import pandas as pd
import pytest
import xarray as xr

import climwidgets as cw
from climwidgets.analyses import orographic

N_BOOT = 50


def _scene(seed=4):
    rng = np.random.default_rng(seed)
    lat = np.arange(20.05, 21.0, 0.1)
    lon = np.arange(-100.95, -98.6, 0.1)
    ridge_lon = lon[11]
    z = 1500.0 * np.exp(-(((lon - ridge_lon) / 0.25) ** 2))[None, :] * np.ones((lat.size, 1))
    elev = xr.DataArray(z, coords={"lat": lat, "lon": lon}, dims=("lat", "lon"), attrs={"units": "m"})
    pattern = 60.0 + 0.05 * z + np.where(lon[None, :] > ridge_lon, -25.0, 0.0)
    time = pd.date_range("2001-01-01", "2005-12-01", freq="MS")
    data = pattern[None] * rng.gamma(8.0, 1 / 8.0, size=(time.size, 1, 1))
    pr = xr.DataArray(
        data,
        coords={"time": time, "lat": lat, "lon": lon},
        dims=("time", "lat", "lon"),
        name="pr",
        attrs={"units": "mm", "step": "month"},
    )
    return pr, elev


@pytest.fixture(scope="module")
def setup():
    pr, elev = _scene()
    out = orographic.orographic_contrast(pr, elev, wind_from=270.0, n_boot=N_BOOT, min_height=150.0)
    return pr, elev, out


def test_contrast_is_rain_shadow_of_the_annual_totals_and_of_the_model(setup):
    pr, elev, out = setup
    crest = cw.crest_from_elevation(elev, 270.0, min_height=150.0)
    expected = cw.rain_shadow(
        cw.annual_totals(pr), wind_from=270.0, ridge=crest, band_km=(0.0, 25.0, 50.0), n_boot=N_BOOT, ci=0.9
    )
    xr.testing.assert_allclose(out["observed"], expected)
    model = cw.linear_orographic_precip(
        elev,
        wind_speed=10.0,
        wind_from=270.0,
        temperature_c=10.0,
        p_background=orographic.MODEL_BACKGROUND_MM_H,
        tau_c=orographic.MODEL_DELAY_S,
        tau_f=orographic.MODEL_DELAY_S,
    )
    xr.testing.assert_allclose(out["model"], model)
    xr.testing.assert_allclose(
        out["model_contrast"], cw.rain_shadow(model, wind_from=270.0, ridge=crest, band_km=(0.0, 25.0, 50.0))
    )
    xr.testing.assert_allclose(out["mean"], cw.annual_totals(pr).mean("year"))
    assert (out["observed"]["ratio"] < 1).all()  # the scene's lee is drier
    assert float(out["gradients"]["windward"]["slope"]) > 0  # rain rises up the wet slope


def test_band_table_columns_and_labels(setup):
    _, _, out = setup
    stored = orographic.band_table(out["observed"], out["model_contrast"], 0.9, display=False)
    assert tuple(stored.columns) == orographic.BAND_COLUMNS
    assert list(stored.index) == ["0-25", "25-50"] and stored.index.name == "band [km]"
    np.testing.assert_allclose(stored["ratio"], out["observed"]["ratio"].values)
    np.testing.assert_allclose(stored["model_ratio"], out["model_contrast"]["ratio"].values)
    shown = orographic.band_table(out["observed"], out["model_contrast"], 0.9)
    assert any("lower 90%" in c for c in shown.columns) and any("upper 90%" in c for c in shown.columns)
