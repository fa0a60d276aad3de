"""Ensemble summaries over a member dimension: centre, spread and agreement.

An ensemble is several runs of one or more climate models (members) on a shared dimension
called ``member``, ``realization``, ``ensemble`` or ``model`` (or any name given as
``dim=``).  :func:`ensemble_summary` reduces that dimension to the usual figures:

* centre: mean and median;
* spread: minimum, maximum, range (max − min), 25th and 75th percentiles and the
  interquartile range, and the sample standard deviation (ddof = 1);
* agreement (for a change field): the share of members whose change has the same sign as
  the ensemble-median change.

Percentiles are the linear interpolation of the sorted members (Hyndman & Fan 1996,
type 7, the default of ``numpy.quantile``).  Missing members (NaN) are left out cell by
cell; ``n_members`` says how many were used.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from typing import cast

import numpy as np
import xarray as xr

from ..errors import MismatchError, ParameterError
from ..provenance import with_history

__all__ = ["MEMBER_DIMS", "check_members", "ensemble_summary", "member_dim"]

# dimension names recognised as an ensemble axis, in order of preference
MEMBER_DIMS = ("member", "realization", "ensemble", "model")

_CHANGE_KINDS = (None, "difference", "ratio")
#: A change smaller than this (in the field's units; for a ratio, from 1) counts as none when
#: members vote on its sign: far below any shown precision, above float rounding noise.
NO_CHANGE_TOLERANCE = 1e-9


def _name(obj: object) -> str:
    name = getattr(obj, "name", None)
    return f"DataArray {name!r}" if name is not None else "input DataArray"


def member_dim(
    obj: xr.DataArray | xr.Dataset, dim: str | None = None, func: str = "ensemble_summary", required: bool = True
) -> str | None:
    """The name of the member dimension of ``obj``.

    ``dim`` given: it must be a dimension of ``obj``.  Otherwise the first of
    :data:`MEMBER_DIMS` present is used.  With ``required=False`` a missing member
    dimension gives None instead of an error.

    Parameters
    ----------
    obj
        A DataArray or Dataset.
    dim
        The member dimension's name, or None to detect one of :data:`MEMBER_DIMS`.
    func
        The calling function's name, for the error message.
    required
        False: return None when there is no member dimension.

    Returns
    -------
    str or None
        The member dimension's name; None only with ``required=False``.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``dim`` is not a dimension of ``obj``, several member-like dimensions are
        present, or none is and ``required`` is True.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.compute.ensemble import member_dim
    >>> runs = xr.DataArray(np.zeros((3, 2)), dims=("realization", "lat"))
    >>> member_dim(runs), member_dim(runs.isel(realization=0), required=False)
    ('realization', None)
    """
    if dim is not None:
        if not isinstance(dim, str) or dim not in obj.dims:
            raise ParameterError(
                f"dim={dim!r} is not a dimension of the input (dims {tuple(obj.dims)})",
                source=func,
                variable="dim",
                expected="the name of the member dimension",
                fix=f"pass one of {tuple(obj.dims)} or leave dim out to detect one of {MEMBER_DIMS}",
            )
        return dim
    found = [d for d in MEMBER_DIMS if d in obj.dims]
    if len(found) > 1:
        raise ParameterError(
            f"several member-like dimensions {tuple(found)}",
            source=func,
            variable="dim",
            expected="one member dimension",
            fix=f"pass dim= one of {tuple(found)}",
        )
    if not found:
        if not required:
            return None
        raise ParameterError(
            f"no member dimension (dims are {tuple(obj.dims)})",
            source=_name(obj),
            variable=getattr(obj, "name", None),
            expected=f"a dimension named one of {MEMBER_DIMS}",
            fix="stack the runs with xr.concat(runs, dim='member') or pass dim=",
        )
    return found[0]


def check_members(
    hist: xr.DataArray, future: xr.DataArray, dim: str | None = None, func: str = "delta_change"
) -> str | None:
    """The member dimension shared by a historical and a future run (None for single runs).

    Both runs must have the member dimension, or neither; its labels must be the same.

    Parameters
    ----------
    hist, future
        The historical and future runs (DataArrays).
    dim
        The member dimension's name, or None to detect one of :data:`MEMBER_DIMS` (then
        single runs without one are accepted).
    func
        The calling function's name, for the error message.

    Returns
    -------
    str or None
        The shared member dimension, or None when both are single runs.

    Raises
    ------
    climwidgets.errors.MismatchError
        When only one run has the member dimension, or their member labels differ.
    climwidgets.errors.ParameterError
        When ``dim`` is given and is not a dimension of the runs.

    Examples
    --------
    >>> import numpy as np, xarray as xr
    >>> from climwidgets.compute.ensemble import check_members
    >>> hist = xr.DataArray(np.zeros((2, 3)), dims=("member", "time"),
    ...                     coords={"member": ["run1", "run2"]})
    >>> check_members(hist, hist + 1.0), check_members(hist.isel(member=0), hist.isel(member=1))
    ('member', None)
    """
    dh = member_dim(hist, dim, func, required=dim is not None)
    df = member_dim(future, dim, func, required=dim is not None)
    if dh != df:
        missing = "model_future" if dh else "model_hist"
        raise MismatchError(
            f"{missing} has no member dimension '{dh or df}'",
            source=func,
            variable=dh or df,
            expected="the same member dimension in the historical and future runs",
            fix="give both runs the same member dimension, or select one member of each",
        )
    if dh is None:
        return None
    if dh in hist.coords and dh in future.coords:
        a, b = hist[dh].values, future[dh].values
        same = a.shape == b.shape and bool(np.all(a == b))
    else:
        same = hist.sizes[dh] == future.sizes[dh]
    if not same:
        raise MismatchError(
            f"the historical and future runs have different members along '{dh}'",
            source=func,
            variable=dh,
            expected="the same member labels in the same order in both runs",
            fix=f"select the common members, e.g. future.sel({dh}=hist.{dh})",
        )
    return dh


def _member_chunks(field: xr.DataArray, dim: str) -> xr.DataArray:
    # median and quantiles need the member axis in one chunk
    return field.chunk({dim: -1}) if field.chunks is not None else field


def ensemble_summary(
    field: xr.DataArray, dim: str | None = None, change: str | None = None, quantiles: Sequence[float] = (0.25, 0.75)
) -> xr.Dataset:
    """Ensemble mean, median, spread and (for a change field) agreement over members.

    Parameters
    ----------
    field
        DataArray with a member dimension (``member``, ``realization``, ``ensemble`` or
        ``model``, or ``dim=``); numpy- or dask-backed.
    dim
        Name of the member dimension; detected when left out.
    change
        None: a plain field, no agreement.  ``"difference"``: the field is a change
        (future − historical), agreement is on the sign of the value.  ``"ratio"``: the
        field is a ratio (future / historical), agreement is on the sign of value − 1.
    quantiles
        The lower and upper percentiles of the interquartile range (default 0.25, 0.75).

    Returns
    -------
    xarray.Dataset
        ``mean``, ``median``, ``min``, ``max``, ``range``, ``lower_quartile``,
        ``upper_quartile``, ``iqr``, ``std`` (sample, ddof = 1; NaN with fewer than two
        members) in the field's units, ``n_members`` (count of non-missing members) and,
        for a change field, ``agreement`` (units "1"): the share of the non-missing members
        whose change has the sign of the ensemble-median change (a member with no change
        agrees only with a median of no change).  Lazy on dask input.

    Raises
    ------
    climwidgets.errors.ParameterError
        No member dimension, an unknown ``change`` kind, or bad quantiles.

    References
    ----------
    Hyndman, R. J. and Fan, Y. (1996): Sample quantiles in statistical packages. The
    American Statistician 50, 361–365, doi:10.1080/00031305.1996.10473566.

    Examples
    --------
    >>> import xarray as xr
    >>> import climwidgets as cw
    >>> change = xr.DataArray([[-5.0, 2.0], [10.0, 4.0], [20.0, 6.0], [35.0, -1.0]],
    ...                       dims=("member", "lat"), coords={"lat": [0.5, 1.5]},
    ...                       attrs={"units": "%"})  # four members' change at two cells
    >>> ds = cw.ensemble_summary(change, change="difference")
    >>> ds["median"].values, ds["iqr"].values, ds["agreement"].values
    (array([15.,  3.]), array([17.5 ,  3.25]), array([0.75, 0.75]))
    """
    func = "ensemble_summary"
    if not isinstance(field, xr.DataArray):
        raise ParameterError(
            f"field is a {type(field).__name__}",
            source=func,
            variable="field",
            expected="an xarray.DataArray with a member dimension",
            fix="select one variable of the Dataset first",
        )
    if change not in _CHANGE_KINDS:
        raise ParameterError(
            f"change={change!r} is not known",
            source=func,
            variable="change",
            expected="None, 'difference' or 'ratio'",
            fix="pass change='difference' for future − historical, 'ratio' for future / historical",
        )
    try:
        qlo, qhi = (float(q) for q in quantiles)
        ok = 0.0 <= qlo < qhi <= 1.0
    except (TypeError, ValueError):
        ok = False
    if not ok:
        raise ParameterError(
            f"quantiles={quantiles!r} is not a pair of increasing probabilities",
            source=func,
            variable="quantiles",
            expected="(low, high) with 0 <= low < high <= 1",
            fix="pass quantiles=(0.25, 0.75) for the interquartile range",
        )
    dim = cast(str, member_dim(field, dim, func))  # required: never None
    x = _member_chunks(field.astype(float), dim)
    units = field.attrs.get("units", "")
    what = field.attrs.get("long_name", field.name or "field")
    with warnings.catch_warnings():  # an all-missing cell is NaN, said in the docstring
        warnings.simplefilter("ignore", RuntimeWarning)
        q = x.quantile([qlo, qhi], dim=dim, skipna=True)
    lo, hi = q.isel(quantile=0, drop=True), q.isel(quantile=1, drop=True)
    xmin, xmax = x.min(dim, skipna=True), x.max(dim, skipna=True)
    n = x.count(dim)
    stats = {
        "mean": (x.mean(dim, skipna=True), "ensemble mean"),
        "median": (x.median(dim, skipna=True), "ensemble median"),
        "min": (xmin, "ensemble minimum"),
        "max": (xmax, "ensemble maximum"),
        "range": (xmax - xmin, "ensemble range (maximum − minimum)"),
        "lower_quartile": (lo, f"ensemble {qlo:.0%} percentile"),
        "upper_quartile": (hi, f"ensemble {qhi:.0%} percentile"),
        "iqr": (hi - lo, f"ensemble interquartile range ({qhi:.0%} − {qlo:.0%} percentile)"),
        "std": (x.std(dim, ddof=1, skipna=True).where(n > 1), "ensemble standard deviation (ddof = 1)"),
    }
    ds = xr.Dataset({k: v.assign_attrs(units=units, long_name=f"{ln} of {what}") for k, (v, ln) in stats.items()})
    ds["n_members"] = n.assign_attrs(units="1", long_name="number of members with a value")
    if change is not None:
        ref = 0.0 if change == "difference" else 1.0

        def sign(d: xr.DataArray) -> xr.DataArray:
            # a change within float rounding noise of none (1e-14 after a ratio of two equal
            # sums) is no change: its sign is not the member's vote
            out: xr.DataArray = xr.apply_ufunc(np.sign, d.where(abs(d) > NO_CHANGE_TOLERANCE, 0.0), dask="allowed")
            return out

        member_sign = sign(x - ref)
        centre = sign(stats["median"][0] - ref)
        agree = (member_sign == centre).where(x.notnull()).sum(dim) / n.where(n > 0)
        ds["agreement"] = agree.assign_attrs(
            units="1", long_name=f"share of members agreeing with the sign of the ensemble-median change of {what}"
        )
    ds.attrs = {
        "member_dim": dim,
        "n_members_total": int(field.sizes[dim]),
        "percentile_method": "linear interpolation of sorted members (Hyndman & Fan 1996 type 7)",
        "change_kind": "none" if change is None else change,
    }
    if change is not None:
        ds.attrs["agreement_reference"] = 0.0 if change == "difference" else 1.0
    return with_history(ds, func, field.attrs, dim=dim, change=change, quantiles=(qlo, qhi))
