"""Atomic writes: a temporary file in the target folder, then ``os.replace``.

A reader never sees a half-written output, a failed write leaves no stray file, and an
existing output is only replaced when the caller asked for it (DESIGN.md §8).  Every
writer in the package (exports, basin files, widget buttons, the cache) goes through here.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import InputError, ParameterError

__all__ = ["OutputExistsError", "atomic_write", "atomic_write_file", "check_target"]


class OutputExistsError(InputError, FileExistsError):
    """The output file exists and ``overwrite`` was not set.

    Both an :class:`~climwidgets.errors.InputError` (like every user-fixable problem) and a
    :class:`FileExistsError`, so ``except FileExistsError`` works as expected.
    """


def check_target(path, overwrite: bool, what: str) -> Path:
    """Validate the output path before any work is done; return it as a Path."""
    if not isinstance(path, (str, os.PathLike)) or str(path) == "":
        raise ParameterError(f"path={path!r} is not a file path", source=what, variable="path",
                             expected="a file path (str or pathlib.Path)", fix="pass e.g. 'out/result.nc'")
    if not isinstance(overwrite, bool):
        raise ParameterError(f"overwrite={overwrite!r} is not True or False", source=what, variable="overwrite",
                             expected="a bool", fix="pass overwrite=True to replace an existing file")
    path = Path(path)
    if path.is_dir():
        raise ParameterError("is a folder, not a file", source=path, variable="path",
                             expected="a file path", fix=f"name a file inside it, e.g. {path / 'output'}")
    if not path.parent.is_dir():
        raise ParameterError("the folder it should go in does not exist", source=path, variable="path",
                             expected="an existing folder", fix=f"create {path.parent} first")
    if path.exists() and not overwrite:
        raise OutputExistsError("already exists and was left untouched", source=path,
                                expected="a new file name, or permission to replace the file",
                                fix="pass overwrite=True to replace it, or choose another path")
    return path


def _file_mode(path: Path) -> int:
    """Keep the mode of the file being replaced; else what the umask gives a new file."""
    if path.exists():
        return path.stat().st_mode & 0o777
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def atomic_write(path, overwrite: bool, write, what: str) -> Path:
    """Call ``write(tmp_path)`` on a temporary file beside ``path``, then move it into place.

    ``write`` must create the file at the given path.  On any exception the temporary
    file is removed and the previous file at ``path`` (if any) is untouched.
    """
    path = check_target(path, overwrite, what)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    try:
        write(Path(tmp))
        os.chmod(tmp, _file_mode(path))
        # Check again: another process may have created the file while we wrote.
        if path.exists() and not overwrite:
            raise OutputExistsError("appeared while writing and was left untouched", source=path,
                                    expected="a new file name", fix="pass overwrite=True or choose another path")
        os.replace(tmp, path)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        if isinstance(exc, OSError) and not isinstance(exc, InputError) and exc.errno is not None:
            # same type and errno (disk full, permission refused), but say which output and
            # that nothing was lost
            raise type(exc)(exc.errno, f"{exc.strerror or exc}: {what} could not be written; the previous "
                                       "file (if any) is untouched and no partial file was left",
                            str(path)) from exc
        raise
    return path


def atomic_write_file(path, write, mode: str = "wb", overwrite: bool = True, what: str = "file") -> Path:
    """Like :func:`atomic_write`, with ``write(fileobj)`` given an open file (``mode``)."""
    def to_path(tmp: Path):
        with open(tmp, mode) as fh:
            write(fh)

    return atomic_write(path, overwrite, to_path, what)
