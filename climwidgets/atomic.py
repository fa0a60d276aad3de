"""Atomic writes: a temporary file in the target folder, then moved into place.

A reader never sees a half-written output, a failed write leaves no stray file, and an
existing output is only replaced when the caller asked for it.  Every writer in the
package (exports, basin files, widget buttons, the cache) goes through here.

Without ``overwrite`` the finished temporary file is *linked* to the target name, which
the operating system refuses when the name exists, so of several writers racing for one
path exactly one wins and every other gets :class:`OutputExistsError` — a check for
existence followed by a rename could let two "win".  With ``overwrite`` it is renamed over
the target (``os.replace``).

Temporary names carry the writer's host and process id (``.NAME.HOST-PID.RANDOM.part``).
Temporaries left by a run that was killed are removed by the next write to the same
target: at once when they were made on this host by a process that no longer exists,
otherwise once nobody has touched them for ``STALE_AFTER_S``.  Only names of that pattern
are ever removed.

A set of outputs that belong together (a job's CSV, metadata file, NetCDF and report) is
written with :func:`staged_outputs`: every file goes into one staging folder beside the
destination and all are moved into place together at the end, so a failure part-way
leaves the previous set as it was and no partial set.

A refused write (disk full, read-only file system, a folder where files cannot be made)
is raised as :class:`OutputError`, an :class:`~climwidgets.errors.InputError` and an
:class:`OSError` with the original ``errno``, naming the output and saying that nothing
was lost.
"""

from __future__ import annotations

import contextlib
import errno
import os
import shutil
import socket
import tempfile
import time
import zlib
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import IO, Any

from .errors import InputError, ParameterError

__all__ = [
    "STALE_AFTER_S",
    "OutputError",
    "OutputExistsError",
    "atomic_write",
    "atomic_write_file",
    "check_folder",
    "check_target",
    "remove_stale_temporaries",
    "staged_outputs",
]

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


class OutputError(InputError, OSError):
    """An output could not be written: disk full, read-only file system, no place for files.

    Both an :class:`~climwidgets.errors.InputError` (the user can fix it: free space,
    choose another folder) and an :class:`OSError` whose ``errno`` and ``filename`` are
    those of the refused write, so ``exc.errno == errno.ENOSPC`` works as expected.

    Parameters
    ----------
    problem : str
        What is wrong, in plain words.
    errno_ : int, optional
        The operating system's error number.
    **context
        ``source``, ``expected``, ``fix`` and the other fields of
        :class:`~climwidgets.errors.InputError`.

    Examples
    --------
    >>> import errno
    >>> from climwidgets.atomic import OutputError
    >>> err = OutputError("the disk is full", errno_=errno.ENOSPC, source="out/a.nc", fix="free some space")
    >>> err.errno == errno.ENOSPC, isinstance(err, OSError)
    (True, True)
    """

    def __init__(
        self,
        problem: str,
        *,
        errno_: int | None = None,
        source: Any = None,
        variable: Any = None,
        expected: str | None = None,
        fix: str | None = None,
    ) -> None:
        super().__init__(problem, source=source, variable=variable, expected=expected, fix=fix)
        self.errno = errno_  # OSError's fields, set after InputError's __init__
        self.strerror = os.strerror(errno_) if errno_ is not None else None
        self.filename = self.source

    def __str__(self) -> str:  # OSError would print "[Errno n] ..."; keep InputError's sentence
        return self._compose()

    def __reduce__(self) -> tuple[Any, ...]:
        return (_rebuild_output_error, (self.problem, self.errno, self.source, self.variable, self.expected, self.fix))


def _rebuild_output_error(
    problem: str, errno_: int | None, source: str | None, variable: Any, expected: str | None, fix: str | None
) -> OutputError:
    return OutputError(problem, errno_=errno_, source=source, variable=variable, expected=expected, fix=fix)


# errno -> (what happened, how to fix it), for the refusals a user can act on
_REFUSALS = {
    errno.ENOSPC: ("the disk is full", "free some space on that disk, or write to another folder (--out)"),
    errno.EDQUOT: ("the disk quota is used up", "free some space within your quota, or write to another folder"),
    errno.EFBIG: ("the file is too large for that file system", "write to another disk or file system"),
    errno.EROFS: ("the file system is read-only", "write to a folder on a writable disk (--out)"),
    errno.ENOENT: ("the folder does not accept new files", "write to an ordinary folder (--out)"),
    errno.EINVAL: ("the folder does not accept new files", "write to an ordinary folder (--out)"),
    errno.ENOTDIR: ("a part of the path is not a folder", "check the output path"),
}


def output_error(exc: OSError, path: str | os.PathLike[str], what: str) -> OSError:
    """The error to raise for a refused write of ``what`` to ``path``.

    Refusals a user can act on (disk full, quota, read-only or special file system)
    become an :class:`OutputError` that says so and how to fix it; others keep their
    type and errno, with a message that names the output.  Either way the message says
    that the previous file is untouched.

    Parameters
    ----------
    exc : OSError
        The error raised by the operating system.
    path : str or path-like
        The output being written.
    what : str
        What is being written.

    Returns
    -------
    OSError
        An :class:`OutputError` or an error of the type of ``exc``.
    """
    untouched = "the previous file (if any) is untouched and no partial file was left"
    if exc.errno in _REFUSALS:
        problem, fix = _REFUSALS[exc.errno]
        return OutputError(
            f"{what} could not be written: {problem} ({exc.strerror or exc}); {untouched}",
            errno_=exc.errno,
            source=path,
            expected="a folder with room for the output",
            fix=fix,
        )
    return type(exc)(exc.errno, f"{exc.strerror or exc}: {what} could not be written; {untouched}", str(path))


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
        raise ParameterError(
            f"path={path!r} is not a file path",
            source=what,
            variable="path",
            expected="a file path (str or pathlib.Path)",
            fix="pass e.g. 'out/result.nc'",
        )
    if not isinstance(overwrite, bool):
        raise ParameterError(
            f"overwrite={overwrite!r} is not True or False",
            source=what,
            variable="overwrite",
            expected="a bool",
            fix="pass overwrite=True to replace an existing file",
        )
    path = Path(path)
    if path.is_dir():
        raise ParameterError(
            "is a folder, not a file",
            source=path,
            variable="path",
            expected="a file path",
            fix=f"name a file inside it, e.g. {path / 'output'}",
        )
    if not path.parent.is_dir():
        raise ParameterError(
            "the folder it should go in does not exist",
            source=path,
            variable="path",
            expected="an existing folder",
            fix=f"create {path.parent} first",
        )
    if path.exists() and not overwrite:
        raise OutputExistsError(
            "already exists and was left untouched",
            source=path,
            expected="a new file name, or permission to replace the file",
            fix="pass overwrite=True to replace it, or choose another path",
        )
    return path


def _file_mode(path: Path) -> int:
    """Keep the mode of the file being replaced; else what the umask gives a new file."""
    if path.exists():
        return path.stat().st_mode & 0o777
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def _host() -> str:
    """A short tag of this host, so that a process id is only trusted on the host that made it."""
    return f"{zlib.crc32(socket.gethostname().encode()):08x}"


def _writer_tag() -> str:
    return f"{_host()}-{os.getpid()}"


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, owned by someone else
        return True
    return True


def _is_stale(entry: Path, tag: str, cutoff: float) -> bool:
    """A temporary is stale when its writer (named in ``tag``, HOST-PID) is gone from this
    host, or, when the writer cannot be checked, when nobody touched it since ``cutoff``."""
    host, _, pid = tag.partition("-")
    if host == _host() and pid.isdigit():
        return not _pid_alive(int(pid))
    try:
        return entry.lstat().st_mtime < cutoff
    except OSError:
        return False


def remove_stale_temporaries(path: str | os.PathLike[str]) -> list[Path]:
    """Delete temporaries of earlier, killed writes to ``path`` (never a live writer's).

    Only names this module makes are considered: ``.NAME.HOST-PID.RANDOM.part`` (and the
    older ``.NAME.RANDOM.part``) beside ``path``, and staging folders
    ``.cw-stage.HOST-PID.RANDOM.part`` in ``path``'s folder.

    Parameters
    ----------
    path : str or path-like
        An output file.

    Returns
    -------
    list of pathlib.Path
        What was removed.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from climwidgets.atomic import _host, remove_stale_temporaries
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     left = Path(folder) / f".a.csv.{_host()}-999999999.x1.part"   # its writer is gone
    ...     _ = left.write_text("half")
    ...     print(len(remove_stale_temporaries(Path(folder) / "a.csv")), left.exists())
    1 False
    """
    path = Path(path)
    cutoff = time.time() - STALE_AFTER_S
    removed = []
    candidates = [
        (old, old.name[len(path.name) + 2 : -len(".part")].rpartition(".")[0])
        for old in path.parent.glob(f".{_glob_escape(path.name)}.*.part")
        if old.is_file()
    ]
    candidates += [
        (old, old.name[len(_STAGE_PREFIX) : -len(".part")].rpartition(".")[0])
        for old in path.parent.glob(f"{_STAGE_PREFIX}*.part")
        if old.is_dir() and not old.is_symlink()
    ]
    for old, tag in candidates:
        if not _is_stale(old, tag, cutoff):
            continue
        try:
            if old.is_dir():
                shutil.rmtree(old)
            else:
                old.unlink()
            removed.append(old)
        except OSError:  # gone already, or not ours to remove: leave it
            pass
    return removed


def _glob_escape(name: str) -> str:
    """``name`` with the glob characters ``*?[`` matched literally."""
    import glob

    return glob.escape(name)


_remove_stale_temporaries = remove_stale_temporaries  # the name used before it was public


def _move_into_place(tmp: str, path: Path, overwrite: bool) -> None:
    if overwrite:
        os.replace(tmp, path)
        return
    try:
        os.link(tmp, path)  # refuses an existing name: exclusive even between processes
    except FileExistsError:
        raise OutputExistsError(
            "appeared while writing and was left untouched",
            source=path,
            expected="a new file name",
            fix="pass overwrite=True or choose another path",
        ) from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EMLINK):
            raise
        # a file system without hard links: reserve the name exclusively, then replace
        try:
            os.close(os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600))
        except FileExistsError:
            raise OutputExistsError(
                "appeared while writing and was left untouched",
                source=path,
                expected="a new file name",
                fix="pass overwrite=True or choose another path",
            ) from None
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
    remove_stale_temporaries(path)
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.{_writer_tag()}.", suffix=".part", dir=path.parent)
        os.close(fd)
        write(Path(tmp))
        os.chmod(tmp, _file_mode(path))
        _move_into_place(tmp, path, overwrite)
    except BaseException as exc:
        if tmp is not None:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(tmp)
        if isinstance(exc, OSError) and not isinstance(exc, InputError) and exc.errno is not None:
            # disk full and the like: say which output, that nothing was lost, how to fix it
            raise output_error(exc, path, what) from exc
        raise
    return path


def atomic_write_file(
    path: str | os.PathLike[str],
    write: Callable[[IO[Any]], Any],
    mode: str = "wb",
    overwrite: bool = True,
    what: str = "file",
) -> Path:
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
    tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.{_writer_tag()}.", suffix=".part", dir=path.parent))
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


_STAGE_PREFIX = ".cw-stage."


def check_folder(folder: str | os.PathLike[str], what: str = "outputs") -> Path:
    """Fail now, not after a long computation, when no file can be made in ``folder``.

    The folder, or the nearest existing folder it would be created in, is tried by making
    and removing an empty staging folder (a name that :func:`remove_stale_temporaries`
    cleans should the process be killed in between).  Catches /proc and /sys, read-only
    disks and folders without write permission.

    Parameters
    ----------
    folder : str or path-like
        The output folder (need not exist yet).
    what : str, default "outputs"
        What will be written, for the error messages.

    Returns
    -------
    pathlib.Path
        ``folder`` as a Path.

    Raises
    ------
    climwidgets.errors.ParameterError
        When ``folder`` (or an existing part of its path) is a file.
    OutputError
        When no file can be made there; ``errno`` is the operating system's.

    Examples
    --------
    >>> import tempfile
    >>> from climwidgets.atomic import OutputError, check_folder
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     print(check_folder(folder).is_dir())
    True
    >>> try:
    ...     check_folder("/proc/out")
    ... except OutputError as exc:
    ...     print(exc.problem.split(" (")[0])
    /proc, where the output folder /proc/out would be made, does not accept new files
    """
    out = Path(folder)
    base = out
    while not base.exists() and base.parent != base:
        base = base.parent
    if not base.is_dir():
        raise ParameterError(
            "is a file, not a folder",
            source=base,
            variable="out_dir",
            expected=f"a folder for the {what}",
            fix="choose another output folder (--out)",
        )
    try:
        os.rmdir(tempfile.mkdtemp(prefix=f"{_STAGE_PREFIX}{_writer_tag()}.", suffix=".part", dir=base))
    except OSError as exc:
        where = "the output folder" if base == out else f"{base}, where the output folder {out} would be made,"
        raise OutputError(
            f"{where} does not accept new files ({exc.strerror or exc})",
            errno_=exc.errno,
            source=out if base == out else base,
            variable="out_dir",
            expected="an ordinary folder you can write to",
            fix="choose another output folder with --out (out_dir=), e.g. --out out",
        ) from None
    return out


def _commit(stage: Path, folder: Path, overwrite: bool, what: str) -> list[Path]:
    """Move every file of ``stage`` into ``folder``: all of them, or none (rolled back)."""
    # the outputs; never a writer's own temporary (".NAME.TAG.part") or the backup folder
    names = sorted(
        p.name
        for p in stage.iterdir()
        if p.name != ".previous" and not (p.name.startswith(".") and p.name.endswith(".part"))
    )
    if not overwrite:
        taken = [n for n in names if os.path.lexists(folder / n)]
        if taken:
            raise OutputExistsError(
                f"{', '.join(taken)} already exist(s) and was left untouched",
                source=folder,
                expected="outputs that do not exist yet",
                fix="pass --overwrite (overwrite=True) to replace them, or choose another output folder",
            )
    backup = stage / ".previous"
    backup.mkdir()
    moved: list[str] = []  # names now in place, in order
    saved: set[str] = set()  # names whose previous file is in the backup
    try:
        for name in names:
            target = folder / name
            if overwrite and os.path.lexists(target):
                os.replace(target, backup / name)
                saved.add(name)
            _move_into_place(str(stage / name), target, overwrite=False)
            moved.append(name)
    except BaseException:
        for name in reversed(moved):  # ours: put the previous set back as it was
            with contextlib.suppress(OSError):
                os.unlink(folder / name)
        for name in saved:
            with contextlib.suppress(OSError):
                os.replace(backup / name, folder / name)
        raise
    return [folder / n for n in names]


def _relocated(exc: OSError, stage: Path, folder: Path) -> OSError:
    """``exc`` with the staging folder's paths replaced by the output folder's."""

    def moved(text: Any) -> Any:
        return None if text is None else str(text).replace(str(stage), str(folder))

    if isinstance(exc, OutputError):
        return OutputError(
            moved(exc.problem),
            errno_=exc.errno,
            source=moved(exc.source),
            variable=exc.variable,
            expected=exc.expected,
            fix=exc.fix,
        )
    if isinstance(exc, InputError):
        return type(exc)(
            moved(exc.problem), source=moved(exc.source), variable=exc.variable, expected=exc.expected, fix=exc.fix
        )
    if exc.errno is None:
        return exc
    return type(exc)(exc.errno, moved(exc.strerror), moved(exc.filename))


@contextlib.contextmanager
def staged_outputs(folder: str | os.PathLike[str], overwrite: bool, what: str = "outputs") -> Iterator[Path]:
    """A staging folder beside the outputs; on success every file in it is moved into ``folder``.

    Write all outputs of a job into the yielded folder under their final names.  When the
    block ends normally they are moved into ``folder`` together: without ``overwrite`` only
    if none of the names exists there (else :class:`OutputExistsError` and nothing is
    moved); with it the previous files are set aside first and put back if a move fails.
    When the block raises (or is interrupted), the staging folder is removed and ``folder``
    is exactly as before: no partial set, nothing that a next run would refuse to replace.
    Staging folders of earlier runs that were killed are removed when their writer is gone
    (see :func:`remove_stale_temporaries`).

    Parameters
    ----------
    folder : str or path-like
        The output folder (created if absent).
    overwrite : bool
        Whether existing outputs of the same names may be replaced.
    what : str, default "outputs"
        What is being written, for the error messages.

    Yields
    ------
    pathlib.Path
        The staging folder (empty).

    Raises
    ------
    OutputExistsError
        Without ``overwrite``, when an output name exists in ``folder`` at the end.
    OutputError
        When the disk refuses the writes; nothing is left behind.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> from climwidgets.atomic import staged_outputs
    >>> with tempfile.TemporaryDirectory() as folder:
    ...     with staged_outputs(folder, overwrite=False) as stage:
    ...         _ = (stage / "a.csv").write_text("1")
    ...         _ = (stage / "b.nc").write_text("2")
    ...     print(sorted(p.name for p in Path(folder).iterdir()))
    ['a.csv', 'b.nc']
    """
    folder = Path(folder)
    stage = None
    try:
        folder.mkdir(parents=True, exist_ok=True)
        remove_stale_temporaries(folder / "outputs")  # stale staging folders are found beside any name
        stage = Path(tempfile.mkdtemp(prefix=f"{_STAGE_PREFIX}{_writer_tag()}.", suffix=".part", dir=folder))
        yield stage
        _commit(stage, folder, overwrite, what)
    except OSError as exc:
        if stage is not None and str(stage) in str(exc):
            raise _relocated(exc, stage, folder) from exc  # name the output, not the staging folder
        if isinstance(exc, InputError) or exc.errno is None:
            raise
        raise output_error(exc, folder, what) from exc
    finally:
        if stage is not None:
            shutil.rmtree(stage, ignore_errors=True)
