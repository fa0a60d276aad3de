"""Turn what the user passed (path, glob, list, URL, Zarr store, fsspec URL or mapper) into
opened datasets.

fsspec URLs (``file://``, ``memory://``, ``s3://``, ``gs://`` and any protocol fsspec knows)
and fsspec mappers are opened through fsspec: Zarr stores as mappers, NetCDF-4 files as
file objects read by h5netcdf.  ``file://`` URLs of NetCDF files become plain paths.  The
object-store clients (s3fs, gcsfs) are the optional ``cloud`` extra.

Opening never reads data values: only metadata and coordinates.  Every failure of the
underlying libraries is turned into a :class:`SourceError` that names the file.
"""

from __future__ import annotations

import errno
import glob
import os
import stat
import warnings
from pathlib import Path
from typing import Any

import xarray as xr

from ..errors import SourceError

_GLOB_CHARS = set("*?[")
_URL_PREFIXES = ("http://", "https://", "dods://", "dap://", "dap4://")


def is_url(text: object) -> bool:
    """Whether ``text`` is an OPeNDAP/HTTP address (read by the netCDF library).

    Parameters
    ----------
    text : object
        What the user passed.

    Returns
    -------
    bool

    Examples
    --------
    >>> is_url("https://example.org/thredds/dodsC/pr.nc"), is_url("pr.nc")
    (True, False)
    """
    return isinstance(text, str) and text.lower().startswith(_URL_PREFIXES)


def is_fsspec(source: object) -> bool:
    """An fsspec URL such as memory://… or s3://… (not OPeNDAP over http), or a mapper.

    Parameters
    ----------
    source : object
        What the user passed.

    Returns
    -------
    bool

    Examples
    --------
    >>> is_fsspec("memory://pr.zarr"), is_fsspec("https://example.org/pr.nc")
    (True, False)
    """
    if type(source).__name__ == "FSMap" and hasattr(source, "fs"):
        return True
    return isinstance(source, str) and "://" in source and not is_url(source)


def source_label(source: Any) -> str:
    """A short text naming a source in messages and attrs.

    Parameters
    ----------
    source : object
        A path, URL, fsspec mapper, or an xarray object given in memory.

    Returns
    -------
    str

    Examples
    --------
    >>> import xarray as xr
    >>> source_label(xr.DataArray([1.0], dims="time", name="pr"))
    "DataArray 'pr'"
    >>> source_label("data/pr_2001.nc")
    'data/pr_2001.nc'
    """
    import xarray as xr

    if isinstance(source, xr.DataArray):
        return f"DataArray {source.name!r}" if source.name is not None else "the given DataArray"
    if isinstance(source, xr.Dataset):
        return "the given Dataset (" + ", ".join(map(str, list(source.data_vars)[:4])) + ")"
    if type(source).__name__ == "FSMap":
        protocol = source.fs.protocol[0] if isinstance(source.fs.protocol, (tuple, list)) else source.fs.protocol
        return f"{protocol}://{source.root.lstrip('/')}" if protocol not in ("file", "local") else source.root
    return str(source)


def _resolve_fsspec(text: str) -> list[str]:
    import fsspec

    protocol = text.split("://", 1)[0].lower()
    if protocol in ("file", "local"):
        return resolve(text.split("://", 1)[1])  # a plain path: direct reads, checks, globs
    try:
        fs, _, paths = fsspec.get_fs_token_paths(text)
    except (ImportError, ValueError) as exc:
        raise SourceError(
            f"cannot be opened: {exc}",
            source=text,
            expected="an fsspec URL whose protocol is installed",
            fix="install the object-store client (pip install 'climwidgets[cloud]' for s3:// "
            "and gs://) or copy the data to a local folder",
        ) from None
    if _GLOB_CHARS & set(text):
        if not paths:
            raise SourceError(
                "the pattern matches no files",
                source=text,
                expected="at least one matching file",
                fix="check the folder and the pattern",
            )
        return [fs.unstrip_protocol(p) for p in sorted(paths)]
    if not fs.exists(paths[0]):
        raise SourceError(
            "does not exist",
            source=text,
            expected="an existing NetCDF file or Zarr store",
            fix="check the address (protocol, bucket and path)",
        )
    return [text]


def is_zarr(path: Any) -> bool:
    """Whether ``path`` is a Zarr store (a ``.zarr`` name, or Zarr metadata inside).

    Parameters
    ----------
    path : str, os.PathLike or fsspec mapper

    Returns
    -------
    bool

    Examples
    --------
    >>> is_zarr("pr.zarr"), is_zarr("pr.nc")
    (True, False)
    """
    if type(path).__name__ == "FSMap":
        return any(m in path for m in (".zgroup", ".zarray", "zarr.json"))
    if isinstance(path, str) and is_fsspec(path):
        return path.rstrip("/").endswith(".zarr") or _fsspec_is_zarr(path)
    p = Path(path)
    return p.suffix == ".zarr" or (p.is_dir() and any((p / m).exists() for m in (".zgroup", ".zarray", "zarr.json")))


def resolve(source: Any) -> list[str]:
    """A list of concrete sources (paths, stores or URLs) in the order given or sorted by name.

    Parameters
    ----------
    source : str, os.PathLike, list or fsspec mapper
        A path, a glob pattern ("data/pr_*.nc"), a list of either, a URL or a store.

    Returns
    -------
    list of str
        Globs expanded and sorted by name; lists kept in their order.

    Raises
    ------
    SourceError
        For an empty list, a glob that matches nothing, or a path that does not exist.

    Examples
    --------
    >>> import pathlib, tempfile
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> for year in (2002, 2001):
    ...     _ = (folder / f"pr_{year}.nc").write_bytes(b"")
    >>> [pathlib.Path(p).name for p in resolve(str(folder / "pr_*.nc"))]
    ['pr_2001.nc', 'pr_2002.nc']
    """
    if isinstance(source, (list, tuple)):
        if not source:
            raise SourceError(
                "an empty list of files was given",
                expected="one or more paths",
                fix="pass a path, a glob pattern such as 'data/pr_*.nc', or a list of paths",
            )
        out = []
        for item in source:
            out.extend(resolve(item))
        return out
    if is_fsspec(source) and not isinstance(source, str):
        return [source]  # an fsspec mapper (for example fsspec.get_mapper("memory://store.zarr"))
    text = os.fspath(source) if isinstance(source, os.PathLike) else str(source)
    if is_url(text):
        return [text]
    if is_fsspec(text):
        return _resolve_fsspec(text)
    expanded = os.path.expanduser(text)
    if _GLOB_CHARS & set(expanded):
        matches = sorted(glob.glob(expanded))
        if not matches:
            raise SourceError(
                "the pattern matches no files",
                source=text,
                expected="at least one matching file",
                fix="check the folder and the pattern (is the extension .nc or .nc4?)",
            )
        for match in matches:
            _check_local(match)
        return matches
    if os.path.islink(expanded) and not os.path.exists(expanded):
        _check_local(expanded)  # a dangling link or a link loop, said as such
    if not os.path.exists(expanded):
        raise SourceError(
            "does not exist",
            source=text,
            expected="an existing NetCDF file or Zarr store",
            fix=f"check the path; relative paths are taken from the notebook's working folder ({os.getcwd()})",
        )
    if os.path.isdir(expanded) and not is_zarr(expanded):
        raise SourceError(
            "is a folder but not a Zarr store",
            source=text,
            expected="a NetCDF file, a glob pattern, or a Zarr store",
            fix=f"pass a pattern such as '{os.path.join(text, '*.nc')}'",
        )
    _check_local(expanded)
    return [expanded]


def _check_local(path: str) -> None:
    """Refuse at once what cannot be read as a data file: link loops, FIFOs, devices, no permission.

    A FIFO or a character device would block or stream forever when opened, so the kind of
    file is checked with ``stat`` before anything opens it.
    """
    try:
        st = os.stat(path)
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            raise SourceError(
                "is a symbolic link that loops (it points, directly or not, to itself)",
                source=path,
                expected="a link that ends at a NetCDF file or Zarr store",
                fix="repair the link with 'ls -l' and 'ln -sf TARGET LINK'",
            ) from None
        if exc.errno == errno.ENOENT and os.path.islink(path):
            raise SourceError(
                f"is a symbolic link to '{os.readlink(path)}', which does not exist",
                source=path,
                expected="a link that ends at an existing file",
                fix="repair the link or pass the target's path",
            ) from None
        if exc.errno in (errno.EACCES, errno.EPERM):
            raise SourceError(
                "cannot be examined: permission denied",
                source=path,
                expected="a file this user may read",
                fix="ask the owner for read permission (chmod o+r) or copy the file",
            ) from None
        raise SourceError(
            f"cannot be examined: {exc.strerror}",
            source=path,
            expected="an existing NetCDF file or Zarr store",
            fix="check the path",
        ) from None
    if stat.S_ISDIR(st.st_mode):
        if not os.access(path, os.R_OK | os.X_OK):
            raise SourceError(
                "is a folder this user may not read (permission denied)",
                source=path,
                expected="a readable Zarr store",
                fix="ask the owner for read permission",
            )
        return
    if not stat.S_ISREG(st.st_mode):
        kind = (
            "a named pipe (FIFO)"
            if stat.S_ISFIFO(st.st_mode)
            else "a character device"
            if stat.S_ISCHR(st.st_mode)
            else "a block device"
            if stat.S_ISBLK(st.st_mode)
            else "a socket"
            if stat.S_ISSOCK(st.st_mode)
            else "not a regular file"
        )
        raise SourceError(
            f"is {kind}, not a regular file; reading it could block or never end",
            source=path,
            expected="a NetCDF file on disk or a Zarr store",
            fix="write the data to a regular file first, then pass that file",
        )
    if not os.access(path, os.R_OK):
        raise SourceError(
            "cannot be read: permission denied",
            source=path,
            expected="a file this user may read",
            fix="ask the owner for read permission (chmod o+r) or copy the file",
        )


def _fsspec_is_zarr(url: str) -> bool:
    import fsspec

    fs, _, paths = fsspec.get_fs_token_paths(url)
    return fs.isdir(paths[0]) and any(fs.exists(f"{paths[0].rstrip('/')}/{m}") for m in (".zgroup", "zarr.json"))


def _open_fsspec(source: Any) -> xr.Dataset:
    """A Zarr store (URL or mapper) or a NetCDF-4 file object over fsspec, lazily."""
    import fsspec

    if is_zarr(source):
        store = source if not isinstance(source, str) else fsspec.get_mapper(source)
        with warnings.catch_warnings():  # stores without consolidated metadata are fine
            warnings.simplefilter("ignore", RuntimeWarning)
            return xr.open_dataset(store, engine="zarr", decode_times=False, chunks=None)
    handle = fsspec.open(source, "rb").open()  # kept open for lazy reads; closed with the dataset
    try:
        return xr.open_dataset(handle, engine="h5netcdf", decode_times=False, chunks=None, cache=False)
    except Exception:
        handle.close()
        raise


_NC3_TYPE_SIZES = {1: 1, 2: 1, 3: 2, 4: 4, 5: 4, 6: 8, 7: 1, 8: 2, 9: 4, 10: 8, 11: 8}


def netcdf3_min_size(head: bytes) -> int | None:
    """The fewest bytes a NetCDF-3 file with this header must have, or None if unknown.

    The netCDF library reads past the end of a short classic file as zeros without an
    error, so a cut download would open as silent zeros; comparing the file's size with
    what its header declares catches it.  Record sizes are summed without padding, so the
    bound is never larger than the true size (no false alarms).

    Parameters
    ----------
    head : bytes
        The first bytes of the file (its header).

    Returns
    -------
    int or None
        None for files that are not NetCDF-3, streaming files, or a header cut short.

    References
    ----------
    Unidata, "The NetCDF Classic Format Specification" (NetCDF Users Guide, appendix:
    file format specifications).

    Examples
    --------
    >>> netcdf3_min_size(b"HDF5 or anything else") is None  # only NetCDF-3 headers are read
    True
    """
    import struct

    if len(head) < 8 or head[:3] != b"CDF" or head[3] not in (1, 2, 5):
        return None
    version, pos = head[3], 4
    big = version == 5

    def take(n: int) -> bytes:
        nonlocal pos
        if pos + n > len(head):
            raise EOFError
        chunk = head[pos : pos + n]
        pos += n
        return chunk

    def count() -> int:
        return int(struct.unpack(">Q", take(8))[0] if big else struct.unpack(">I", take(4))[0])

    def name() -> None:
        n = count()
        take((n + 3) // 4 * 4)

    def attrs() -> None:
        tag, n = struct.unpack(">I", take(4))[0], count()
        for _ in range(n if tag else 0):
            name()
            typ, k = struct.unpack(">I", take(4))[0], count()
            take((k * _NC3_TYPE_SIZES.get(typ, 1) + 3) // 4 * 4)

    try:
        numrecs = count()
        if numrecs in (0xFFFFFFFF, 0xFFFFFFFFFFFFFFFF):
            return None  # streaming: record count not recorded
        tag, n = struct.unpack(">I", take(4))[0], count()
        dims = []
        for _ in range(n if tag else 0):
            name()
            dims.append(count())
        attrs()
        tag, n = struct.unpack(">I", take(4))[0], count()
        fixed_end, rec_begin, rec_bytes = 0, None, 0
        for _ in range(n if tag else 0):
            name()
            ids = [count() for _ in range(count())]
            attrs()
            typ = struct.unpack(">I", take(4))[0]
            count()  # vsize (may be a sentinel for large variables)
            begin = struct.unpack(">Q", take(8))[0] if version in (2, 5) else struct.unpack(">I", take(4))[0]
            is_record = bool(ids) and dims[ids[0]] == 0
            size = _NC3_TYPE_SIZES.get(typ, 1)
            for i in ids[1:] if is_record else ids:
                size *= dims[i]
            if is_record:
                rec_begin = begin if rec_begin is None else min(rec_begin, begin)
                rec_bytes += size
            else:
                fixed_end = max(fixed_end, begin + size)
    except (EOFError, IndexError, struct.error):
        return None
    if rec_begin is not None and numrecs:
        return int(max(fixed_end, rec_begin + numrecs * rec_bytes))
    return fixed_end


def _check_not_short(source: str) -> None:
    try:
        size = os.path.getsize(source)
        with open(source, "rb") as fh:
            head = fh.read(8 * 2**20)
    except OSError:
        return
    need = netcdf3_min_size(head)
    if need is not None and size < need:
        raise SourceError(
            f"is shorter than its header says ({size} bytes, at least {need} needed): it is truncated",
            source=source,
            expected="a complete NetCDF file",
            fix="copy or download the file again; a transfer was probably cut short",
        )


def open_raw(source: Any) -> xr.Dataset:
    """Open one source lazily with times left undecoded (they are checked before decoding).

    Parameters
    ----------
    source : str or fsspec mapper
        One concrete source from :func:`resolve`.

    Returns
    -------
    xarray.Dataset
        Lazily opened; no data values are read.

    Raises
    ------
    SourceError
        For a truncated, unreadable or missing file, naming it.

    Examples
    --------
    >>> import os, tempfile, xarray as xr
    >>> path = os.path.join(tempfile.mkdtemp(), "one.nc")
    >>> xr.Dataset({"pr": ("time", [1.0, 2.0])}).to_netcdf(path)
    >>> ds = open_raw(path)
    >>> list(ds.data_vars)
    ['pr']
    >>> ds.close()
    """
    if not is_fsspec(source) and not is_zarr(source) and not is_url(source) and os.path.isfile(source):
        _check_not_short(source)
    try:
        if is_fsspec(source):
            return _open_fsspec(source)
        if is_zarr(source):
            with warnings.catch_warnings():  # stores without consolidated metadata are fine
                warnings.simplefilter("ignore", RuntimeWarning)
                return xr.open_dataset(source, engine="zarr", decode_times=False, chunks=None)
        return xr.open_dataset(source, engine="netcdf4", decode_times=False, chunks=None, cache=False)
    except Exception as exc:  # every backend failure becomes one readable error
        label = source_label(source)
        if is_zarr(source):
            problem = "could not be opened as a Zarr store (is it empty or incomplete?)"
            fix = "check that the store was written completely; rewrite it with xarray's to_zarr"
        elif is_url(source):
            problem = "could not be opened as an OPeNDAP URL"
            fix = "check the address and that the server is reachable from this machine"
        elif is_fsspec(source):
            problem = "could not be read as NetCDF-4 or Zarr through fsspec"
            fix = "check the address; NetCDF-3 files need a local copy (fsspec reads NetCDF-4 with h5netcdf)"
        else:
            size = os.path.getsize(source) if os.path.exists(source) else 0
            problem = (
                f"could not be read as NetCDF ({size} bytes; it may be truncated, still being "
                "written, or not a NetCDF file)"
            )
            fix = "check the file with 'ncdump -h', download or copy it again"
        raise SourceError(f"{problem}: {type(exc).__name__}: {exc}", source=label, fix=fix) from None
