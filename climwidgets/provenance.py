"""Provenance: every result says how it was made (inputs, parameters, package version)."""

from __future__ import annotations

from datetime import datetime, timezone
from typing import Any, Protocol, TypeVar

from ._version import __version__


class _HasAttrs(Protocol):
    @property
    def attrs(self) -> dict[Any, Any]: ...


_T = TypeVar("_T", bound=_HasAttrs)


def _fmt(value: Any) -> str:
    if isinstance(value, float):
        return f"{value:g}"
    if isinstance(value, (list, tuple)):
        return "(" + ", ".join(_fmt(v) for v in value) + ")"
    return repr(value) if isinstance(value, str) else str(value)


def history_line(func: str, **params: Any) -> str:
    """One line of history: time stamp, package version, the call and its parameters."""
    stamp = datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    args = ", ".join(f"{k}={_fmt(v)}" for k, v in params.items())
    return f"{stamp} climwidgets {__version__}: {func}({args})"


def with_history(obj: _T, func: str, source_attrs: dict[str, Any] | None = None, **params: Any) -> _T:
    """Return ``obj`` with a history line appended to ``attrs["history"]``.

    ``source_attrs`` are the attrs of the input; their history is carried forward so that
    the chain of operations stays readable.  ``obj`` is modified in place and returned
    (callers pass freshly built results, never user inputs).
    """
    previous = (source_attrs or {}).get("history", "")
    line = history_line(func, **params)
    obj.attrs["history"] = f"{previous}\n{line}" if previous else line
    return obj
