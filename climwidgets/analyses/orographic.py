"""The windward/leeward band table: observed contrast beside the linear model's.

The numbers are :func:`cw.rain_shadow` of the observed annual totals (with the bootstrap
interval of the ratio) and of the linear orographic model (Smith and Barstad 2004)
through the same crest and bands; this module puts them side by side, one row per band.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any
import pandas as pd

import numpy as np
import xarray as xr

from .. import cache
from ..compute.linear_model import linear_orographic_precip
from ..compute.orographic import crest_from_elevation, elevation_gradient, rain_shadow
from ..compute.totals import annual_totals
from ..errors import InsufficientDataError
from .meta import describe, frame

__all__ = [
    "band_dataset",
    "band_table",
    "orographic_contrast",
    "BAND_COLUMNS",
    "MODEL_NOTE",
    "MODEL_BACKGROUND_MM_H",
    "MODEL_DELAY_S",
]

# A light frontal rain as the non-orographic background of the linear model: light rain is
# up to about 2.5 mm/h (common practice).  Without it the model's lee is exactly 0 in
# every band wherever air descends, and the model's leeward/windward ratio says nothing.
MODEL_BACKGROUND_MM_H = 2.0
# Conversion and fallout delays τc = τf: about 1000 s in Smith & Barstad (2004), usual
# range 200-2000 s (from memory).
MODEL_DELAY_S = 1000.0

MODEL_NOTE = (
    "How to read the linear model beside the observations: the model gives a rate in mm per hour "
    "for one steady wind of the chosen direction, speed and temperature, with a uniform background "
    "rain added, not a climatology of many storms and winds. Compare the pattern and the "
    "leeward/windward ratio with the observed one, not the amounts. A model ratio near 0 means the "
    "descending air in the lee dries out the background rain; a larger background or longer "
    "delays carry more rain over the crest."
)

BAND_COLUMNS = ("windward_mean", "leeward_mean", "ratio", "ratio_lower", "ratio_upper", "model_ratio")


def _bands(ds: xr.Dataset) -> xr.Dataset:
    return ds if "band" in ds.dims else ds.expand_dims("band")


def orographic_contrast(
    pr: xr.DataArray,
    elevation: xr.DataArray,
    wind_from: float = 270.0,
    band_km: Sequence[float] = (0.0, 25.0, 50.0),
    ci: float = 0.9,
    n_boot: int = 500,
    wind_speed: float = 10.0,
    temperature_c: float = 10.0,
    ridge: Any = None,
    min_height: float | None = None,
    p_background: float = MODEL_BACKGROUND_MM_H,
    tau: float = MODEL_DELAY_S,
) -> dict[str, Any]:
    """The observed windward/leeward contrast beside the linear orographic model's.

    Parameters
    ----------
    pr : xarray.DataArray
        Precipitation depth per step (dims time, lat, lon).  Its annual totals are computed
        once per data set and kept in the result cache (:mod:`climwidgets.cache`).
    elevation : xarray.DataArray
        Terrain height in metres on the same grid.
    wind_from : float
        Direction the wind blows from, degrees clockwise from north.
    band_km : sequence of float
        Band edges in km from the crest along the wind.
    ci, n_boot : float, int
        Confidence level and bootstrap resamples of years for the ratio's interval.
    wind_speed, temperature_c : float
        Wind speed (m/s) and near-surface temperature (°C) of the linear model.
    ridge : list[Any] of (lon, lat), optional
        A crest drawn by hand; otherwise it is found on the terrain.
    min_height : float, optional
        Lowest terrain height of the crest found on the terrain (m).
    p_background : float
        Background (non-orographic) rate of the linear model in mm/h, added before the
        negatives of the lee are cut at 0 (default :data:`MODEL_BACKGROUND_MM_H`).
    tau : float
        The model's cloud-water conversion and fallout delays τc = τf in s (default
        :data:`MODEL_DELAY_S`).

    Returns
    -------
    dict
        ``observed`` (:func:`cw.rain_shadow` of the annual totals: per-cell ``distance_km``
        and the band statistics), ``model`` (the linear model's rate), ``model_contrast``
        (the same bands through the model), ``mean`` (the mean annual total),
        ``gradients`` (per side: the fit of the mean annual total on terrain height, cells
        above 0 m; a side with too few cells is left out) and ``crest`` (the points used).

    References
    ----------
    Smith, R. B. and Barstad, I. (2004) A linear theory of orographic precipitation.
    J. Atmos. Sci. 61, 1377-1391. doi:10.1175/1520-0469(2004)061<1377:ALTOOP>2.0.CO;2

    Examples
    --------
    A north-south ridge at 11° E, 4 mm a day west of it and 2 mm east of it (wind from
    the west): the observed leeward/windward ratio is 0.5.

    >>> import numpy as np, xarray as xr
    >>> lon, lat = np.arange(10.0, 12.0, 0.05), np.arange(45.0, 45.5, 0.05)
    >>> z = np.tile(1500.0 * np.exp(-(((lon - 11.0) / 0.2) ** 2)), (lat.size, 1))
    >>> elevation = xr.DataArray(z, dims=("lat", "lon"), coords={"lat": lat, "lon": lon},
    ...                          attrs={"units": "m"})
    >>> t = xr.date_range("2001-01-01", periods=5 * 365, freq="D", calendar="noleap")
    >>> daily = np.broadcast_to(np.where(lon < 11.0, 4.0, 2.0), (t.size, lat.size, lon.size))
    >>> pr = xr.DataArray(daily.copy(), dims=("time", "lat", "lon"),
    ...                   coords={"time": t, "lat": lat, "lon": lon},
    ...                   attrs={"units": "mm", "step": "day"})
    >>> out = orographic_contrast(pr, elevation, band_km=(0.0, 25.0), n_boot=50)
    >>> obs = out["observed"]
    >>> [round(float(obs[k]), 3) for k in ("windward_mean", "leeward_mean", "ratio")]
    [1460.0, 730.0, 0.5]
    """
    annual = cache.cached("annual_totals", lambda: annual_totals(pr), pr)
    crest = ridge if ridge is not None else crest_from_elevation(elevation, wind_from, min_height=min_height)
    observed = rain_shadow(annual, wind_from=wind_from, ridge=crest, band_km=band_km, n_boot=n_boot, ci=ci)
    model = linear_orographic_precip(
        elevation,
        wind_speed=wind_speed,
        wind_from=wind_from,
        temperature_c=temperature_c,
        p_background=p_background,
        tau_c=tau,
        tau_f=tau,
    )
    model_contrast = rain_shadow(model, wind_from=wind_from, ridge=crest, band_km=band_km)
    mean = annual.mean("year", keep_attrs=True)
    # sea-level cells (open water, or missing terrain read as 0 m) would pile up at 0 m
    land = elevation > 0
    gradients = {}
    for side in ("windward", "leeward"):
        try:
            gradients[side] = elevation_gradient(
                mean, elevation, mask=land, side=side, distance_km=observed["distance_km"]
            )
        except InsufficientDataError:
            pass  # too few cells on that side: no fit
    return {
        "observed": observed,
        "model": model,
        "model_contrast": model_contrast,
        "mean": mean,
        "gradients": gradients,
        "crest": crest,
    }


def band_dataset(observed: xr.Dataset, model: xr.Dataset, ci: float) -> xr.Dataset:
    """Observed and modelled contrast on a ``band`` dimension labelled 'lower-upper' (km).

    Parameters
    ----------
    observed : xarray.Dataset
        :func:`cw.rain_shadow` of the observed annual totals (``observed`` of
        :func:`orographic_contrast`): ``windward_mean``, ``leeward_mean``, ``ratio``,
        ``ratio_lower``, ``ratio_upper`` and the band edges ``band_lower_km`` /
        ``band_upper_km``, on ``band`` or for one band.
    model : xarray.Dataset
        The same through the linear model (``model_contrast``): its ``ratio`` is used.
    ci : float
        Confidence level of the ratio's interval, for the column labels.

    Returns
    -------
    xarray.Dataset
        The :data:`BAND_COLUMNS` on ``band`` (labels such as ``"0-25"``), each with its
        label, units and format (:func:`climwidgets.analyses.meta.describe`).

    Examples
    --------
    >>> import xarray as xr
    >>> edges = {"band_lower_km": 0.0, "band_upper_km": 25.0}
    >>> observed = xr.Dataset({"windward_mean": 1460.0, "leeward_mean": 730.0, "ratio": 0.5,
    ...                        "ratio_lower": 0.45, "ratio_upper": 0.55}, coords=edges)
    >>> model = xr.Dataset({"ratio": 0.1}, coords=edges)
    >>> ds = band_dataset(observed, model, 0.9)
    >>> ds.band.values.tolist(), float(ds["model_ratio"][0]), ds["ratio_lower"].attrs["label"]
    (['0-25'], 0.1, 'lower 90%')
    """
    obs, mod = _bands(observed), _bands(model)
    lower = np.atleast_1d(obs["band_lower_km"].values)
    upper = np.atleast_1d(obs["band_upper_km"].values)
    labels = [f"{float(a):g}-{float(b):g}" for a, b in zip(lower, upper)]
    pct = f"{float(ci):.0%}"

    def plain(da: xr.DataArray) -> xr.DataArray:
        return da.reset_coords(drop=True).drop_vars("band", errors="ignore")

    ds = xr.Dataset(
        {
            "windward_mean": describe(plain(obs["windward_mean"]), "windward_mean"),
            "leeward_mean": describe(plain(obs["leeward_mean"]), "leeward_mean"),
            "ratio": describe(plain(obs["ratio"]), "ratio"),
            "ratio_lower": describe(plain(obs["ratio_lower"]), "ratio_lower", label=f"lower {pct}"),
            "ratio_upper": describe(plain(obs["ratio_upper"]), "ratio_upper", label=f"upper {pct}"),
            "model_ratio": describe(plain(mod["ratio"]), "model_ratio"),
        }
    )
    return ds.assign_coords(band=labels)


def band_table(observed: xr.Dataset, model: xr.Dataset, ci: float, display: bool = True) -> pd.DataFrame:
    """The band table (index 'band [km]'), as shown (``display=True``) or as stored.

    Parameters
    ----------
    observed : xarray.Dataset
        :func:`cw.rain_shadow` of the observed annual totals (``observed`` of
        :func:`orographic_contrast`): ``windward_mean``, ``leeward_mean``, ``ratio``,
        ``ratio_lower``, ``ratio_upper`` and the band edges ``band_lower_km`` /
        ``band_upper_km``, on ``band`` or for one band.
    model : xarray.Dataset
        The same through the linear model (``model_contrast``): its ``ratio`` is used.
    ci : float
        Confidence level of the ratio's interval, for the column labels.
    display : bool
        ``True``: columns headed and scaled as shown to a user; ``False``: as stored.

    Returns
    -------
    pandas.DataFrame
        One row per band, the :data:`BAND_COLUMNS` as columns.

    Examples
    --------
    >>> import xarray as xr
    >>> edges = {"band_lower_km": 0.0, "band_upper_km": 25.0}
    >>> observed = xr.Dataset({"windward_mean": 1460.0, "leeward_mean": 730.0, "ratio": 0.5,
    ...                        "ratio_lower": 0.45, "ratio_upper": 0.55}, coords=edges)
    >>> model = xr.Dataset({"ratio": 0.1}, coords=edges)
    >>> table = band_table(observed, model, 0.9, display=False)
    >>> table.index.name, float(table.loc["0-25", "ratio"])
    ('band [km]', 0.5)
    """
    table = frame(band_dataset(observed, model, ci), index=("band",), columns=BAND_COLUMNS, display=display)
    table.index.name = "band [km]"
    return table
