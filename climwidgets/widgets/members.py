"""The "Ensemble member" menu: one member, the ensemble mean or the spread between members.

Every widget built on :class:`~climwidgets.widgets.base.BaseWidget` whose data have a
member dimension (``member``, ``realization``, ``ensemble`` or ``model``, see
:data:`climwidgets.compute.ensemble.MEMBER_DIMS`) shows this menu at the top of its
controls.  Without a member dimension there is no menu and nothing changes.

Order of the work: the widget's ``compute`` runs on the whole ensemble (the compute and
geo functions carry the member dimension through, member by member), and the base takes
:func:`climwidgets.analyses.ensemble.member_view` of what it returned before ``finish``
and ``render`` see it.  So every statistic is made per member first and summarised
afterwards: the ensemble-mean seasonal share of a basin is the mean of the members'
shares (not the share of the ensemble-mean precipitation), the spread of a 100-year depth
is the highest minus the lowest member's 100-year depth.  The cost is that one member
is computed with all the others; a widget's results are kept per choice, so going back
to a choice already seen computes nothing.

Hooks a widget may set (class attributes):

``member_whole``  keys of the ``compute`` dict handed to ``finish`` with the member
                  dimension kept (inputs the widget keeps for later computations, such as
                  basin series, rather than numbers it shows)
``member_state``  names of attributes holding computed numbers that are not an
                  :class:`~climwidgets.cache.LRUCache` (those are found by themselves):
                  each choice gets its own
"""

from __future__ import annotations

import html

import ipywidgets as widgets
import xarray as xr

from ..analyses.ensemble import member_choices, member_view
from ..analyses.meta import MEMBER_VIEWS, member_view_words
from ..cache import LRUCache
from ..compute.ensemble import MEMBER_DIMS, member_dim
from ..errors import ParameterError

__all__ = [
    "DEFAULT_CHOICE",
    "MEMBER_LABEL",
    "find_member_dim",
    "member_menu",
    "reduce_members",
    "fresh_like",
    "caption",
]

#: The words of the menu.
MEMBER_LABEL = "Ensemble member"
#: What a widget shows first: the ensemble mean.
DEFAULT_CHOICE = "mean"

_DROP = object()


def find_member_dim(obj) -> str | None:
    """The member dimension of ``obj`` (a DataArray, Dataset, or dict of them), or None."""
    if isinstance(obj, dict):
        found = [find_member_dim(v) for v in obj.values()]
        return next((d for d in found if d is not None), None)
    if not isinstance(obj, (xr.DataArray, xr.Dataset)):
        return None
    found = [d for d in MEMBER_DIMS if d in obj.dims]
    if len(found) > 1:
        raise ParameterError(
            f"the data have several member-like dimensions {tuple(found)}",
            source=getattr(obj, "name", None) or "widget input",
            variable=str(found),
            expected="at most one member dimension for the Ensemble member menu",
            fix=f"select one of them (e.g. pr.isel({found[1]}=0)) or stack them into one: "
            f"pr.stack(member={tuple(found)!r})",
        )
    return member_dim(obj, None, "ensemble member menu", required=False)


def _source_for(obj, dim):
    if isinstance(obj, dict):
        return next(v for v in obj.values() if isinstance(v, (xr.DataArray, xr.Dataset)) and dim in v.dims)
    return obj


def member_menu(obj, dim: str, style=None, layout=None) -> widgets.Dropdown:
    """The "Ensemble member" Dropdown for ``obj``: each member, the ensemble mean, the spread."""
    source = _source_for(obj, dim)
    options = []
    for choice in member_choices(source, dim):
        words = member_view_words(choice)
        options.append((words["label"] if choice in MEMBER_VIEWS else str(choice), choice))
    return widgets.Dropdown(
        options=options,
        value=DEFAULT_CHOICE,
        description=MEMBER_LABEL,
        style=style or {"description_width": "120px"},
        layout=layout or widgets.Layout(width="330px"),
    )


def _numeric(da) -> bool:
    import numpy as np

    return bool(np.issubdtype(da.dtype, np.number) or np.issubdtype(da.dtype, np.bool_))


def reduce_members(obj, choice, dim: str, keep=()):
    """``obj`` (as ``compute`` returned it) with :func:`member_view` taken of every xarray object.

    Walks dicts, lists and tuples.  Objects without ``dim`` and the entries of a top-level
    dict named in ``keep`` are left as they are.  Under a summary (mean, spread), a
    DataArray that holds no numbers (class labels) is left out of its dict or list.
    """
    out = _reduce(obj, choice, dim, keep, top=True)
    return None if out is _DROP else out


def _reduce(obj, choice, dim, keep, top=False):
    if isinstance(obj, (xr.DataArray, xr.Dataset)):
        if dim not in obj.dims:
            return obj
        if isinstance(obj, xr.DataArray) and choice in MEMBER_VIEWS and not _numeric(obj):
            return _DROP
        return member_view(obj, choice, dim)
    if isinstance(obj, dict):
        items = {k: (v if top and k in keep else _reduce(v, choice, dim, keep)) for k, v in obj.items()}
        return {k: v for k, v in items.items() if v is not _DROP}
    if isinstance(obj, (list, tuple)):
        items = [v for v in (_reduce(v, choice, dim, keep) for v in obj) if v is not _DROP]
        return tuple(items) if isinstance(obj, tuple) else items
    return obj


def fresh_like(value):
    """An empty store of the kind of ``value`` (for a choice not seen yet)."""
    if isinstance(value, LRUCache):
        return LRUCache(maxsize=value.maxsize)
    if isinstance(value, dict):
        return {}
    return None


def caption(choice, n_members: int) -> str:
    """The line above a widget's table saying which member view it shows (HTML)."""
    words = member_view_words(choice, n_members if choice in MEMBER_VIEWS else None)
    return (
        f"<div style='margin:2px 0'><small><b>{html.escape(MEMBER_LABEL)}:</b> "
        f"{html.escape(words['description'])}</small></div>"
    )
