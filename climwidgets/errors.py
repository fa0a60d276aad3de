"""Errors raised for bad input.

Every problem a user can fix (a file, a variable, a parameter) raises a subclass of
:class:`InputError`, itself a :class:`ValueError`.  The message always says *where*
(file, variable), *what* was expected, and *how to fix it*, so that nobody has to read a
traceback from inside a dependency.
"""

from __future__ import annotations

from collections.abc import Hashable
from typing import Any

__all__ = [
    "InputError",
    "SourceError",
    "VariableError",
    "UnitsError",
    "CalendarError",
    "TimeAxisError",
    "GridError",
    "DataValueError",
    "MismatchError",
    "ParameterError",
    "BasinError",
    "InsufficientDataError",
]


class InputError(ValueError):
    """Base of every input error raised by climwidgets.

    The subclasses below take the same parameters; they differ only in what kind of
    problem they name, so that callers can catch one kind.

    Parameters
    ----------
    problem : str
        What is wrong, in one sentence.
    source : object, optional
        The file, URL or object the problem was found in (kept as ``str(source)``).
    variable : hashable, optional
        The variable concerned, if any.
    expected : str, optional
        What would have been acceptable.
    fix : str, optional
        How the user can fix it.

    Examples
    --------
    >>> from climwidgets.errors import InputError, UnitsError
    >>> err = UnitsError("no units attribute", source="rain.nc", variable="pr",
    ...                  expected="a depth unit such as mm", fix="set the units attribute")
    >>> print(err)
    rain.nc, variable 'pr': no units attribute. Expected: a depth unit such as mm. Fix: set the units attribute.
    >>> isinstance(err, InputError), isinstance(err, ValueError)
    (True, True)
    """

    def __init__(
        self,
        problem: str,
        *,
        source: Any = None,
        variable: Hashable | None = None,
        expected: str | None = None,
        fix: str | None = None,
    ) -> None:
        self.problem = problem
        self.source = None if source is None else str(source)
        self.variable = variable
        self.expected = expected
        self.fix = fix
        super().__init__(self._compose())

    def _compose(self) -> str:
        where = []
        if self.source:
            where.append(f"{self.source}")
        if self.variable:
            where.append(f"variable '{self.variable}'")
        text = (": ".join([", ".join(where), self.problem]) if where else self.problem).rstrip(".") + "."
        if self.expected:
            text += f" Expected: {str(self.expected).rstrip('.')}."
        if self.fix:
            text += f" Fix: {str(self.fix).rstrip('.')}."
        return text

    def __reduce__(self) -> tuple[Any, ...]:  # keep errors picklable across dask workers
        return (_rebuild, (type(self), self.problem, self.source, self.variable, self.expected, self.fix))


def _rebuild(
    cls: type[InputError],
    problem: str,
    source: str | None,
    variable: Hashable | None,
    expected: str | None,
    fix: str | None,
) -> InputError:
    return cls(problem, source=source, variable=variable, expected=expected, fix=fix)


class SourceError(InputError):
    """A file, glob, URL or store that cannot be found or read (empty glob, truncated file)."""


class VariableError(InputError):
    """No precipitation-like variable, or an ambiguous choice among several."""


class UnitsError(InputError):
    """Units missing, unknown, or not convertible to the expected kind."""


class CalendarError(InputError):
    """A calendar the suite does not support or that differs between files."""


class TimeAxisError(InputError):
    """Missing, duplicated, unsorted or irregular time coordinates."""


class GridError(InputError):
    """Missing or malformed lat/lon coordinates, or grids that do not match."""


class DataValueError(InputError):
    """Values that cannot be precipitation: negative depths, all missing."""


class MismatchError(InputError):
    """Several inputs that should agree (units, grids, periods) do not."""


class ParameterError(InputError):
    """A function parameter outside its allowed values (months, baseline, durations…)."""


class BasinError(InputError):
    """A basin polygon that is invalid, empty, or does not touch the grid."""


class InsufficientDataError(InputError):
    """Too few years or values for the requested statistic."""
