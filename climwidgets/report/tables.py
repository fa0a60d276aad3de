"""CSV export of result tables with a commented provenance header.

The file starts with lines beginning with ``# `` (tool and version, date written, inputs,
parameters, notes, cautions), then the table with its column names as given (the suite's
tables carry their units in the column names: ``area_km2``, ``annual_mean_mm`` …).
Read it back with ``pandas.read_csv(path, skiprows=n)`` where ``n`` is the number of
leading ``#`` lines, or with :func:`read_csv` here.
"""

from __future__ import annotations

import io
from datetime import datetime, timezone
from pathlib import Path

import pandas as pd

from .._version import __version__
from ..errors import ParameterError
from ..atomic import atomic_write, check_target
from ._provenance import cautions_for_columns, describe_inputs, format_value

__all__ = ["to_csv", "read_csv", "header_lines"]

# Cells a spreadsheet would run as a formula (OWASP "CSV injection"): text starting so
# gets a leading apostrophe, which spreadsheets show as text.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _one_line(text) -> str:
    return " ".join(str(text).split())


def header_lines(table: pd.DataFrame, provenance=None, what: str = "table") -> list[str]:
    """The ``# `` lines that precede the table (without the newline)."""
    prov = dict(provenance or {}) if not isinstance(provenance, str) else {"notes": [provenance]}
    unknown = set(prov) - {"inputs", "parameters", "notes", "cautions", "title"}
    if unknown:
        raise ParameterError(f"provenance has unknown keys {sorted(unknown)}", source="to_csv",
                             variable="provenance",
                             expected="a dict with keys inputs, parameters, notes, cautions, title",
                             fix="e.g. provenance={'inputs': ['grid.nc'], 'parameters': {'months': (7, 8)}}")
    stamp = datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    lines = [f"climwidgets {__version__}: {_one_line(prov.get('title', what))}", f"written: {stamp}"]
    for rec in describe_inputs(prov.get("inputs")):
        lines.append(f"input: {_one_line(rec.summary())}")
    params = dict(table.attrs or {})
    params.pop("note", None)
    params.update(prov.get("parameters") or {})
    for key, value in params.items():
        if isinstance(value, (str, int, float, list, tuple, dict)) or value is None:
            lines.append(f"parameter: {_one_line(key)} = {_one_line(format_value(value))}")
    notes = list(prov.get("notes") or [])
    if "note" in (table.attrs or {}):
        notes.insert(0, table.attrs["note"])
    lines += [f"note: {_one_line(n)}" for n in notes]
    cautions = prov.get("cautions")
    cautions = cautions_for_columns(list(table.columns) + [table.index.name or ""]) if cautions is None else cautions
    lines += [f"caution: {_one_line(c)}" for c in cautions]
    return ["# " + line for line in lines]


def _guard_formulas(table: pd.DataFrame) -> pd.DataFrame:
    def guard(v):
        return "'" + v if isinstance(v, str) and v.startswith(_FORMULA_START) else v

    out = table.copy()
    for col in out.columns:
        if out[col].dtype == object or pd.api.types.is_string_dtype(out[col]):
            out[col] = out[col].map(guard)
    if out.index.dtype == object or pd.api.types.is_string_dtype(out.index):
        out.index = out.index.map(guard)
    return out


def to_csv(table, path, overwrite: bool = False, provenance=None) -> Path:
    """Write a table to CSV with a commented provenance header, atomically.

    Parameters
    ----------
    table
        A pandas DataFrame (e.g. :func:`cw.basin_summary`).  A named or non-default
        index (such as ``basin``) is written as the first column.
    path
        Output file; refuses to replace an existing file unless ``overwrite=True``.
    provenance
        Optional dict: ``inputs`` (paths, checksummed when under 200 MB), ``parameters``
        (dict, added to ``table.attrs``), ``notes`` (list of text), ``cautions`` (list of
        text; by default the design-depth and volume cautions when the table holds such
        columns), ``title``.  A plain string is taken as a note.

    Returns
    -------
    pathlib.Path of the written file.
    """
    if not isinstance(table, pd.DataFrame):
        hint = "use cw.to_netcdf for xarray objects" if hasattr(table, "dims") else \
            "build a DataFrame first (pandas.DataFrame(...) or series.to_frame())"
        raise ParameterError(f"cannot write a {type(table).__name__} as a table", source="to_csv",
                             variable="table", expected="a pandas DataFrame", fix=hint)
    target = check_target(path, overwrite, "to_csv")
    header = header_lines(table, provenance, what="table")
    keep_index = table.index.name is not None or not isinstance(table.index, pd.RangeIndex)
    buf = io.StringIO()
    _guard_formulas(table).to_csv(buf, index=keep_index, lineterminator="\n")
    text = "\n".join(header) + "\n" + buf.getvalue()

    def write(tmp: Path):
        tmp.write_text(text, encoding="utf-8")

    return atomic_write(target, overwrite, write, "to_csv")


def read_csv(path, **kwargs) -> pd.DataFrame:
    """Read a CSV written by :func:`to_csv` (skips the ``#`` header; keeps ``#`` in cells)."""
    n = 0
    with open(path, encoding="utf-8") as f:
        for line in f:
            if not line.startswith("#"):
                break
            n += 1
    return pd.read_csv(path, skiprows=n, **kwargs)
