"""Basin tables over an ensemble: the ensemble mean beside the spread of the members.

A basin table computed from data with a member dimension (``member``, ``realization``,
``ensemble`` or ``model``) has one row per basin and member.  :func:`ensemble_basin_table`
reduces the member dimension of every described column with
:func:`climwidgets.compute.ensemble.ensemble_summary`, so each basin number is shown as
the ensemble mean with a spread beside it: the lowest and highest member (``spread="range"``)
or two percentiles of the members (``spread=(0.1, 0.9)``).  The labels are the column's own
label followed by the words of :data:`climwidgets.analyses.meta.ENSEMBLE_STATS`; units and
display formats stay those of the column.

:func:`member_view` is the one way a result with a member dimension is shown member by
member: one member, the ensemble mean, or the spread between members (highest minus
lowest member).  The widgets' "Ensemble member" menu applies it to what they computed
(per member first, then this view: see its docstring).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr

from ..compute.ensemble import ensemble_summary, member_dim
from ..errors import ParameterError
from ..provenance import history_line, with_history
from .meta import MEMBER_VIEWS, ensemble_attrs, member_view_attrs, table_variables

__all__ = ["MEMBER_VIEWS", "ensemble_basin_table", "member_choices", "member_view"]


def _spread(spread: Any, func: str) -> tuple[float, float] | None:
    if isinstance(spread, str) and spread == "range":
        return None
    try:
        lo, hi = (float(q) for q in spread)
        ok = 0.0 <= lo < hi <= 1.0
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise ParameterError(
            f"spread={spread!r} is not known",
            source=func,
            variable="spread",
            expected="'range' (lowest and highest member) or two increasing probabilities",
            fix="pass spread='range' or spread=(0.1, 0.9)",
        )
    return lo, hi


def ensemble_basin_table(
    table: xr.Dataset, dim: str | None = None, spread: Any = "range", columns: Sequence[str] | None = None
) -> xr.Dataset:
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

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> t = xr.Dataset(
    ...     {"annual": (("basin", "member"), np.array([[900.0, 1000.0, 1100.0]]), {"units": "mm"})},
    ...     coords={"basin": ["A"], "member": ["m1", "m2", "m3"]},
    ... )
    >>> out = ensemble_basin_table(t, columns=["annual"])
    >>> [float(out[f"annual_{k}"][0]) for k in ("mean", "lower", "upper")]
    [1000.0, 900.0, 1100.0]
    """
    func = "ensemble_basin_table"
    q = _spread(spread, func)
    names: list[Any] = list(table.data_vars) if columns is None else list(columns)
    first = next((table[n] for n in names if n in table), None)
    if first is None:
        raise ParameterError(
            "the table has none of the columns asked for",
            source=func,
            variable="columns",
            expected="names of described variables of the table",
            fix="leave columns out",
        )
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
        out["n_members"] = n_members.assign_attrs(
            label="members",
            units="1",
            display_units="",
            display_scale=1.0,
            display_format=".0f",
            description="number of members with a value",
        )
    out.attrs = {
        **{k: v for k, v in table.attrs.items() if k != "history"},
        "member_dim": dim,
        "spread": "range" if q is None else list(q),
        "history": history_line(func, dim=dim, spread=spread, columns=names),
    }
    return out


def member_choices(obj: Any, dim: str | None = None) -> list[Any]:
    """The choices :func:`member_view` takes for ``obj``: every member label, then the summaries.

    Parameters
    ----------
    obj
        DataArray or Dataset with a member dimension.
    dim
        The member dimension; detected when left out.

    Returns
    -------
    list
        The member labels (positions 0, 1, ... when the dimension has no coordinate),
        then ``"mean"`` and ``"spread"``.

    Raises
    ------
    ParameterError
        ``obj`` has no member dimension.

    Examples
    --------
    >>> import xarray as xr
    >>> da = xr.DataArray([1.0, 2.0, 4.0], dims="member", coords={"member": ["a", "b", "c"]})
    >>> member_choices(da)
    ['a', 'b', 'c', 'mean', 'spread']
    """
    dim = member_dim(obj, dim, "member_choices")
    labels = list(obj[dim].values.tolist()) if dim in obj.coords else list(range(obj.sizes[dim]))
    return labels + list(MEMBER_VIEWS)


def _numeric(da: xr.DataArray) -> bool:
    return bool(np.issubdtype(da.dtype, np.number) or np.issubdtype(da.dtype, np.bool_))


def member_view(obj: Any, choice: str, dim: str | None = None) -> Any:
    """One member, the ensemble mean or the spread between members of a result.

    The view of a result computed for every member of an ensemble.  For a statistic that
    is not linear in the data (a seasonal share, a return level, an SPI, a trend) compute
    it per member first and take this view of the result: the ensemble mean of per-member
    seasonal shares is not the seasonal share of the ensemble-mean precipitation.  For a
    sum or a mean over time both orders give the same numbers.

    Parameters
    ----------
    obj
        DataArray or Dataset with a member dimension (``member``, ``realization``,
        ``ensemble`` or ``model``, or ``dim=``), numpy- or dask-backed.  In a Dataset only
        the variables with that dimension change; the others are kept as they are.
    choice
        A member label (a position when the dimension has no coordinate) for that
        member; ``"mean"`` for the ensemble mean; ``"spread"`` for the spread between
        members, the highest minus the lowest member.  Members without a value (NaN) are
        left out cell by cell, as in :func:`climwidgets.compute.ensemble.ensemble_summary`.
        The words ``"mean"`` and ``"spread"`` always mean the summaries.
    dim
        The member dimension; detected when left out.

    Returns
    -------
    xarray.DataArray or xarray.Dataset
        ``obj`` without the member dimension, lazy on dask input, with its attributes and
        units (the spread is a difference of members: it keeps the units of the number).
        Each changed variable records the view in ``attrs["ensemble_member"]``; under a
        summary a described variable's label (or ``long_name``) names it too
        (:func:`climwidgets.analyses.meta.member_view_attrs`).  Under a summary the
        coordinates along members and the variables that are not numbers (class
        labels) are left out.  A history line is appended.

    Raises
    ------
    ParameterError
        No member dimension, an unknown choice, or a summary of a DataArray that does not
        hold numbers.

    Examples
    --------
    >>> import xarray as xr
    >>> da = xr.DataArray([[1.0, 3.0], [2.0, 7.0], [4.0, 5.0]], dims=("member", "x"),
    ...                   coords={"member": ["a", "b", "c"]}, attrs={"units": "mm"})
    >>> member_view(da, "b").values.tolist()
    [2.0, 7.0]
    >>> member_view(da, "mean").values.tolist()
    [2.3333333333333335, 5.0]
    >>> member_view(da, "spread").values.tolist()
    [3.0, 4.0]
    >>> member_view(da, "spread").attrs["units"]
    'mm'
    """
    func = "member_view"
    if not isinstance(obj, (xr.DataArray, xr.Dataset)):
        raise ParameterError(
            f"obj is a {type(obj).__name__}",
            source=func,
            variable="obj",
            expected="an xarray DataArray or Dataset with a member dimension",
            fix="pass the computed result (xarray), not a table",
        )
    dim = member_dim(obj, dim, func)
    has_coord = dim in obj.coords
    labels = list(obj[dim].values.tolist()) if has_coord else list(range(obj.sizes[dim]))
    summary = isinstance(choice, str) and choice in MEMBER_VIEWS
    if not summary and choice not in labels:
        raise ParameterError(
            f"{choice!r} is not a member of '{dim}'",
            source=func,
            variable="choice",
            expected=f"one of {labels} (members), 'mean' or 'spread'",
            fix="pick a member label, or 'mean' / 'spread' for the summaries",
        )
    n = int(obj.sizes[dim])

    def one(da: xr.DataArray) -> xr.DataArray:
        if summary and not _numeric(da):
            raise ParameterError(
                f"{da.name or 'the DataArray'} holds {da.dtype} values, not numbers",
                source=func,
                variable=str(da.name),
                expected="numbers for a mean or a spread",
                fix="pick one member, or summarise the numbers the labels were made from",
            )
        if not summary:
            out = da.sel({dim: choice}, drop=True) if has_coord else da.isel({dim: choice}, drop=True)
        else:
            x = da.astype(float) if np.issubdtype(da.dtype, np.bool_) else da
            if choice == "mean":
                out = x.mean(dim, skipna=True)
            else:
                out = x.max(dim, skipna=True) - x.min(dim, skipna=True)
        out.attrs = member_view_attrs(da.attrs, choice, n)
        return out

    result: xr.DataArray | xr.Dataset
    if isinstance(obj, xr.DataArray):
        result = one(obj)
        result.name = obj.name
    else:
        kept = {}
        for name, var in obj.data_vars.items():
            if dim not in var.dims:
                kept[name] = var
            elif summary and not _numeric(var):
                continue  # class labels have no mean: left out, said in the docstring
            else:
                kept[name] = one(var)
        coords = {c: v for c, v in obj.coords.items() if dim not in v.dims}
        result = xr.Dataset(kept, coords=coords, attrs=dict(obj.attrs))
    return with_history(result, func, obj.attrs, choice=choice, dim=dim)
