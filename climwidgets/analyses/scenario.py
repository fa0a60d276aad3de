"""Climate-change signals per basin: seasonal share and annual normal, with the ensemble spread.

:func:`basin_signals` averages a historical and a future model run over each basin and
compares them with :mod:`climwidgets.compute.signals`: the change in the seasonal share
(future − historical) and the change in the annual normal (future / historical − 1), per
member, then the ensemble mean, the lowest and highest member and the share of members
agreeing on the sign (:func:`climwidgets.compute.ensemble.ensemble_summary`).  The
scenario cautions (:data:`climwidgets.compute.scenario.SCENARIO_CAUTIONS`) travel in the
result's attributes; every view of these numbers shows them.
"""

from __future__ import annotations

import xarray as xr

from ..compute.scenario import SCENARIO_CAUTIONS
from ..compute.seasonal import season_label
from ..compute.signals import annual_normal_signal, seasonal_share_signal
from ..compute.totals import monthly_totals
from ..provenance import history_line
from .basins import basin_series
from .meta import describe, ensemble_attrs

__all__ = ["basin_signals"]


def _monthly(run):
    return run if run.attrs.get("step") == "month" else monthly_totals(run)


def _per_basin(run, basins):
    series = basin_series(_monthly(run), basins)
    return series.reset_coords("covered_fraction", drop=True)


def basin_signals(model_hist: xr.DataArray, model_future: xr.DataArray, basins, months=(7, 8),
                  historical=None, future=None, dim=None) -> xr.Dataset:
    """Change in seasonal share and annual normal of each basin, per member and over the ensemble.

    Parameters
    ----------
    model_hist, model_future
        Historical and future runs of the same members (mm per step, same calendar).
    basins
        A Basin, a list of them or a :class:`cw.BasinSet`.
    months
        The season of the seasonal share.
    historical, future
        (first, last) years of each period; default all complete years of each run.
    dim
        The member dimension when it is not one of the usual names.

    Returns
    -------
    xr.Dataset
        On (basin, member): ``share_change_1`` and ``normal_change_1``.  On basin, with
        members: ``<name>_mean``, ``<name>_lower`` (lowest member), ``<name>_upper``
        (highest member) and ``<name>_agreement``.  ``attrs["cautions"]`` holds the
        scenario cautions.

    References
    ----------
    Hyndman, R. J. and Fan, Y. (1996): Sample quantiles in statistical packages. The
    American Statistician 50, 361–365, doi:10.1080/00031305.1996.10473566.
    """
    func = "basin_signals"
    hist, fut = _per_basin(model_hist, basins), _per_basin(model_future, basins)
    hist.attrs, fut.attrs = dict(model_hist.attrs, step="month"), dict(model_future.attrs, step="month")
    share = seasonal_share_signal(hist, fut, months=months, historical=historical, future=future, dim=dim)
    normal = annual_normal_signal(hist, fut, historical=historical, future=future, dim=dim)
    ds = xr.Dataset({"share_change_1": describe(share["change"], "share_change_1"),
                     "normal_change_1": describe(normal["change"] - 1.0, "normal_change_1")})
    if share.attrs.get("member_dim", "none") != "none":
        for name, sig, offset in (("share_change_1", share, 0.0), ("normal_change_1", normal, 1.0)):
            attrs = ds[name].attrs
            ds[f"{name}_mean"] = (sig["change_mean"] - offset).assign_attrs(ensemble_attrs(attrs, "mean"))
            ds[f"{name}_lower"] = (sig["change_min"] - offset).assign_attrs(ensemble_attrs(attrs, "min"))
            ds[f"{name}_upper"] = (sig["change_max"] - offset).assign_attrs(ensemble_attrs(attrs, "max"))
            ds[f"{name}_agreement"] = describe(sig["change_agreement"], "agreement_1",
                                               label=f"{attrs['label']}, members agreeing")
    ds.attrs = {"months": list(months), "season": season_label(tuple(months)),
                "historical_period": share.attrs["historical_period"],
                "future_period": share.attrs["future_period"], "member_dim": share.attrs.get("member_dim", "none"),
                "cautions": list(SCENARIO_CAUTIONS),
                "history": history_line(func, months=tuple(months), historical=historical, future=future)}
    return ds
