"""The windward/leeward band table: observed contrast beside the linear model's.

The numbers are :func:`cw.rain_shadow` of the observed annual totals (with the bootstrap
interval of the ratio) and of the linear orographic model (Smith and Barstad 2004)
through the same crest and bands; this module puts them side by side, one row per band.
"""

from __future__ import annotations

import numpy as np
import xarray as xr

from .meta import describe, frame

__all__ = ["band_dataset", "band_table", "BAND_COLUMNS"]

BAND_COLUMNS = ("windward_mean", "leeward_mean", "ratio", "ratio_lower", "ratio_upper", "model_ratio")


def _bands(ds: xr.Dataset) -> xr.Dataset:
    return ds if "band" in ds.dims else ds.expand_dims("band")


def band_dataset(observed: xr.Dataset, model: xr.Dataset, ci: float) -> xr.Dataset:
    """Observed and modelled contrast on a ``band`` dimension labelled 'lower-upper' (km)."""
    obs, mod = _bands(observed), _bands(model)
    lower = np.atleast_1d(obs["band_lower_km"].values)
    upper = np.atleast_1d(obs["band_upper_km"].values)
    labels = [f"{float(a):g}-{float(b):g}" for a, b in zip(lower, upper)]
    pct = f"{float(ci):.0%}"

    def plain(da):
        return da.reset_coords(drop=True).drop_vars("band", errors="ignore")

    ds = xr.Dataset({
        "windward_mean": describe(plain(obs["windward_mean"]), "windward_mean"),
        "leeward_mean": describe(plain(obs["leeward_mean"]), "leeward_mean"),
        "ratio": describe(plain(obs["ratio"]), "ratio"),
        "ratio_lower": describe(plain(obs["ratio_lower"]), "ratio_lower", label=f"lower {pct}"),
        "ratio_upper": describe(plain(obs["ratio_upper"]), "ratio_upper", label=f"upper {pct}"),
        "model_ratio": describe(plain(mod["ratio"]), "model_ratio"),
    })
    return ds.assign_coords(band=labels)


def band_table(observed: xr.Dataset, model: xr.Dataset, ci: float, display: bool = True):
    """The band table (index 'band [km]'), as shown (``display=True``) or as stored."""
    table = frame(band_dataset(observed, model, ci), index=("band",), columns=BAND_COLUMNS, display=display)
    table.index.name = "band [km]"
    return table
