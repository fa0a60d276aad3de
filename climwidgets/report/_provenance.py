"""What a table or report says about where its numbers came from, and its cautions.

Shared by the CSV and HTML exports: descriptions of input files (size and SHA-256
checksum, or size and modification time for files too big to hash quickly), parameters as
plain text, and the cautions that go with design depths and water-supply volumes
(docs/architecture.md).
"""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path

__all__ = [
    "InputRecord",
    "describe_input",
    "describe_inputs",
    "cautions_for_columns",
    "VOLUME_CAUTIONS",
    "HASH_LIMIT_BYTES",
    "format_value",
]

#: Files up to this size get a SHA-256 checksum; larger ones are identified by size and mtime.
HASH_LIMIT_BYTES = 200 * 1024**2

#: Cautions for basin volumes and other water-supply figures from gridded precipitation.
VOLUME_CAUTIONS = (
    "Planning-level estimates only: volumes are precipitation falling on the basin, not runoff or yield.",
    "Gridded values smooth point extremes and local detail; basin means depend on the grid's "
    "resolution and on how the gridded product was made.",
    "Normals and shares assume the climate of the record is stationary; a trend in the record shifts them.",
    "Defer to the jurisdiction's adopted design-rainfall estimates, local codes and "
    "licensed engineering practice for design.",
)

_DESIGN_WORDS = ("return_level", "return level", "estimate", "design", "annual_max", "_year_24h", "year_depth", "rl_")
_VOLUME_WORDS = ("volume", "_m3", "acre_ft", "acre-ft")


@dataclass(frozen=True)
class InputRecord:
    """One input: a file (with size and checksum or mtime) or a described object."""

    name: str
    kind: str = "file"  # "file" or "object"
    size_bytes: int | None = None
    sha256: str | None = None
    modified: str | None = None  # ISO time, for files too big to hash
    detail: str = ""  # variable, dims, units, period …

    def summary(self) -> str:
        """One plain line, e.g. 'grid.nc, 1.2 MB, sha256 ab12…'."""
        parts = [self.name]
        if self.size_bytes is not None:
            parts.append(human_size(self.size_bytes))
        if self.sha256:
            parts.append(f"sha256 {self.sha256}")
        elif self.modified:
            parts.append(f"modified {self.modified} (too large to checksum)")
        if self.detail:
            parts.append(self.detail)
        return ", ".join(parts)


def human_size(n: int) -> str:
    size: float = n
    for unit in ("bytes", "kB", "MB", "GB", "TB"):
        if size < 1000 or unit == "TB":
            return f"{size} {unit}" if unit == "bytes" else f"{size:.1f} {unit}"
        size /= 1000.0
    return f"{size} bytes"


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def describe_input(item, detail: str = "", hash_limit: int = HASH_LIMIT_BYTES) -> InputRecord:
    """Describe a path (file or Zarr folder) or any other object named by ``str(item)``."""
    if isinstance(item, InputRecord):
        return item
    if isinstance(item, (str, os.PathLike)):
        path = Path(item)
        if path.is_file():
            st = path.stat()
            if st.st_size <= hash_limit:
                return InputRecord(str(path), "file", st.st_size, _sha256(path), detail=detail)
            mtime = datetime.fromtimestamp(st.st_mtime, timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
            return InputRecord(str(path), "file", st.st_size, modified=mtime, detail=detail)
        if path.is_dir():  # a Zarr store: total size and newest change, no checksum
            files = [p for p in path.rglob("*") if p.is_file()]
            size = sum(p.stat().st_size for p in files)
            newest = max((p.stat().st_mtime for p in files), default=path.stat().st_mtime)
            mtime = datetime.fromtimestamp(newest, timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
            return InputRecord(str(path), "folder", size, modified=mtime, detail=detail)
    return InputRecord(str(item), "object", detail=detail)


def describe_inputs(items) -> list[InputRecord]:
    if items is None:
        return []
    if isinstance(items, (str, os.PathLike, InputRecord)):
        items = [items]
    return [describe_input(i) for i in items]


def cautions_for_columns(columns) -> tuple[str, ...]:
    """The cautions a table needs: design-depth cautions and/or volume cautions, or none."""
    from ..compute.warming import DESIGN_DEPTH_CAUTIONS

    names = [str(c).lower() for c in columns]
    design = any(w in n for n in names for w in _DESIGN_WORDS)
    volume = any(w in n for n in names for w in _VOLUME_WORDS)
    if design and volume:  # the design list covers the rest; add what is volume-specific
        return tuple(DESIGN_DEPTH_CAUTIONS) + VOLUME_CAUTIONS[:1]
    if design:
        return tuple(DESIGN_DEPTH_CAUTIONS)
    return VOLUME_CAUTIONS if volume else ()


def format_value(value) -> str:
    """Plain text for a parameter value: tuples as '7, 8', floats without noise."""
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, (list, tuple)):
        return ", ".join(format_value(v) for v in value)
    if isinstance(value, dict):
        return "; ".join(f"{k} = {format_value(v)}" for k, v in value.items())
    return str(value)
