"""The one CSV writer of the package: a plain table plus a metadata file beside it.

Every CSV the suite writes (command line, widgets, notebooks) goes through :func:`to_csv`
or, for the bytes of a browser download, :func:`csv_files`.  Two files are written:

``name.csv``
    The table only: one header row with the column names (the suite's tables carry
    their units in the column names), the index as the first column(s) when it is named
    or not the default 0, 1, 2 …  A plain ``pandas.read_csv(path)`` reads it.
``name.csv-metadata.json``
    Everything that travels with the table: tool and version, date written, title, the
    inputs (file name, size, SHA-256), every parameter, notes and cautions, and the units
    of each described column with the unit system (SI, or US customary when the user
    chose it: the CSV then holds inches, acre-feet and square miles).  The name
    follows the W3C "CSV on the Web" convention for locating a table's metadata
    (append ``-metadata.json`` to the CSV's name); :func:`read_metadata` reads it.

Every text cell, index value (every level of a MultiIndex) and column title that a
spreadsheet would run as a formula — starting with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return — is written with a leading apostrophe, which spreadsheets show as text
(OWASP, "CSV Injection").

References
----------
IETF RFC 4180 (2005). Common Format and MIME Type for Comma-Separated Values (CSV) Files.
W3C (2015). Model for Tabular Data and Metadata on the Web, §5 "Locating Metadata".
https://www.w3.org/TR/tabular-data-model/
OWASP Foundation. CSV Injection. https://owasp.org/www-community/attacks/CSV_Injection
"""

from __future__ import annotations

import dataclasses
import io
import json
from datetime import datetime, timezone
from pathlib import Path

import pandas as pd

from .._version import __version__
from ..errors import ParameterError
from ..atomic import atomic_write, check_target, staged_outputs
from ._provenance import cautions_for_columns, describe_inputs, format_value

__all__ = [
    "to_csv",
    "csv_files",
    "read_csv",
    "read_metadata",
    "metadata_path",
    "metadata",
    "guard_formulas",
    "column_units",
]

# Cells a spreadsheet would run as a formula (OWASP "CSV injection"): text starting so
# gets a leading apostrophe, which spreadsheets show as text.
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
METADATA_SUFFIX = "-metadata.json"


def _one_line(text) -> str:
    return " ".join(str(text).split())


def metadata_path(path) -> Path:
    """The metadata file that belongs to the CSV at ``path`` (``name.csv-metadata.json``)."""
    path = Path(path)
    return path.with_name(path.name + METADATA_SUFFIX)


def _jsonable(value):
    if isinstance(value, dict):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, (str, int, float, bool)) or value is None:
        return value
    if hasattr(value, "item"):  # numpy scalars
        return _jsonable(value.item())
    return str(value)


def metadata(table: pd.DataFrame, provenance=None, what: str = "table", file_name: str | None = None) -> dict:
    """The metadata that travels with ``table`` (what :func:`to_csv` writes beside it).

    Keys: ``url`` (the CSV's file name), ``title``, ``tool``, ``written`` (UTC),
    ``inputs`` (one dict per input file: name, size, SHA-256, modified), ``inputs_in_words``,
    ``parameters`` (from ``table.attrs`` and ``provenance["parameters"]``),
    ``parameters_in_words``, ``notes``, ``cautions``, ``columns``, ``index``, and, for
    columns an analysis described (``table.attrs["columns"]``, see
    :func:`climwidgets.analyses.meta.frame`), ``units`` (column → units of the numbers as
    written, e.g. "mm" or "in") and ``unit_system`` ("SI" or "US customary").
    """
    prov = dict(provenance or {}) if not isinstance(provenance, str) else {"notes": [provenance]}
    unknown = set(prov) - {"inputs", "parameters", "notes", "cautions", "title"}
    if unknown:
        raise ParameterError(
            f"provenance has unknown keys {sorted(unknown)}",
            source="to_csv",
            variable="provenance",
            expected="a dict with keys inputs, parameters, notes, cautions, title",
            fix="e.g. provenance={'inputs': ['grid.nc'], 'parameters': {'months': (7, 8)}}",
        )
    records = describe_inputs(prov.get("inputs"))
    params = dict(table.attrs or {})
    params.pop("note", None)
    described = params.pop("columns", None)  # the columns' attributes: their units are listed below
    units, system = column_units(table, described)
    params.update(prov.get("parameters") or {})
    notes = [_one_line(n) for n in (prov.get("notes") or []) if str(n).strip()]
    if "note" in (table.attrs or {}):
        notes.insert(0, _one_line(table.attrs["note"]))
    cautions = prov.get("cautions")
    if cautions is None:
        cautions = cautions_for_columns([str(c) for c in table.columns] + [str(n or "") for n in table.index.names])
    return {
        "@context": "http://www.w3.org/ns/csvw",
        "url": file_name,
        "title": _one_line(prov.get("title", what)),
        "tool": f"climwidgets {__version__}",
        "written": datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "inputs": [_jsonable(dataclasses.asdict(r)) for r in records],
        "inputs_in_words": [_one_line(r.summary()) for r in records],
        "parameters": _jsonable(params),
        "parameters_in_words": {str(k): _one_line(format_value(v)) for k, v in params.items()},
        "notes": notes,
        "cautions": [_one_line(c) for c in cautions],
        "index": [None if n is None else str(n) for n in table.index.names] if _keep_index(table) else [],
        "columns": [str(c) for c in table.columns],
        "units": units,
        "unit_system": system,
    }


def column_units(table: pd.DataFrame, described=None) -> tuple[dict, str]:
    """(column → units of its numbers, unit system in words) of a table made by the analyses.

    The units are those of the numbers as they stand in the table (``values_in`` of the
    column's attributes; for a stored column the catalogue's units), so a CSV in US
    customary units says "in" and "acre-ft" where the SI one says "mm" and "m3".
    """
    from ..analyses.meta import CATALOGUE, UNIT_SYSTEMS

    described = described if isinstance(described, dict) else (table.attrs.get("columns") or {})
    units, systems = {}, set()
    for col in table.columns:
        attrs = described.get(col) if isinstance(described.get(col), dict) else None
        if attrs is None and col in CATALOGUE:
            attrs = CATALOGUE[col].attrs()
        if attrs is None:
            continue
        value = attrs.get("values_in", attrs.get("units", ""))
        units[str(col)] = "" if value is None else str(value)  # CF units: "1" is a fraction or count
        if attrs.get("unit_system"):
            systems.add(attrs["unit_system"])
    system = "US" if "US" in systems else "SI"
    return units, UNIT_SYSTEMS[system]


def _guard(v):
    return "'" + v if isinstance(v, str) and v.startswith(_FORMULA_START) else v


def _guard_index(index: pd.Index) -> pd.Index:
    if isinstance(index, pd.MultiIndex):
        levels = [
            lvl.map(_guard) if (lvl.dtype == object or pd.api.types.is_string_dtype(lvl)) else lvl
            for lvl in index.levels
        ]
        names = [_guard(n) for n in index.names]
        return index.set_levels(levels, verify_integrity=False).set_names(names)
    out = index.map(_guard) if (index.dtype == object or pd.api.types.is_string_dtype(index)) else index
    return out.rename(_guard(index.name))


def guard_formulas(table: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``table`` with every formula-like text cell, index value (every level),
    index name and column title prefixed by an apostrophe (OWASP CSV injection)."""
    out = table.copy()
    for i in range(out.shape[1]):
        col = out.iloc[:, i]
        if col.dtype == object or pd.api.types.is_string_dtype(col):
            out.isetitem(i, col.map(_guard))
    out.index = _guard_index(out.index)
    out.columns = _guard_index(out.columns)
    return out


def _keep_index(table: pd.DataFrame) -> bool:
    return any(n is not None for n in table.index.names) or not isinstance(table.index, pd.RangeIndex)


def _check_table(table):
    if not isinstance(table, pd.DataFrame):
        hint = (
            "use cw.to_netcdf for xarray objects"
            if hasattr(table, "dims")
            else "build a DataFrame first (pandas.DataFrame(...) or series.to_frame())"
        )
        raise ParameterError(
            f"cannot write a {type(table).__name__} as a table",
            source="to_csv",
            variable="table",
            expected="a pandas DataFrame",
            fix=hint,
        )
    if isinstance(table.columns, pd.MultiIndex):
        raise ParameterError(
            "a table with several header rows cannot be read back by a plain pandas.read_csv",
            source="to_csv",
            variable="table.columns",
            expected="one row of column names",
            fix="join the levels, e.g. table.columns = [' '.join(map(str, c)) for c in table.columns]",
        )


def csv_files(table, name: str, provenance=None, float_format: str | None = None) -> dict[str, bytes]:
    """The two files of a CSV export as bytes: ``{name: csv, name + '-metadata.json': json}``.

    The same bytes :func:`to_csv` writes; widgets hand them to the browser.
    """
    _check_table(table)
    buf = io.StringIO()
    # CRLF rows (RFC 4180): the writer then quotes every cell holding a CR or LF, so text
    # with a carriage return cannot split a row
    guard_formulas(table).to_csv(buf, index=_keep_index(table), lineterminator="\r\n", float_format=float_format)
    meta = metadata(table, provenance, what="table", file_name=Path(name).name)
    return {
        Path(name).name: buf.getvalue().encode("utf-8"),
        metadata_path(name).name: (json.dumps(meta, indent=1, ensure_ascii=False) + "\n").encode("utf-8"),
    }


def to_csv(table, path, overwrite: bool = False, provenance=None, float_format: str | None = None) -> Path:
    """Write a table to CSV and its metadata beside it, atomically.

    Parameters
    ----------
    table
        A pandas DataFrame (e.g. :func:`cw.basin_summary`).  A named or non-default
        index (such as ``basin``) is written as the first column(s).
    path
        Output file; refuses to replace an existing file (or its metadata file) unless
        ``overwrite=True``.
    provenance
        Optional dict: ``inputs`` (paths, checksummed when under 200 MB), ``parameters``
        (dict, added to ``table.attrs``), ``notes`` (list of text), ``cautions`` (list of
        text; by default the design-depth and volume cautions when the table holds such
        columns), ``title``.  A plain string is taken as a note.
    float_format
        Optional format for floats (as for :meth:`pandas.DataFrame.to_csv`).

    Returns
    -------
    pathlib.Path of the written CSV; the metadata is at :func:`metadata_path` of it.

    References
    ----------
    W3C (2015). Model for Tabular Data and Metadata on the Web, §5.
    OWASP Foundation. CSV Injection.
    """
    _check_table(table)
    target = check_target(path, overwrite, "to_csv")
    meta_target = check_target(metadata_path(target), overwrite, "to_csv")
    files = csv_files(table, target.name, provenance, float_format=float_format)
    # the CSV and its metadata are one output: both are replaced, or neither (a full disk
    # half-way leaves the previous pair; of racing writers one writes both)
    with staged_outputs(target.parent, overwrite, "to_csv") as stage:
        for name in (meta_target.name, target.name):
            atomic_write(stage / name, False, _bytes_writer(files[name]), "to_csv")
    return target


def _bytes_writer(data: bytes):
    def write(tmp: Path) -> None:
        tmp.write_bytes(data)

    return write


def read_csv(path, **kwargs) -> pd.DataFrame:
    """Read a CSV written by :func:`to_csv` (the same as ``pandas.read_csv(path)``)."""
    return pd.read_csv(path, **kwargs)


def read_metadata(path) -> dict:
    """The metadata written beside the CSV at ``path`` (see :func:`metadata`)."""
    with open(metadata_path(path), encoding="utf-8") as f:
        return json.load(f)
