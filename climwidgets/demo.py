"""The invented demo scenario: a deterministic generator of CF-NetCDF demo grids.

Everything here is made up.  The island of Taluvessa, its Korrimund Range and its basins
do not exist; the grid sits on open ocean (33.5–37.5° N, 150–145° W) where
there is no land, so no real place is implied.

The scenario, in short:

* a north–south range whose crest lies a little east of the island's centre line, with a
  long windward (west) slope and a short, steep lee (east) slope;
* westerly winter storms (mostly November–March) whose depth rises with elevation on the
  windward side and drops into a rain shadow east of the crest;
* a July–August summer storm season whose share of the annual total grows from north to
  south;
* a few notable wet and dry calendar years (:data:`NOTABLE_YEARS`);
* one large storm day per calendar year whose depth at every cell is drawn from a known
  GEV distribution (:data:`GEV_SHAPE`, spatially varying location and scale), inserted so
  that it is the year's largest day;
* a second, coarser product on a ``noleap`` calendar with a known seasonal bias
  (:data:`COARSE_BIAS`) and some smoothing, for comparison work.

Run ``python -m climwidgets.demo [--force] [--dir D]``, or call :func:`generate`.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time as _time
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
import xarray as xr
from scipy.ndimage import gaussian_filter
from scipy.special import ndtr

from . import demo_ensemble as _demo_ensemble
from ._version import __version__
from .atomic import atomic_write
from .errors import ParameterError

__all__ = [
    "generate",
    "main",
    "basins_geojson",
    "ISLAND",
    "RANGE",
    "BASINS",
    "NOTABLE_YEARS",
    "COARSE_BIAS",
    "GEV_SHAPE",
    "SIZES",
    "generate_ensemble",
]

DEMO_VERSION = "1"
SEED = 27182818

ISLAND = "Taluvessa"
RANGE = "Korrimund Range"

# Domain: open ocean, well away from any coast (degrees; lat ascending, lon in [-180, 180)).
LAT_RANGE = (33.5, 37.5)
LON_RANGE = (-150.0, -145.0)
_LAT0, _LON0 = 35.5, -147.5  # island centre
_KM_PER_DEG = 111.195  # mean Earth radius 6371 km × π/180

# Calendar years scaled as a whole (every day except the year's inserted GEV storm day).
NOTABLE_YEARS = {1983: 1.40, 1995: 1.30, 2017: 1.35, 1990: 0.70, 2007: 0.65, 2013: 0.55}

# Coarse product's bias: factor on monthly totals by month (winter +8 %, summer -5 %).
COARSE_BIAS = {m: 1.08 for m in (11, 12, 1, 2, 3)} | {m: 0.95 for m in (6, 7, 8)} | {m: 1.0 for m in (4, 5, 9, 10)}
COARSE_SMOOTHING_SIGMA = 0.8  # Gaussian smoothing, in coarse cells

# Annual-maximum storm: GEV with Hosking's k (same sign as scipy.stats.genextreme's c);
# k < 0 is the heavy upper tail typical of daily rainfall maxima.
GEV_SHAPE = -0.10
GEV_SCALE_RATIO = 0.25  # scale = ratio × location

# Chance of a storm day, by calendar month (index 0 = January).
_P_WINTER = np.array([0.50, 0.47, 0.42, 0.28, 0.15, 0.06, 0.02, 0.02, 0.08, 0.22, 0.40, 0.50])
_P_SUMMER = np.array([0.0, 0.0, 0.0, 0.0, 0.0, 0.04, 0.30, 0.32, 0.08, 0.0, 0.0, 0.0])
_WET_THRESHOLD_MM = 0.1  # lighter amounts are set to zero (dry days)
_NOLEAP_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


@dataclass(frozen=True)
class _Size:
    res: float  # fine grid spacing, degrees
    coarse_res: float  # coarse product's spacing, degrees
    years: tuple[int, int]


SIZES = {
    "full": _Size(0.1, 0.25, (1981, 2020)),
    # the same scenario on a coarser grid, for fast tests
    "test": _Size(0.25, 0.5, (1981, 2020)),
}

FILES = {
    "daily": "pr_daily.nc",
    "monthly": "pr_monthly.nc",
    "coarse_monthly": "pr_coarse_monthly_noleap.nc",
    "elevation": "elevation.nc",
    "gev": "gev_truth.nc",
    "basins": "basins.geojson",
    "scenario": "scenario.json",
}

# Basin outlines, (lon, lat) vertices, counter-clockwise (RFC 7946 right-hand rule).
BASINS = [
    {
        "name": "Aldravel",
        "side": "windward",
        "description": "west (windward) slope, north-central island",
        "vertices": [
            (-147.95, 35.55),
            (-147.55, 35.55),
            (-147.52, 35.90),
            (-147.56, 36.25),
            (-147.85, 36.25),
            (-147.97, 35.95),
        ],
    },
    {
        "name": "Tessivane",
        "side": "crest",
        "description": "straddles the range crest, central island",
        "vertices": [
            (-147.80, 34.95),
            (-147.15, 34.95),
            (-147.10, 35.25),
            (-147.18, 35.50),
            (-147.78, 35.50),
            (-147.85, 35.20),
        ],
    },
    {
        "name": "Quorrindal",
        "side": "leeward",
        "description": "east (lee) slope, north-central island",
        "vertices": [
            (-147.28, 35.55),
            (-146.98, 35.55),
            (-146.95, 35.90),
            (-147.00, 36.25),
            (-147.30, 36.25),
            (-147.33, 35.90),
        ],
    },
    {
        "name": "Mirrowaith",
        "side": "south",
        "description": "southern island, both slopes; strongest summer-storm share",
        "vertices": [
            (-147.70, 34.45),
            (-147.25, 34.45),
            (-147.15, 34.70),
            (-147.22, 34.90),
            (-147.75, 34.90),
            (-147.82, 34.68),
        ],
    },
]


# --------------------------------------------------------------------------- geometry
def _axis(lo: float, hi: float, res: float):
    n = int(round((hi - lo) / res))
    edges = np.round(lo + res * np.arange(n + 1), 6)
    return np.round((edges[:-1] + edges[1:]) / 2, 6), np.stack([edges[:-1], edges[1:]], axis=1)


def _km(lat, lon):
    """Local east/north distances (km) from the island centre."""
    x = (np.asarray(lon) - _LON0) * _KM_PER_DEG * np.cos(np.deg2rad(_LAT0))
    y = (np.asarray(lat) - _LAT0) * _KM_PER_DEG
    return x, y


def _crest_x(y):
    """East offset (km) of the crest from the island centre line, by northing y (km)."""
    return 5.0 + 6.0 * np.sin(y / 50.0)


def _terrain(lat, lon):
    """Elevation (m), land mask and crest longitude (NaN off the island) on a grid."""
    x, y = _km(lat[:, None], lon[None, :])
    a, b, p = 60.0, 140.0, 2.5  # half-width, half-length (km), superellipse power
    rho = (np.abs(x / a) ** p + np.abs(y / b) ** p) ** (1 / p)
    theta = np.arctan2(y / b, x / a)
    coast = 1 + 0.06 * np.cos(3 * theta + 0.7) + 0.04 * np.cos(5 * theta + 2.1) + 0.03 * np.cos(7 * theta + 4.0)
    land = rho <= coast
    crest_height = 600 + 1900 * np.exp(-(((y - 20) / 70) ** 2)) + 700 * np.exp(-(((y + 85) / 40) ** 2))
    d = x - _crest_x(y)
    width = np.where(d < 0, 40.0, 20.0)  # long windward slope, short steep lee slope
    taper = np.clip((coast - rho) / (0.25 * coast), 0, 1)
    taper = taper * taper * (3 - 2 * taper)  # smoothstep to sea level at the coast
    ripple = 1 + 0.06 * np.sin(x / 7.0 + 1.3) * np.cos(y / 9.0 - 0.4)
    elevation = np.where(land, np.maximum(crest_height * np.exp(-((d / width) ** 2)) * taper * ripple, 2.0), 0.0)
    _, y_rows = _km(lat, _LON0)
    crest_lon = _LON0 + _crest_x(y_rows) / (_KM_PER_DEG * np.cos(np.deg2rad(_LAT0)))
    on_island = land.any(axis=1)
    return elevation, land, np.where(on_island, crest_lon, np.nan), d, y


def _patterns(lat, lon):
    """Expected winter (Nov–Mar) and summer (Jul–Aug) storm-season depths, mm."""
    elevation, land, _, d, y = _terrain(lat, lon)
    h = elevation / 1000.0
    base = 500.0 * (1 + 0.15 * y / 140.0)  # winter storms a little stronger in the north
    uplift = 1 + 1.1 * h
    # rain shadow: drops within ~12 km east of the crest, recovers slowly far downwind
    lee = np.maximum(d, 0.0)
    reach = np.clip((150.0 - np.abs(y)) / 40.0, 0, 1)  # no shadow north or south of the range
    reach = reach * reach * (3 - 2 * reach)
    shadow = 1 - 0.65 * reach * (1 - np.exp(-lee / 12.0)) * np.exp(-np.maximum(lee - 40.0, 0.0) / 120.0)
    winter = base * uplift * shadow
    summer = np.clip(100.0 - 130.0 * y / 140.0, 10.0, None) * (1 + 0.4 * h)
    return winter, summer


def _expected_days(p, months):
    days = np.array([31, 28.25, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
    return float(sum(p[m - 1] * days[m - 1] for m in months))


def _interp_matrix(x, spacing):
    """Linear-interpolation weights from nodes every `spacing` onto points x."""
    nodes = np.arange(x.min() - spacing, x.max() + 2 * spacing, spacing)
    k = np.clip(np.searchsorted(nodes, x, side="right") - 1, 0, len(nodes) - 2)
    w = (x - nodes[k]) / spacing
    m = np.zeros((len(x), len(nodes)))
    m[np.arange(len(x)), k] = 1 - w
    m[np.arange(len(x)), k + 1] = w
    return m / np.sqrt((m**2).sum(axis=1, keepdims=True))  # unit variance at every point


def _smooth_fields(rng, n, lat, lon, spacing):
    """`n` smooth standard-normal fields on the grid (correlation length ~ spacing°)."""
    my, mx = _interp_matrix(lat, spacing), _interp_matrix(lon, spacing)
    z = rng.standard_normal((n, my.shape[1], mx.shape[1]))
    return np.einsum("ya,nab,xb->nyx", my, z, mx, optimize=True)


# --------------------------------------------------------------------------- simulation
def _storm_depths(lat, lon):
    """Mean depth (mm) of a winter and of a summer storm day, per cell."""
    winter, summer = _patterns(lat, lon)
    return winter / _expected_days(_P_WINTER, (11, 12, 1, 2, 3)), summer / _expected_days(_P_SUMMER, (7, 8))


def _gev_params(cond_w, cond_s):
    """GEV location and scale (mm): well above an ordinary year's largest storm day."""
    loc = 40.0 + 6.0 * cond_w + 3.0 * cond_s
    return loc, GEV_SCALE_RATIO * loc


def _simulate(size: _Size):
    """Daily depths (mm, float32) for the whole period, plus the GEV bookkeeping."""
    lat, _ = _axis(*LAT_RANGE, size.res)
    lon, _ = _axis(*LON_RANGE, size.res)
    cond_w, cond_s = _storm_depths(lat, lon)
    loc, scale = _gev_params(cond_w, cond_s)
    k = GEV_SHAPE
    all_months = range(1, 13)
    expected = _domain_mean(
        cond_w * _expected_days(_P_WINTER, all_months) + cond_s * _expected_days(_P_SUMMER, all_months), lat
    )
    y0, y1 = size.years
    days = pd.date_range(f"{y0}-01-01", f"{y1}-12-31", freq="D")
    out = np.empty((len(days), len(lat), len(lon)), dtype=np.float32)
    annual_max = np.empty((y1 - y0 + 1, len(lat), len(lon)))
    storm_dates, factors, capped = [], {}, 0
    for i, year in enumerate(range(y0, y1 + 1)):
        rng = np.random.default_rng([SEED, year])  # one stream per year: same values for any period
        sel = days.year == year
        month = days.month[sel].to_numpy()
        n = int(sel.sum())
        factor = float(np.clip(np.exp(0.12 * rng.standard_normal() - 0.0072), 0.8, 1.2))
        factor = NOTABLE_YEARS.get(year, factor)
        factors[year] = factor
        wet_w = rng.random(n) < _P_WINTER[month - 1]
        g_w = rng.gamma(1.2, 1 / 1.2, n)
        mod_w = np.exp(0.3 * _smooth_fields(rng, n, lat, lon, 1.0) - 0.045)
        wet_s = rng.random(n) < _P_SUMMER[month - 1]
        g_s = rng.gamma(0.8, 1 / 0.8, n)
        mod_s = np.exp(0.8 * _smooth_fields(rng, n, lat, lon, 0.5) - 0.32)
        depth = (wet_w * g_w)[:, None, None] * mod_w * cond_w + (wet_s * g_s)[:, None, None] * mod_s * cond_s
        # rescale so that the year's domain-mean total is exactly factor × the expected
        # total: notable years then stand out by the documented amount
        depth *= factor * expected / _domain_mean(depth.sum(axis=0), lat)
        depth[depth < _WET_THRESHOLD_MM] = 0.0
        # The year's big storm: GEV margins at every cell, spatially coherent through a
        # Gaussian copula (smooth field + independent part, unit variance).
        z = np.sqrt(0.6) * _smooth_fields(rng, 1, lat, lon, 1.0)[0] + np.sqrt(0.4) * rng.standard_normal(loc.shape)
        u = np.clip(ndtr(z), 1e-12, 1 - 1e-12)
        am = loc + scale / k * (1 - (-np.log(u)) ** k)  # GEV quantile, Hosking (1990)
        season = np.flatnonzero(np.isin(month, (11, 12, 1, 2, 3)))
        day = int(season[rng.integers(len(season))])
        am32 = am.astype(np.float32)
        capped += int((depth > am32).sum())
        depth = np.minimum(depth, am32)  # keeps the storm day the year's largest
        depth[day] = am32
        out[sel] = depth
        annual_max[i] = am32
        storm_dates.append(days[sel][day])
    n_cells = out.shape[0] * out.shape[1] * out.shape[2]
    return dict(
        lat=lat,
        lon=lon,
        days=days,
        depth=out,
        annual_max=annual_max,
        loc=loc,
        scale=scale,
        storm_dates=storm_dates,
        factors=factors,
        capped_fraction=capped / n_cells,
    )


# --------------------------------------------------------------------------- datasets
_GLOBAL = {
    "Conventions": "CF-1.10",
    "institution": "none (invented demo data)",
    "source": (
        f"climwidgets.demo {__version__} (scenario version {DEMO_VERSION}, seed {SEED}): "
        "synthetic storms over an invented island; not observations, not a model run"
    ),
    "comment": (
        f"Invented demo data. The island '{ISLAND}', the '{RANGE}' and the basins do not exist; "
        "the grid lies over open ocean so that no real place is implied."
    ),
}


def _attrs(title: str) -> dict:
    return {
        "title": title,
        **_GLOBAL,
        "history": f"climwidgets {__version__}: climwidgets.demo.generate() — invented demo data, deterministic",
    }


def _scenario_attrs() -> dict:
    wet = ", ".join(f"{y} x{f:.2f}" for y, f in sorted(NOTABLE_YEARS.items()) if f > 1)
    dry = ", ".join(f"{y} x{f:.2f}" for y, f in sorted(NOTABLE_YEARS.items()) if f < 1)
    return {
        "scenario": (
            f"Westerly winter storms (mostly Nov-Mar) wetter on the windward (west) slopes of the {RANGE}, "
            "rain shadow east of the crest; July-August summer storms whose share of the year grows "
            "from north to south; one GEV-distributed storm day per year (see gev_truth.nc)"
        ),
        "notable_years": (
            f"wet: {wet}; dry: {dry} (domain-mean total of the calendar year, apart from its "
            "annual-maximum storm day, is this factor times the expected year; other years "
            "x0.80-1.20)"
        ),
    }


def _grid_ds(lat, lat_b, lon, lon_b, **data_vars) -> xr.Dataset:
    ds = xr.Dataset(
        data_vars,
        coords={
            "lat": (
                "lat",
                lat,
                {
                    "standard_name": "latitude",
                    "long_name": "latitude",
                    "units": "degrees_north",
                    "axis": "Y",
                    "bounds": "lat_bnds",
                },
            ),
            "lon": (
                "lon",
                lon,
                {
                    "standard_name": "longitude",
                    "long_name": "longitude",
                    "units": "degrees_east",
                    "axis": "X",
                    "bounds": "lon_bnds",
                },
            ),
        },
    )
    ds["lat_bnds"] = (("lat", "bnds"), lat_b)
    ds["lon_bnds"] = (("lon", "bnds"), lon_b)
    return ds


def _series_ds(lat, lat_b, lon, lon_b, starts, ends, values, pr_attrs: dict) -> xr.Dataset:
    """A "pr" series on the grid, time stamped at interval starts with CF time bounds."""
    ds = _grid_ds(lat, lat_b, lon, lon_b, pr=(("time", "lat", "lon"), values.astype(np.float32), pr_attrs))
    ds = ds.assign_coords(
        time=("time", starts, {"standard_name": "time", "long_name": "time", "axis": "T", "bounds": "time_bnds"})
    )
    ds["time_bnds"] = (("time", "bnds"), np.stack([starts, ends], axis=1))
    return ds


def _time_encoding(calendar: str) -> dict:
    enc = {"units": "days since 1981-01-01 00:00:00", "calendar": calendar, "dtype": "float64", "_FillValue": None}
    return {"time": enc, "time_bnds": dict(enc)}


def _month_starts(y0, y1, calendar):
    if calendar == "standard":
        s = pd.date_range(f"{y0}-01-01", f"{y1 + 1}-01-01", freq="MS").to_numpy()
    else:
        s = xr.date_range(f"{y0}-01-01", f"{y1 + 1}-01-01", freq="MS", calendar=calendar, use_cftime=True).values
    return s[:-1], s[1:]


def _daily_ds(sim, lat_b, lon_b) -> xr.Dataset:
    days = sim["days"].to_numpy()
    ends = (sim["days"] + pd.Timedelta(days=1)).to_numpy()
    flux = (sim["depth"] / np.float32(86400.0)).astype(np.float32)
    ds = _series_ds(
        sim["lat"],
        lat_b,
        sim["lon"],
        lon_b,
        days,
        ends,
        flux,
        {
            "standard_name": "precipitation_flux",
            "long_name": "precipitation (daily mean rate)",
            "units": "kg m-2 s-1",
            "cell_methods": "time: mean",
            "comment": "multiply by 86400 s for the day's depth in mm",
        },
    )
    y0, y1 = sim["days"][0].year, sim["days"][-1].year
    ds.attrs = _attrs(f"{ISLAND} demo: daily precipitation {y0}-{y1} (invented)") | _scenario_attrs()
    return ds


def _monthly_totals(daily_flux, days):
    """Monthly totals in mm, summed in float64 from the stored float32 daily rates."""
    starts = np.flatnonzero(days.day == 1)
    depth = daily_flux.astype(np.float64) * 86400.0
    return np.add.reduceat(depth, starts, axis=0)


def _monthly_ds(totals, y0, y1, lat, lat_b, lon, lon_b) -> xr.Dataset:
    s, e = _month_starts(y0, y1, "standard")
    ds = _series_ds(
        lat,
        lat_b,
        lon,
        lon_b,
        s,
        e,
        totals,
        {
            "standard_name": "lwe_thickness_of_precipitation_amount",
            "long_name": "monthly precipitation total",
            "units": "mm",
            "cell_methods": "time: sum",
        },
    )
    ds.attrs = _attrs(f"{ISLAND} demo: monthly precipitation totals {y0}-{y1} (invented)") | _scenario_attrs()
    return ds


def _coarse_ds(totals, y0, y1, lat, lat_b, lon, lon_b, size: _Size):
    """Coarse product: conservative average, smoothing, seasonal bias, noleap monthly rates."""
    clat, clat_b = _axis(*LAT_RANGE, size.coarse_res)
    clon, clon_b = _axis(*LON_RANGE, size.coarse_res)
    s = np.sin(np.deg2rad(lat_b))
    cs = np.sin(np.deg2rad(clat_b))
    # overlap areas (∝ Δsin(lat) × Δlon) between coarse and fine cells: exact conservation
    oy = np.clip(np.minimum(cs[:, None, 1], s[None, :, 1]) - np.maximum(cs[:, None, 0], s[None, :, 0]), 0, None)
    ox = np.clip(
        np.minimum(clon_b[:, None, 1], lon_b[None, :, 1]) - np.maximum(clon_b[:, None, 0], lon_b[None, :, 0]), 0, None
    )
    coarse = np.einsum("cy,tyx,dx->tcd", oy, totals, ox, optimize=True)
    coarse /= oy.sum(1)[None, :, None] * ox.sum(1)[None, None, :]
    coarse = gaussian_filter(coarse, sigma=(0, COARSE_SMOOTHING_SIGMA, COARSE_SMOOTHING_SIGMA), mode="nearest")
    months = np.tile(np.arange(1, 13), y1 - y0 + 1)
    coarse *= np.array([COARSE_BIAS[m] for m in months])[:, None, None]
    starts, ends = _month_starts(y0, y1, "noleap")
    rate = coarse / (_NOLEAP_DAYS[months - 1] * 86400.0)[:, None, None]
    ds = _series_ds(
        clat,
        clat_b,
        clon,
        clon_b,
        starts,
        ends,
        rate,
        {
            "standard_name": "precipitation_flux",
            "long_name": "precipitation (monthly mean rate)",
            "units": "kg m-2 s-1",
            "cell_methods": "time: mean",
            "comment": (
                "monthly total = rate × 86400 × days in the noleap month; February totals include the "
                "29th of leap years, spread over 28 days"
            ),
        },
    )
    ds.attrs = _attrs(f"{ISLAND} demo: second product, coarse grid, noleap calendar (invented, biased)")
    ds.attrs["bias"] = (
        "monthly totals × 1.08 in Nov-Mar, × 0.95 in Jun-Aug, × 1.00 otherwise, after conservative "
        f"averaging to {size.coarse_res} deg and Gaussian smoothing (sigma {COARSE_SMOOTHING_SIGMA} cells)"
    )
    return ds


def _elevation_ds(lat, lat_b, lon, lon_b) -> xr.Dataset:
    elevation, land, crest_lon, _, _ = _terrain(lat, lon)
    ds = _grid_ds(
        lat,
        lat_b,
        lon,
        lon_b,
        elevation=(
            ("lat", "lon"),
            elevation.astype(np.float32),
            {
                "standard_name": "surface_altitude",
                "long_name": "elevation above sea level",
                "units": "m",
                "comment": "sea cells are 0 m",
            },
        ),
        land=(
            ("lat", "lon"),
            land.astype(np.int8),
            {
                "standard_name": "land_binary_mask",
                "long_name": "land mask",
                "units": "1",
                "flag_values": np.array([0, 1], dtype=np.int8),
                "flag_meanings": "sea land",
            },
        ),
        crest_lon=(
            ("lat",),
            crest_lon,
            {
                "long_name": f"longitude of the {RANGE} crest line",
                "units": "degrees_east",
                "comment": "NaN (by design) in rows without land",
            },
        ),
    )
    ds.attrs = _attrs(f"{ISLAND} demo: elevation and land mask (invented)")
    return ds


def _gev_ds(sim, lat_b, lon_b, y0, y1) -> xr.Dataset:
    ds = _grid_ds(
        sim["lat"],
        lat_b,
        sim["lon"],
        lon_b,
        loc=(("lat", "lon"), sim["loc"], {"long_name": "GEV location", "units": "mm"}),
        scale=(("lat", "lon"), sim["scale"], {"long_name": "GEV scale", "units": "mm"}),
        shape=(
            ("lat", "lon"),
            np.full(sim["loc"].shape, GEV_SHAPE),
            {"long_name": "GEV shape (Hosking's k; equals scipy.stats.genextreme c)", "units": "1"},
        ),
        annual_max=(
            ("year", "lat", "lon"),
            sim["annual_max"].astype(np.float32),
            {"long_name": "inserted annual maximum daily depth (the year's largest day)", "units": "mm"},
        ),
        storm_date=(
            ("year",),
            np.array(sim["storm_dates"], dtype="datetime64[ns]"),
            {"long_name": "date of the inserted annual-maximum storm"},
        ),
    )
    ds = ds.assign_coords(year=("year", np.arange(y0, y1 + 1), {"long_name": "calendar year"}))
    ds.attrs = _attrs(f"{ISLAND} demo: true GEV parameters of annual daily maxima (invented)")
    ds.attrs["shape_convention"] = (
        "Hosking's k: k < 0 heavy upper tail; quantile x(F) = loc + scale/k "
        "(1 - (-ln F)^k); scipy.stats.genextreme(c=k, loc, scale)"
    )
    ds.attrs["capped_fraction"] = float(sim["capped_fraction"])
    return ds


def basins_geojson() -> dict:
    """The demo basins as a GeoJSON FeatureCollection (lon/lat, RFC 7946)."""
    feats = []
    for b in BASINS:
        ring = [list(v) for v in b["vertices"]] + [list(b["vertices"][0])]
        feats.append(
            {
                "type": "Feature",
                "properties": {"name": b["name"], "side": b["side"], "description": b["description"]},
                "geometry": {"type": "Polygon", "coordinates": [ring]},
            }
        )
    return {"type": "FeatureCollection", "name": f"{ISLAND} demo basins (invented)", "features": feats}


# --------------------------------------------------------------------------- writing
def _encoding(ds: xr.Dataset, tile: tuple[int, int, int] | None = None) -> dict:
    enc = {name: {"_FillValue": None} for name in ds.variables}
    for name, var in ds.data_vars.items():
        if var.dims == ("time", "lat", "lon"):
            nt, ny, nx = var.shape
            chunks = tile or (nt, ny, nx)
            enc[name] = {
                "zlib": True,
                "complevel": 4,
                "shuffle": True,
                "_FillValue": None,
                "chunksizes": tuple(min(c, n) for c, n in zip(chunks, var.shape)),
            }
        elif var.dtype.kind == "f":
            enc[name] = {"zlib": True, "complevel": 4, "_FillValue": np.nan if var.isnull().any() else None}
    if "storm_date" in ds.variables:
        enc["storm_date"] = {
            "units": "days since 1981-01-01",
            "calendar": "standard",
            "dtype": "float64",
            "_FillValue": None,
        }
    return enc


def _write_atomic(ds: xr.Dataset, path: Path, calendar: str = "standard", tile=None) -> None:
    enc = _encoding(ds, tile)
    if "time" in ds.variables:
        enc.update(_time_encoding(calendar))
    atomic_write(
        path, True, lambda tmp: ds.to_netcdf(tmp, engine="netcdf4", format="NETCDF4", encoding=enc), "demo.generate"
    )


def _write_text_atomic(text: str, path: Path) -> None:
    atomic_write(path, True, lambda tmp: tmp.write_text(text, encoding="utf-8"), "demo.generate")


def _size_meta(size: _Size) -> dict:
    return {"res": size.res, "coarse_res": size.coarse_res, "years": list(size.years)}


def default_directory() -> Path:
    """``demo_grids/generated`` in a source checkout, else a per-user cache folder."""
    repo = Path(__file__).resolve().parent.parent / "demo_grids"
    if repo.is_dir() and os.access(repo, os.W_OK):
        return repo / "generated"
    cache = Path(os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache")
    return cache / "climwidgets" / "demo_grids"


def _domain_mean(field, lat):
    """Area-weighted mean over the last two (lat, lon) axes."""
    w = np.cos(np.deg2rad(lat))[:, None] * np.ones(field.shape[-1])
    return (field * w).sum(axis=(-2, -1)) / w.sum()


def _scenario_summary(sim, totals, size: _Size, coarse: xr.Dataset) -> dict:
    y0, y1 = size.years
    n_years = y1 - y0 + 1
    annual = totals.reshape(n_years, 12, *totals.shape[1:]).sum(axis=1)
    domain = _domain_mean(annual, sim["lat"])
    mean = domain.mean()
    ctot = coarse["pr"].values.astype(np.float64) * 86400.0 * np.tile(_NOLEAP_DAYS, n_years)[:, None, None]
    cmean = _domain_mean(ctot.sum(axis=0), coarse.lat.values) / n_years
    return {
        "scenario_version": DEMO_VERSION,
        "climwidgets_version": __version__,
        "seed": SEED,
        "size": _size_meta(size),
        "invented": True,
        "island": ISLAND,
        "range": RANGE,
        "crest_line": [
            [round(float(x), 4), round(float(y), 4)]
            for x, y in zip(_terrain(sim["lat"], sim["lon"])[2], sim["lat"])
            if np.isfinite(x)
        ],
        "notable_years": {
            str(y): {"factor": f, "domain_total_percent_of_mean": round(float(100 * domain[y - y0] / mean), 1)}
            for y, f in NOTABLE_YEARS.items()
            if y0 <= y <= y1
        },
        "year_factors": {str(y): round(f, 4) for y, f in sim["factors"].items()},
        "domain_mean_annual_total_mm": round(float(mean), 1),
        "coarse_bias_factors_by_month": {str(m): f for m, f in sorted(COARSE_BIAS.items())},
        "coarse_annual_mean_bias_percent": round(float(100 * (cmean / mean - 1)), 2),
        "gev": {"shape_k": GEV_SHAPE, "scale_over_loc": GEV_SCALE_RATIO, "capped_fraction": sim["capped_fraction"]},
        "basins": [{k: v for k, v in b.items() if k != "vertices"} for b in BASINS],
    }


def generate(directory=None, force: bool = False, quiet: bool = False, size: str = "full") -> dict[str, Path]:
    """Write the demo files (if absent, or when ``force``) and return their paths by key.

    Parameters
    ----------
    directory : str or Path, optional
        Where to write. Default: ``demo_grids/generated`` in a source checkout, else
        ``$XDG_CACHE_HOME/climwidgets/demo_grids`` (``~/.cache/...``).
    force : bool
        Rewrite every file even if present.
    quiet : bool
        Print nothing.
    size : {"full", "test"}
        ``"full"``: 0.1° grid (coarse product 0.25°); ``"test"``: the same scenario on a
        0.25° grid (coarse product 0.5°), for fast tests.

    Returns
    -------
    dict
        Keys ``daily``, ``monthly``, ``coarse_monthly``, ``elevation``, ``gev``,
        ``basins``, ``scenario`` → paths.
    """
    if size not in SIZES:
        raise ParameterError(
            f"unknown demo size {size!r}",
            source="climwidgets.demo.generate",
            variable="size",
            expected=f"one of {sorted(SIZES)}",
            fix="pass size='full' (default) or size='test'",
        )
    spec = SIZES[size]
    out = Path(directory) if directory is not None else default_directory()
    out.mkdir(parents=True, exist_ok=True)
    paths = {key: out / name for key, name in FILES.items()}
    if not force and all(p.exists() for p in paths.values()):
        try:
            meta = json.loads(paths["scenario"].read_text(encoding="utf-8"))
            if meta.get("scenario_version") == DEMO_VERSION and meta.get("size") == _size_meta(spec):
                return paths
        except (OSError, ValueError):
            pass
    say = (lambda *a: None) if quiet else (lambda *a: print(*a, file=sys.stderr))
    t0 = _time.perf_counter()
    y0, y1 = spec.years
    lat, lat_b = _axis(*LAT_RANGE, spec.res)
    lon, lon_b = _axis(*LON_RANGE, spec.res)
    say(f"climwidgets.demo: simulating {y1 - y0 + 1} years on {len(lat)}x{len(lon)} cells ...")
    sim = _simulate(spec)
    daily = _daily_ds(sim, lat_b, lon_b)
    totals = _monthly_totals(daily["pr"].values, sim["days"])
    monthly = _monthly_ds(totals, y0, y1, lat, lat_b, lon, lon_b)
    coarse = _coarse_ds(totals, y0, y1, lat, lat_b, lon, lon_b, spec)
    tile = (365, max(1, (len(lat) + 1) // 2), max(1, (len(lon) + 1) // 2))
    _write_atomic(daily, paths["daily"], tile=tile)
    _write_atomic(monthly, paths["monthly"], tile=(120, len(lat), len(lon)))
    _write_atomic(coarse, paths["coarse_monthly"], calendar="noleap", tile=(120, len(coarse.lat), len(coarse.lon)))
    _write_atomic(_elevation_ds(lat, lat_b, lon, lon_b), paths["elevation"])
    _write_atomic(_gev_ds(sim, lat_b, lon_b, y0, y1), paths["gev"])
    _write_text_atomic(json.dumps(basins_geojson(), indent=1) + "\n", paths["basins"])
    _write_ensemble(totals, spec, lat_b, lon_b, out)
    summary = _scenario_summary(sim, totals, spec, coarse)
    summary["ensemble"] = _demo_ensemble.ensemble_summary_json(2 * spec.coarse_res)
    _write_text_atomic(json.dumps(summary, indent=1) + "\n", paths["scenario"])
    say(f"climwidgets.demo: wrote {len(paths)} files to {out} in {_time.perf_counter() - t0:.1f} s")
    return paths


def _write_ensemble(totals, spec: _Size, lat_b, lon_b, out: Path) -> dict[str, Path]:
    """The invented ensemble (see :mod:`climwidgets.demo_ensemble`) on a grid twice as coarse
    as the second product's, written next to the other demo files."""
    paths = {key: out / name for key, name in _demo_ensemble.ENSEMBLE_FILES.items()}
    _demo_ensemble.write_ensemble(
        totals,
        spec.years,
        lat_b,
        lon_b,
        2 * spec.coarse_res,
        LAT_RANGE,
        LON_RANGE,
        _attrs(""),
        paths,
        lambda ds, path: _write_atomic(ds, path, calendar="noleap"),
    )
    return paths


def generate_ensemble(directory=None, force: bool = False, quiet: bool = False, size: str = "full") -> dict[str, Path]:
    """The demo ensemble files (historical and future runs, four members), generating the demo if needed.

    Returns
    -------
    dict
        Keys ``ensemble_historical``, ``ensemble_future`` → paths.  Both hold
        ``pr(member, time, lat, lon)``, monthly totals in mm on a ``noleap`` calendar; the
        future file also holds the known ``change_factor(member, month)``.
    """
    paths = generate(directory, force=force, quiet=quiet, size=size)
    out = paths["monthly"].parent
    ens = {key: out / name for key, name in _demo_ensemble.ENSEMBLE_FILES.items()}
    stale = any(not p.exists() or p.stat().st_mtime < paths["monthly"].stat().st_mtime for p in ens.values())
    if stale:  # a demo folder from before the ensemble existed (generate() writes it otherwise)
        spec = SIZES[size]
        with xr.open_dataset(paths["monthly"]) as monthly:
            totals = monthly["pr"].values.astype(np.float64)
            lat_b, lon_b = monthly["lat_bnds"].values, monthly["lon_bnds"].values
        _write_ensemble(totals, spec, lat_b, lon_b, out)
    return ens


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(
        prog="python -m climwidgets.demo", description=f"Generate the invented {ISLAND} demo grids (deterministic)."
    )
    parser.add_argument("--dir", default=None, help="output folder (default: demo_grids/generated or a user cache)")
    parser.add_argument("--force", action="store_true", help="rewrite files even if present")
    parser.add_argument("--size", default="full", choices=sorted(SIZES), help="grid size (default: full)")
    parser.add_argument("--quiet", action="store_true", help="no progress messages")
    args = parser.parse_args(argv)
    paths = generate(args.dir, force=args.force, quiet=args.quiet, size=args.size)
    generate_ensemble(args.dir, quiet=args.quiet, size=args.size)  # written, listed in demo_grids/README.md
    for key, path in paths.items():
        print(f"{key}\t{path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
