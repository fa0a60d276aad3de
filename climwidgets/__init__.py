"""climwidgets: gridded precipitation climatology for notebooks, scripts and reports.

Compute and geo functions are plain, lazy xarray functions.  Names are resolved on first
use (see ``_PUBLIC``) so that ``import climwidgets`` stays light and the widgets (which
need ipywidgets and a front-end) load only when asked for.
"""

from __future__ import annotations

import importlib

from ._version import __version__
from .errors import (
    BasinError,
    CalendarError,
    DataValueError,
    GridError,
    InputError,
    InsufficientDataError,
    MismatchError,
    ParameterError,
    SourceError,
    TimeAxisError,
    UnitsError,
    VariableError,
)

# public name -> module that defines it
_PUBLIC = {
    # io
    "open_precip": "climwidgets.io.loader",
    "open_elevation": "climwidgets.io.loader",
    # climatology
    "monthly_totals": "climwidgets.compute.totals",
    "annual_totals": "climwidgets.compute.totals",
    "seasonal_fraction": "climwidgets.compute.seasonal",
    "seasonal_totals": "climwidgets.compute.seasonal",
    "normals": "climwidgets.compute.normals",
    "annual_normal": "climwidgets.compute.normals",
    "seasonal_normal": "climwidgets.compute.normals",
    "anomaly": "climwidgets.compute.anomaly",
    "tercile_category": "climwidgets.compute.anomaly",
    "spi": "climwidgets.compute.spi",
    "spi_category": "climwidgets.compute.spi",
    "trend": "climwidgets.compute.trend",
    # basins
    "Basin": "climwidgets.geo.basin",
    "cell_area": "climwidgets.geo.area",
    "coverage_weights": "climwidgets.geo.coverage",
    "basin_mean": "climwidgets.geo.aggregate",
    "basin_volume": "climwidgets.geo.aggregate",
    "basin_summary": "climwidgets.analyses.basins",
    "scenario_delta": "climwidgets.analyses.basins",
    "BasinSet": "climwidgets.geo.basinset",
    "load_basins": "climwidgets.geo.basinset",
    "ACRE_FOOT_M3": "climwidgets.geo.aggregate",
    # orographic
    "rain_shadow": "climwidgets.compute.orographic",
    "elevation_gradient": "climwidgets.compute.orographic",
    "crest_from_elevation": "climwidgets.compute.orographic",
    "linear_orographic_precip": "climwidgets.compute.linear_model",
    # extremes
    "annual_maxima": "climwidgets.compute.extremes",
    "gev_lmoments": "climwidgets.compute.gev",
    "gev_mle": "climwidgets.compute.gev",
    "return_levels": "climwidgets.compute.gev",
    "return_period": "climwidgets.compute.gev",
    "saturation_vapor_pressure": "climwidgets.compute.thermo",
    "warming_scaling": "climwidgets.compute.warming",
    "DESIGN_DEPTH_CAUTIONS": "climwidgets.compute.warming",
    # indices, depth-duration-frequency, regional frequency analysis
    "precip_indices": "climwidgets.compute.indices",
    "depth_duration_frequency": "climwidgets.compute.ddf",
    "areal_reduction_factor": "climwidgets.compute.arf",
    "convert_depth": "climwidgets.compute.depth_units",
    "MM_PER_INCH": "climwidgets.compute.depth_units",
    "regional_frequency": "climwidgets.compute.regional",
    # comparison
    "regrid": "climwidgets.compute.regrid",
    "align": "climwidgets.compute.compare",
    "compare": "climwidgets.compute.compare",
    "products_basin_table": "climwidgets.analyses.comparison",
    # analyses: every number a user sees, as lazy Datasets with labels and units
    "basin_table": "climwidgets.analyses.basins",
    "basin_shares": "climwidgets.analyses.basins",
    "what_if": "climwidgets.analyses.basins",
    "areal_design_depths": "climwidgets.analyses.extremes",
    "point_design_depths": "climwidgets.analyses.extremes",
    # ensembles and scenarios
    "ensemble_summary": "climwidgets.compute.ensemble",
    "member_view": "climwidgets.analyses.ensemble",
    "delta_change": "climwidgets.compute.scenario",
    "SCENARIO_CAUTIONS": "climwidgets.compute.scenario",
    "seasonal_share_signal": "climwidgets.compute.signals",
    "annual_normal_signal": "climwidgets.compute.signals",
    "design_depth_signal": "climwidgets.compute.signals",
    # scale
    "use_cluster": "climwidgets.scale",
    "climatology_bundle": "climwidgets.compute.bundle",
    # export
    "to_netcdf": "climwidgets.report.netcdf",
    "to_csv": "climwidgets.report.tables",
    "write_report": "climwidgets.report.html",
    # widgets
    "BasinDrawer": "climwidgets.widgets.drawer",
    "SeasonalShareWidget": "climwidgets.widgets.seasonal",
    "AnomalyWidget": "climwidgets.widgets.anomaly",
    "OrographicContrastWidget": "climwidgets.widgets.orographic",
    "ExtremesWidget": "climwidgets.widgets.extremes",
    "IndicesWidget": "climwidgets.widgets.indices",
    "ComparisonWidget": "climwidgets.widgets.comparison",
    "BasinSummaryWidget": "climwidgets.widgets.summary",
    "ScenarioWidget": "climwidgets.widgets.scenario",
}


def __getattr__(name: str):
    module = _PUBLIC.get(name)
    if module is None:
        raise AttributeError(f"module 'climwidgets' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(set(globals()) | set(_PUBLIC))


__all__ = [
    "__version__",
    "InputError",
    "BasinError",
    "CalendarError",
    "DataValueError",
    "GridError",
    "InsufficientDataError",
    "MismatchError",
    "ParameterError",
    "SourceError",
    "TimeAxisError",
    "UnitsError",
    "VariableError",
    *_PUBLIC,
]
