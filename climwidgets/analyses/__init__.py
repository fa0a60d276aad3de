"""Analyses: every result a user sees, built on compute and geo.

Each analysis is a function ``(data, basins, parameters) -> xr.Dataset`` that stays lazy
until the caller computes, built on :func:`cw.climatology_bundle` so that one
``compute`` reads every stored chunk once, and whose variables carry a label, units, a
display format and a description (:mod:`climwidgets.analyses.meta`).  Widgets, the CSV,
NetCDF and HTML exports and the command line render from these and nothing else.

Modules: ``meta`` (the display attributes and the table renderer), ``basins`` (basin
table, seasonal share per basin, what-if volumes), ``comparison`` (basin table across
products), ``extremes`` (areal design depths), ``orographic`` (windward/leeward band
table), ``anomalies`` (basin anomaly tables), ``ensemble`` (ensemble mean and spread of a
basin table over members).
"""
