"""The invented demo ensemble: historical and future runs of four invented model members.

Part of the invented demo scenario (:mod:`climwidgets.demo`); kept in its own module
because the demo generator is long already.  Everything here is made up: the members are
not runs of any real climate model, and the "future" is a fixed recipe, not a projection.

Recipe, per member (fixed seeds, a fraction of a second):

* the demo's monthly totals of 1981–2010, averaged conservatively onto a coarse model grid
  (twice the spacing of the demo's second product) of the same invented island;
* a member-specific reshuffling of those thirty years (so members have different weather
  sequences with the same climate) and a member-specific overall bias (:data:`MEMBER_BIAS`);
* stored on a ``noleap`` calendar, as climate models often are, as the historical run
  1981–2010;
* the future run 2041–2070 is the same weather sequence, month by month, times the
  member's known change factor of that calendar month (:data:`CHANGE_FACTORS`).

Because the future repeats the historical weather times a factor, the monthly change
factor (future / historical monthly normal) of every cell is exactly the known factor, and
so is the relative change of every quantile: tests and the tour can check that delta
change recovers it.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from ._version import __version__

__all__ = [
    "CHANGE_FACTORS",
    "ENSEMBLE_FILES",
    "FUTURE_YEARS",
    "HISTORICAL_YEARS",
    "MEMBERS",
    "MEMBER_BIAS",
    "ensemble_summary_json",
    "write_ensemble",
]

MEMBERS = ("m1", "m2", "m3", "m4")
HISTORICAL_YEARS = (1981, 2010)
FUTURE_YEARS = (2041, 2070)
ENSEMBLE_FILES = {
    "ensemble_historical": "pr_ensemble_historical_noleap.nc",
    "ensemble_future": "pr_ensemble_future_noleap.nc",
}

_WINTER, _SUMMER = (11, 12, 1, 2, 3), (6, 7, 8)


def _factors(winter, summer, other):
    return tuple(winter if m in _WINTER else summer if m in _SUMMER else other for m in range(1, 13))


# Known change factors on monthly totals, future / historical, by member and calendar month
# (January first).  Three members have wetter winters and drier summers by different
# amounts; m4 disagrees (drier winters, wetter summers).
CHANGE_FACTORS = {
    "m1": _factors(1.10, 0.85, 1.00),
    "m2": _factors(1.05, 0.95, 1.02),
    "m3": _factors(1.18, 0.80, 0.97),
    "m4": _factors(0.96, 1.06, 1.00),
}
# Each member's overall bias against the demo's own climate (historical and future alike).
MEMBER_BIAS = {"m1": 1.10, "m2": 0.92, "m3": 1.04, "m4": 0.97}
_SEED = 31415926


def _axis(lo, hi, res):
    n = round((hi - lo) / res)
    edges = np.round(lo + res * np.arange(n + 1), 6)
    return np.round((edges[:-1] + edges[1:]) / 2, 6), np.stack([edges[:-1], edges[1:]], axis=1)


def _conservative_average(totals, lat_b, lon_b, clat_b, clon_b):
    """Area-weighted average (weights ∝ Δsin(lat) × Δlon overlaps) onto a coarser grid."""
    s, cs = np.sin(np.deg2rad(lat_b)), np.sin(np.deg2rad(clat_b))
    oy = np.clip(np.minimum(cs[:, None, 1], s[None, :, 1]) - np.maximum(cs[:, None, 0], s[None, :, 0]), 0, None)
    ox = np.clip(
        np.minimum(clon_b[:, None, 1], lon_b[None, :, 1]) - np.maximum(clon_b[:, None, 0], lon_b[None, :, 0]), 0, None
    )
    out = np.einsum("cy,tyx,dx->tcd", oy, totals, ox, optimize=True)
    return out / (oy.sum(1)[None, :, None] * ox.sum(1)[None, None, :])


def _run_ds(values, years, lat, lat_b, lon, lon_b, attrs, experiment):
    y0, y1 = years
    starts = xr.date_range(f"{y0}-01-01", f"{y1 + 1}-01-01", freq="MS", calendar="noleap", use_cftime=True).values
    ds = xr.Dataset(
        {
            "pr": (
                ("member", "time", "lat", "lon"),
                values.astype(np.float32),
                {
                    "standard_name": "lwe_thickness_of_precipitation_amount",
                    "long_name": "monthly precipitation total",
                    "units": "mm",
                    "cell_methods": "time: sum",
                },
            )
        },
        coords={
            "member": ("member", list(MEMBERS), {"long_name": "ensemble member (invented)"}),
            "time": ("time", starts[:-1], {"standard_name": "time", "axis": "T", "bounds": "time_bnds"}),
            "lat": (
                "lat",
                lat,
                {"standard_name": "latitude", "units": "degrees_north", "axis": "Y", "bounds": "lat_bnds"},
            ),
            "lon": (
                "lon",
                lon,
                {"standard_name": "longitude", "units": "degrees_east", "axis": "X", "bounds": "lon_bnds"},
            ),
        },
    )
    ds["time_bnds"] = (("time", "bnds"), np.stack([starts[:-1], starts[1:]], axis=1))
    ds["lat_bnds"] = (("lat", "bnds"), lat_b)
    ds["lon_bnds"] = (("lon", "bnds"), lon_b)
    ds.attrs = dict(attrs, experiment=experiment)
    return ds


def write_ensemble(totals, years, lat_b, lon_b, ens_res, lat_range, lon_range, attrs, paths, write):
    """Build the historical and future runs from the demo's monthly totals and write them.

    ``totals`` are the demo's monthly totals (time, lat, lon) in mm for ``years`` (standard
    calendar, January first); ``write(ds, path)`` writes one NetCDF file (noleap time axis).
    """
    y0 = years[0]
    h0, h1 = HISTORICAL_YEARS
    n_years = h1 - h0 + 1
    base = totals[(h0 - y0) * 12 : (h1 - y0 + 1) * 12]
    clat, clat_b = _axis(*lat_range, ens_res)
    clon, clon_b = _axis(*lon_range, ens_res)
    coarse = _conservative_average(base, lat_b, lon_b, clat_b, clon_b).reshape(n_years, 12, len(clat), len(clon))
    hist = np.empty((len(MEMBERS), n_years, 12, len(clat), len(clon)))
    for i, m in enumerate(MEMBERS):  # four members, not cells
        order = np.random.default_rng([_SEED, i]).permutation(n_years)
        hist[i] = coarse[order] * MEMBER_BIAS[m]
    factors = np.array([CHANGE_FACTORS[m] for m in MEMBERS])  # (member, month)
    fut = hist * factors[:, None, :, None, None]
    shape = (len(MEMBERS), n_years * 12, len(clat), len(clon))
    note = (
        "Invented ensemble: not runs of any real climate model. The future run repeats the historical "
        "run's weather, month by month, times the member's change factor of that calendar month."
    )
    common = dict(
        attrs,
        comment=attrs.get("comment", "") + " " + note,
        change_factors="; ".join(f"{m}: " + ", ".join(f"{f:.2f}" for f in CHANGE_FACTORS[m]) for m in MEMBERS)
        + " (January to December)",
        member_bias="; ".join(f"{m}: x{b:.2f}" for m, b in MEMBER_BIAS.items()),
    )
    hist_ds = _run_ds(
        hist.reshape(shape),
        HISTORICAL_YEARS,
        clat,
        clat_b,
        clon,
        clon_b,
        dict(common, title="Taluvessa demo: invented ensemble, historical run 1981-2010 (noleap)"),
        "historical",
    )
    fut_ds = _run_ds(
        fut.reshape(shape),
        FUTURE_YEARS,
        clat,
        clat_b,
        clon,
        clon_b,
        dict(common, title="Taluvessa demo: invented ensemble, future run 2041-2070 (noleap)"),
        "future",
    )
    fut_ds["change_factor"] = (
        ("member", "month"),
        factors,
        {"units": "1", "long_name": "known change factor of monthly totals (future / historical)"},
    )
    fut_ds = fut_ds.assign_coords(month=("month", np.arange(1, 13), {"long_name": "calendar month"}))
    write(hist_ds, Path(paths["ensemble_historical"]))
    write(fut_ds, Path(paths["ensemble_future"]))


def ensemble_summary_json(ens_res) -> dict:
    """The ensemble's recipe in numbers, for scenario.json."""
    return {
        "members": list(MEMBERS),
        "grid_res_deg": ens_res,
        "calendar": "noleap",
        "historical_years": list(HISTORICAL_YEARS),
        "future_years": list(FUTURE_YEARS),
        "change_factors_by_member_and_month": {m: list(f) for m, f in CHANGE_FACTORS.items()},
        "member_bias": dict(MEMBER_BIAS),
        "generator": f"climwidgets.demo_ensemble {__version__}",
    }
