"""Atomic writes: a temporary file in the target folder, then moved into place.

A reader never sees a half-written output, a failed write leaves no stray file, and an
existing output is only replaced when the caller asked for it.  Every writer in the
package (exports, basin files, widget buttons, the cache) goes through here.

Without ``overwrite`` the finished temporary file is *linked* to the target name, which
the operating system refuses when the name exists, so of several writers racing for one
path exactly one wins and every other gets :class:`OutputExistsError` — a check for
existence followed by a rename could let two "win".  With ``overwrite`` it is renamed over
the target (``os.replace``).  Temporary files left by a run that was killed are removed by
the next write to the same target once nobody has touched them for ``STALE_AFTER_S``.
"""

from __future__ import annotations

import errno
import os
import tempfile
import time
from collections.abc import Callable
from pathlib import Path
from typing import IO, Any

from .errors import InputError, ParameterError

__all__ = ["STALE_AFTER_S", "OutputExistsError", "atomic_write", "atomic_write_file", "check_target"]

# A temporary file nobody has written to for this long belongs to a killed run: a live
# writer touches its file as it goes.
STALE_AFTER_S = 3600.0


class OutputExistsError(InputError, FileExistsError):
    """The output file exists and ``overwrite`` was not set.

    Both an :class:`~climwidgets.errors.InputError` (like every user-fixable problem) and a
    :class:`FileExistsError`, so ``except FileExistsError`` works as expected.

    Parameters
    ----------
    problem : str
        What is wrong, in plain words.
    **context
        ``source``, ``expected``, ``fix`` and the other fields of
        :class:`~climwidgets.errors.InputError`.

    Examples
    --------
    >>> from climwidgets.atomic import OutputExistsError
    >>> issubclass(OutputExistsError, FileExistsError)
    True
    """


def check_target(path: str | os.PathLike[str], overwrite: bool, what: str) -> Path:
    """Validate the output path before any work is done; return it as a Path.

    Parameters
    ----------
    path : str or path-like
        The output file.
    overwrite : bool
        Whether an existing file may be replaced.
    what : str
        What is being written, for the error messages (e.g. ``"basin table"``).

    Returns
    -------
    pathlib.Path
        ``path`` as a Path.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``path`` is not a path, is a folder or its folder does not exist, or
        ``overwrite`` is not a bool.
    OutputExistsError
        When the file exists and ``overwrite`` is False.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from climwidgets.atomic import OutputExistsError, check_target
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     target = Path(folder) / "table.csv"
    ...     print(check_target(str(target), False, "table") == target)
    ...     _ = target.write_text("old")
    ...     try:
    ...         check_target(target, False, "table")
    ...     except OutputExistsError:
    ...         print("refused")
    True
    refused
    """
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


def _remove_stale_temporaries(path: Path) -> None:
    """Delete temporaries of earlier, killed writes to ``path`` (never a live writer's)."""
    cutoff = time.time() - STALE_AFTER_S
    for old in path.parent.glob(f".{path.name}.*.part"):
        try:
            if old.stat().st_mtime < cutoff:
                old.unlink()
        except OSError:  # gone already, or not ours to remove: leave it
            pass


def _move_into_place(tmp: str, path: Path, overwrite: bool) -> None:
    if overwrite:
        os.replace(tmp, path)
        return
    try:
        os.link(tmp, path)  # refuses an existing name: exclusive even between processes
    except FileExistsError:
        raise OutputExistsError("appeared while writing and was left untouched", source=path,
                                expected="a new file name",
                                fix="pass overwrite=True or choose another path") from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EMLINK):
            raise
        # a file system without hard links: reserve the name exclusively, then replace
        try:
            os.close(os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
        except FileExistsError:
            raise OutputExistsError("appeared while writing and was left untouched", source=path,
                                    expected="a new file name",
                                    fix="pass overwrite=True or choose another path") from None
        os.replace(tmp, path)
        return
    os.unlink(tmp)


def atomic_write(path: str | os.PathLike[str], overwrite: bool, write: Callable[[Path], Any], what: str) -> Path:
    """Call ``write(tmp_path)`` on a temporary file beside ``path``, then move it into place.

    ``write`` must create the file at the given path.  On any exception the temporary
    file is removed and the previous file at ``path`` (if any) is untouched.  Without
    ``overwrite`` the move is exclusive: if another writer created ``path`` meanwhile,
    :class:`OutputExistsError` is raised and that writer's file is kept.

    Parameters
    ----------
    path : str or path-like
        The output file.
    overwrite : bool
        Whether an existing file may be replaced.
    write : callable
        ``write(tmp_path)`` writes the whole output to the :class:`~pathlib.Path` given.
    what : str
        What is being written, for the error messages.

    Returns
    -------
    pathlib.Path
        The output path.

    Raises
    ------
    climwidgets.errors.ParameterError
        For a bad ``path`` or ``overwrite`` (see :func:`check_target`).
    OutputExistsError
        When the file exists (or appears while writing) and ``overwrite`` is False.
    OSError
        When the disk refuses the write; the message says that nothing was left behind.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from climwidgets.atomic import atomic_write
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     out = atomic_write(Path(folder) / "note.txt", False, lambda tmp: tmp.write_text("done"), "note")
    ...     print(out.read_text(), sorted(p.name for p in Path(folder).iterdir()))
    done ['note.txt']
    """
    path = check_target(path, overwrite, what)
    _remove_stale_temporaries(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    try:
        write(Path(tmp))
        os.chmod(tmp, _file_mode(path))
        _move_into_place(tmp, path, overwrite)
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


def atomic_write_file(path: str | os.PathLike[str], write: Callable[[IO[Any]], Any], mode: str = "wb",
                      overwrite: bool = True, what: str = "file") -> Path:
    """Like :func:`atomic_write`, with ``write(fileobj)`` given an open file (``mode``).

    Parameters
    ----------
    path : str or path-like
        The output file.
    write : callable
        ``write(fileobj)`` writes the whole output to the open file.
    mode : str, default "wb"
        The mode the temporary file is opened in (``"w"`` for text).
    overwrite : bool, default True
        Whether an existing file may be replaced.
    what : str, default "file"
        What is being written, for the error messages.

    Returns
    -------
    pathlib.Path
        The output path.

    Raises
    ------
    climwidgets.errors.ParameterError, OutputExistsError, OSError
        As :func:`atomic_write`.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from climwidgets.atomic import atomic_write_file
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     out = atomic_write_file(Path(folder) / "a.csv", lambda fh: fh.write("x,y"), mode="w")
    ...     print(out.read_text())
    x,y
    """
    def to_path(tmp: Path) -> None:
        with open(tmp, mode) as fh:
            write(fh)

    return atomic_write(path, overwrite, to_path, what)


def atomic_write_folder(path: str | os.PathLike[str], write: Callable[[Path], Any], what: str = "folder") -> Path:
    """Call ``write(tmp_folder)`` on a temporary folder beside ``path``, then rename it into place.

    For stores that are folders (Zarr).  When ``path`` appeared meanwhile (another process
    wrote the same store), the temporary folder is dropped and the existing one kept.

    Parameters
    ----------
    path : str or path-like
        The output folder.
    write : callable
        ``write(tmp_folder)`` fills the :class:`~pathlib.Path` of an empty folder.
    what : str, default "folder"
        What is being written.

    Returns
    -------
    pathlib.Path
        The output folder.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from climwidgets.atomic import atomic_write_folder
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     store = atomic_write_folder(Path(folder) / "s.zarr", lambda tmp: (tmp / "part").write_text("1"))
    ...     print(sorted(p.name for p in store.iterdir()))
    ['part']
    """
    import shutil

    path = Path(path)
    tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent))
    try:
        write(tmp)
        if path.exists():
            shutil.rmtree(tmp, ignore_errors=True)
        else:
            os.replace(tmp, path)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return path
