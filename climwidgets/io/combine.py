"""The files of a glob or list, checked file by file and combined along time.

Every file must agree with the others on units, calendar, grid, time step and the way its
stamps are taken (start or end of step, by its bounds); a disagreement is a MismatchError
naming both files. Fill handling stays each file's own: a file without _FillValue gets the
fill heuristics even when the first file declares its fill.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np
import xarray as xr
from dask.base import is_dask_collection

from ..errors import MismatchError
from . import timeaxis
from .units import parse_units
from .values import mask_likely_fill, needs_fill_heuristics

__all__ = ["combine_parts"]

# One opened file: its DataArray and what the loader's layout step learnt about it (path,
# name, attrs, encoding, calendar, grid, time_bounds).
Part = tuple[xr.DataArray, dict[str, Any]]


def _same_grid(a: Sequence[Any], b: Sequence[Any]) -> bool:
    return all(x.shape == y.shape and np.allclose(x, y, atol=1e-6) for x, y in zip(a, b))


def _check_parts_in_sequence(parts: Sequence[Part]) -> None:
    """File by file: one time step in every file, and no file's times inside another's.

    Run on the parts sorted by first time, so a pair that overlaps is named by its two files
    (two copies of one file say "the same times appear in two files", not "times go back").
    """
    steps = []
    for da, info in parts:
        t = da["time"]
        steps.append(
            timeaxis.infer_step(t, info.get("time_bounds"), source=info["path"])
            if t.size >= 2 or info.get("time_bounds") is not None
            else None
        )
    known = [(s, info["path"]) for s, (_, info) in zip(steps, parts) if s is not None]
    for s, path in known[1:]:
        if s != known[0][0]:
            raise MismatchError(
                f"has {s} steps but {known[0][1]} has {known[0][0]} steps",
                source=path,
                variable="time",
                expected="one time step in every file of one product",
                fix="open the files of each step separately (for example 'pr_day_*.nc' and "
                "'pr_mon_*.nc') as two products",
            )
    for (a, ia), (b, ib) in zip(parts, parts[1:]):
        ta, tb = a["time"].values, b["time"].values
        if tb[0] > ta[-1]:
            continue
        shared = np.intersect1d(ta, tb).size
        what = (
            "the same times appear in two files" if shared else "the times of one file fall inside the times of another"
        )
        raise MismatchError(
            f"{what}: {ib['path']} and {ia['path']} ({shared} time stamp(s) in both)",
            source=ib["path"],
            variable="time",
            expected="files that follow one another in time without overlap",
            fix="remove the duplicate or overlapping file from the list or pattern",
        )


_FILL_NOTE = "values >= 1e15 and -9999/-999/-99999 treated as missing (no _FillValue in the file)"


def _fill_per_file(parts: Sequence[Part]) -> tuple[Sequence[Part], bool, str | None]:
    """``(parts, mask_fill, note)``: the fill heuristics decided file by file.

    A file without _FillValue/missing_value gets the heuristics (1e20, -9999 ... as
    missing) and a file that declares its fill keeps its own: in a glob mixing both, the
    files that need the heuristics are masked before they are combined, so a later file's
    1e20 never becomes 1e20 mm because the first file declared -9999.
    """
    needs = [needs_fill_heuristics(info["encoding"], info["attrs"]) for _, info in parts]
    if all(needs) or not any(needs):
        return parts, needs[0], (_FILL_NOTE if needs[0] else None)
    import dask.array as dsa

    out: list[Part] = []
    for (da, info), need in zip(parts, needs):
        if need:
            data = da.data if is_dask_collection(da.data) else dsa.from_array(np.asarray(da.data))  # type: ignore[no-untyped-call]
            dtype = da.dtype.newbyteorder("=") if da.dtype.kind == "f" else np.dtype(np.float64)
            da = da.copy(data=dsa.map_blocks(mask_likely_fill, data, dtype=dtype))  # type: ignore[no-untyped-call]
        out.append((da, info))
    which = ", ".join(info["path"] for (_, info), need in zip(parts, needs) if need)
    return out, False, f"values >= 1e15 and -9999/-999/-99999 treated as missing in {which} (no _FillValue there)"


def _check_labels_per_file(parts: Sequence[Part]) -> None:
    """Every file's stamps taken the same way: start of step, or end of step by its bounds.

    Bounds are combined only when every file has them; a file stamped at the end of each
    step beside one without bounds (or one stamped at the start) would be shifted by one
    step in the combined axis, so the pair is named instead.
    """
    kinds = []
    for da, info in parts:
        tb = info.get("time_bounds")
        if tb is None:
            kinds.append(("has no time bounds", info["path"]))
        elif timeaxis.start_labels(da["time"], tb)[1]:
            kinds.append(("stamps each step at its end (by its time bounds)", info["path"]))
        else:
            kinds.append(("stamps each step at its start (by its time bounds)", info["path"]))
    ends = [k for k in kinds if " end " in k[0]]
    others = [k for k in kinds if " end " not in k[0]]
    if ends and others:
        raise MismatchError(
            f"{ends[0][0]} but {others[0][1]} {others[0][0]}",
            source=ends[0][1],
            variable="time",
            expected="the same time stamping (and time bounds) in every file of one product",
            fix="open the files separately, or give every file the same CF time bounds",
        )


def combine_parts(
    parts: Sequence[Part], source_list: Sequence[str]
) -> tuple[xr.DataArray, xr.DataArray | None, bool, str | None]:
    """The opened parts of a glob or list as one DataArray along time, checked file by file.

    Parameters
    ----------
    parts : sequence of (xarray.DataArray, dict)
        ``(DataArray, info)`` pairs from the loader's layout step (info holds path, name,
        attrs, encoding, calendar, grid and time_bounds).
    source_list : sequence of str
        The sources, to name in messages.

    Returns
    -------
    tuple
        ``(data, time bounds or None, mask_fill, fill note)``.

    Raises
    ------
    MismatchError
        Naming the two files that disagree (units, calendar, grid, time step, stamping,
        overlap).

    Examples
    --------
    >>> import numpy as np, pandas as pd, xarray as xr
    >>> def part(start, path):
    ...     t = pd.date_range(start, periods=2)
    ...     da = xr.DataArray(np.ones((2, 1, 1)), dims=("time", "lat", "lon"), coords={"time": t})
    ...     info = {"path": path, "name": "pr", "attrs": {"units": "mm"}, "encoding": {"_FillValue": -1.0},
    ...             "calendar": "standard", "grid": (np.array([10.0]), np.array([0.0])), "time_bounds": None}
    ...     return da, info
    >>> data, bounds, mask_fill, note = combine_parts([part("2001-01-03", "b.nc"), part("2001-01-01", "a.nc")],
    ...                                              ["a.nc", "b.nc"])
    >>> data.sizes["time"], bounds is None, mask_fill
    (4, True, False)
    """
    first_da, first = parts[0]
    u0 = parse_units(first["attrs"].get("units"), source=first["path"], variable=first["name"])
    for _, info in parts[1:]:
        u = parse_units(info["attrs"].get("units"), source=info["path"], variable=info["name"])
        if (u.kind, u.to_mm, u.per_month) != (u0.kind, u0.to_mm, u0.per_month):
            raise MismatchError(
                f"has units '{u.text}' but {first['path']} has '{u0.text}'",
                source=info["path"],
                variable=info["name"],
                expected="the same units in every file of one product",
                fix="open the files separately, or convert them to common units first",
            )
        if info.get("calendar") != first.get("calendar"):
            raise MismatchError(
                f"uses the calendar '{info.get('calendar')}' but {first['path']} uses '{first.get('calendar')}'",
                source=info["path"],
                variable="time",
                expected="one calendar across the files",
                fix="open the files as separate products",
            )
        if not _same_grid(info["grid"], first["grid"]):
            raise MismatchError(
                f"is on a different grid from {first['path']}",
                source=info["path"],
                variable=info["name"],
                expected="the same lat/lon grid in every file",
                fix="open the files as separate products and use cw.regrid to bring them together",
            )
    if len(parts) == 1:
        mask_fill = needs_fill_heuristics(first["encoding"], first["attrs"])
        return first_da, first["time_bounds"], mask_fill, (_FILL_NOTE if mask_fill else None)
    parts = sorted(parts, key=lambda p: p[0]["time"].values[0])
    _check_labels_per_file(parts)  # first: a one-step shift would also look like an overlap
    _check_parts_in_sequence(parts)
    parts, mask_fill, fill_note = _fill_per_file(parts)
    da = xr.concat(
        [p[0] for p in parts],
        dim="time",
        coords="minimal",
        compat="override",
        join="override",
        combine_attrs="override",
    )
    timeaxis.check_monotonic(
        da["time"].values, source=", ".join(source_list[:3]) + (" …" if len(source_list) > 3 else "")
    )
    bounds = [p[1]["time_bounds"] for p in parts]
    tb = xr.concat(bounds, dim=bounds[0].dims[0]) if all(b is not None for b in bounds) else None
    return da, tb, mask_fill, fill_note
