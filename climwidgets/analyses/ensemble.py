"""Basin tables over an ensemble: the ensemble mean beside the spread of the members.

A basin table computed from data with a member dimension (``member``, ``realization``,
``ensemble`` or ``model``) has one row per basin and member.  :func:`ensemble_basin_table`
reduces the member dimension of every described column with
:func:`climwidgets.compute.ensemble.ensemble_summary`, so each basin number is shown as
the ensemble mean with a spread beside it: the lowest and highest member (``spread="range"``)
or two percentiles of the members (``spread=(0.1, 0.9)``).  The labels are the column's own
label followed by the words of :data:`climwidgets.analyses.meta.ENSEMBLE_STATS`; units and
display formats stay those of the column.
"""

from __future__ import annotations

import xarray as xr

from ..compute.ensemble import ensemble_summary, member_dim
from ..errors import ParameterError
from ..provenance import history_line
from .meta import ensemble_attrs, table_variables

__all__ = ["ensemble_basin_table"]


def _spread(spread, func):
    if isinstance(spread, str) and spread == "range":
        return None
    try:
        lo, hi = (float(q) for q in spread)
        ok = 0.0 <= lo < hi <= 1.0
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise ParameterError(f"spread={spread!r} is not known", source=func, variable="spread",
                             expected="'range' (lowest and highest member) or two increasing probabilities",
                             fix="pass spread='range' or spread=(0.1, 0.9)")
    return lo, hi


def ensemble_basin_table(table: xr.Dataset, dim=None, spread="range", columns=None) -> xr.Dataset:
    """The ensemble mean and spread of every described column of a basin table.

    Parameters
    ----------
    table
        A basin analysis with a member dimension (e.g. :func:`analyses.basins.basin_table`
        of data with a ``member`` dimension): described variables on (basin, member).
    dim
        The member dimension; detected when left out (see ``compute.ensemble.MEMBER_DIMS``).
    spread
        ``"range"``: the lowest and highest member; or ``(low, high)`` probabilities of the
        member percentiles (linear interpolation, Hyndman & Fan 1996 type 7).
    columns
        The variables to summarise (default: every described variable on basin × member).

    Returns
    -------
    xr.Dataset
        On ``basin``: for each column ``<name>_mean``, ``<name>_lower``, ``<name>_upper``
        with the column's units and format, and ``n_members``.  Variables without the
        member dimension (the basin area) are kept as they are.  Lazy on dask input.

    Raises
    ------
    ParameterError
        No member dimension, or an unknown spread.

    References
    ----------
    Hyndman, R. J. and Fan, Y. (1996): Sample quantiles in statistical packages. The
    American Statistician 50, 361–365, doi:10.1080/00031305.1996.10473566.
    """
    func = "ensemble_basin_table"
    q = _spread(spread, func)
    names: list = list(table.data_vars) if columns is None else list(columns)
    first = next((table[n] for n in names if n in table), None)
    if first is None:
        raise ParameterError("the table has none of the columns asked for", source=func, variable="columns",
                             expected="names of described variables of the table", fix="leave columns out")
    dim = member_dim(table, dim, func)
    index = ("basin", dim)
    if columns is None:
        names = table_variables(table, index)
    keep = table_variables(table, ("basin",))
    out = xr.Dataset({n: table[n] for n in keep})
    n_members = None
    for name in names:
        da = table[name]
        attrs = dict(da.attrs)
        summary = ensemble_summary(da.reset_coords(drop=True), dim=dim, quantiles=(0.25, 0.75) if q is None else q)
        if q is None:
            lower, upper = summary["min"], summary["max"]
            wl, wu = "lowest member", "highest member"
        else:
            lower, upper = summary["lower_quartile"], summary["upper_quartile"]
            wl, wu = f"ensemble {q[0]:.0%} percentile", f"ensemble {q[1]:.0%} percentile"
        out[f"{name}_mean"] = summary["mean"].rename(f"{name}_mean").assign_attrs(ensemble_attrs(attrs, "mean"))
        out[f"{name}_lower"] = lower.rename(f"{name}_lower").assign_attrs(ensemble_attrs(attrs, "min", wl))
        out[f"{name}_upper"] = upper.rename(f"{name}_upper").assign_attrs(ensemble_attrs(attrs, "max", wu))
        if n_members is None:
            n_members = summary["n_members"]
    if n_members is not None:
        out["n_members"] = n_members.assign_attrs(label="members", units="1", display_units="",
                                                  display_scale=1.0, display_format=".0f",
                                                  description="number of members with a value")
    out.attrs = {**{k: v for k, v in table.attrs.items() if k != "history"}, "member_dim": dim,
                 "spread": "range" if q is None else list(q),
                 "history": history_line(func, dim=dim, spread=spread, columns=names)}
    return out
