"""Read NetCDF-4 chunks without holding the HDF5 lock while they are decompressed.

NetCDF-4 files are HDF5 files. The HDF5 library serialises every read inside a process,
decompression included, so dask threads reading one file take turns and a multi-core
machine decompresses on one core. For chunked variables stored with the common filters
(deflate, optionally with byte shuffle and the Fletcher-32 checksum), this module reads the
chunk index once (through h5py), then reads each stored chunk's bytes with ``os.pread``,
verifies its checksum when the file has one, and decompresses it with ``zlib`` — all of
which release the GIL — so threads decompress in parallel.

Every filter this reader undoes is checked, as the HDF5 library checks it: the Fletcher-32
sum of each chunk against its stored trailer (HDF5's variant of the sum: 16-bit words read
big-endian); deflate by zlib's own Adler-32 and a complete stream; the shuffle's element
size against the variable's; and the decoded chunk's size against the chunk shape. A chunk
that fails is refused with a :class:`~climwidgets.errors.SourceError` naming the file, the
variable and the chunk's place (which time steps, rows and columns).

Any other layout (contiguous storage, other filters, remote URLs, Zarr) is left to the
ordinary xarray path: ``direct_reader`` returns None.

CF decoding (``_FillValue``/``missing_value`` to NaN, ``scale_factor``/``add_offset``)
is applied here, because this path bypasses xarray's lazy decoding.

Both paths turn a failing read (a damaged chunk, a file cut short) into a
:class:`~climwidgets.errors.SourceError` naming the file, raised when the values are read.
"""

from __future__ import annotations

import os
import zlib
from collections.abc import Callable, Iterator, Mapping, Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

# a chunk's bytes between filters: bytes from disk, or what a filter step returns
RawBytes = bytes | memoryview | NDArray[np.uint8]
Region = tuple[slice, ...]

_DEFLATE, _SHUFFLE, _FLETCHER32 = 1, 2, 3


def _unshuffle(data: RawBytes, size: int) -> RawBytes:
    """Undo HDF5's byte shuffle: stored as all first bytes, then all second bytes, ...

    One contiguous column copy per byte position: several times faster than a transposed
    copy, and numpy releases the GIL while copying.
    """
    if size == 1:
        return data
    planes = np.frombuffer(data, dtype=np.uint8).reshape(size, -1)
    out = np.empty((planes.shape[1], size), dtype=np.uint8)
    for i in range(size):
        out[:, i] = planes[i]
    return out.reshape(-1)  # flat bytes, so a following checksum strip cuts bytes, not rows


class ChunkCheckError(ValueError):
    """A stored chunk that fails a check of one of its filters (the file is damaged)."""


class ChecksumError(ChunkCheckError):
    """A stored chunk whose bytes do not match its checksum (the file is damaged)."""


class ChunkReadError(ValueError):
    """A chunk check failed; carries the chunk's description for the user's message.

    Parameters
    ----------
    where : str
        The chunk in words (:meth:`ChunkIndex.describe`).
    cause : ChunkCheckError
        The check that failed.

    Examples
    --------
    >>> err = ChunkReadError("the stored chunk at rows 0–1", ChecksumError("Fletcher-32 checksum mismatch"))
    >>> str(err)
    'the stored chunk at rows 0–1: Fletcher-32 checksum mismatch'
    """

    def __init__(self, where: str, cause: ChunkCheckError):
        self.where, self.cause = where, cause
        super().__init__(f"{where}: {cause}")


_ROW = 4096  # words per row when the checksum folds the chunk into a 2-D array


def _fletcher32(data: RawBytes) -> int:
    """HDF5's Fletcher-32 checksum of a byte string (16-bit words read big-endian).

    The same value as HDF5's ``H5_checksum_fletcher32``: with words w_0 … w_{n-1},
    sum1 = Σ w_i and sum2 = Σ (n - i) w_i, both modulo 65535, where HDF5's folding leaves
    a non-zero multiple of 65535 as 65535 rather than 0. Σ i·w_i is taken from the row
    and column sums of the words laid out in rows of ``_ROW``, so that checking a chunk
    costs two passes over its bytes (and numpy releases the GIL) instead of a loop.

    References
    ----------
    Fletcher, J. G. (1982). An arithmetic checksum for serial transmissions. IEEE
    Transactions on Communications, 30(1), 247-252. doi:10.1109/TCOM.1982.1095369
    """
    buf = np.frombuffer(data, dtype=np.uint8)
    if buf.size % 2:
        buf = np.concatenate([buf, np.zeros(1, np.uint8)])  # an odd last byte is a high byte
    words = buf.view(">u2")
    n = words.size
    if n % _ROW:
        words = np.concatenate([words, np.zeros(_ROW - n % _ROW, ">u2")])  # zeros add nothing
    rows = words.reshape(-1, _ROW).sum(axis=1, dtype=np.int64)
    cols = words.reshape(-1, _ROW).sum(axis=0, dtype=np.int64) % 65535
    total = int(rows.sum())
    rows %= 65535
    index_weighted = _ROW * int(np.dot(np.arange(rows.size, dtype=np.int64) % 65535, rows)) + int(
        np.dot(np.arange(_ROW, dtype=np.int64), cols)
    )
    s1, s2 = total % 65535, (n * total - index_weighted) % 65535
    if total:  # HDF5's folding never reaches 0 once any word is non-zero
        s1, s2 = s1 or 65535, s2 or 65535
    return (s2 << 16) | s1


_FAST_FLETCHER32: list[Any] = []  # [codec or None], decided on first use


def _fast_fletcher32() -> Any:
    """numcodecs' Fletcher32 codec if it follows HDF5's convention here, else None.

    numcodecs 0.16 computes HDF5's sum (big-endian 16-bit words, an odd last byte as a
    high byte, the sum stored little-endian after the data) in compiled code, about four
    times faster than :func:`_fletcher32`; some earlier releases read the words in native
    order, and some refused a mismatch only with ``assert`` (skipped under ``python -O``).
    So the codec is used only after it accepts chunks checksummed by :func:`_fletcher32`
    (odd and even lengths) and refuses the same chunks with one bit changed.
    """
    if not _FAST_FLETCHER32:
        codec = None
        try:
            from numcodecs import Fletcher32

            candidate = Fletcher32()
            ok = True
            for size in (4099, 4100):
                body = bytes((i * 7919 + 13) % 256 for i in range(size))
                good = body + _fletcher32(body).to_bytes(4, "little")
                bad = bytes([good[0] ^ 0x10]) + good[1:]
                ok &= bytes(candidate.decode(good)) == body
                try:
                    candidate.decode(bad)
                    ok = False
                except (RuntimeError, AssertionError, ValueError):
                    pass
            codec = candidate if ok else None
        except Exception:  # noqa: BLE001 - any failure of an optional codec: use our own sum
            codec = None
        _FAST_FLETCHER32.append(codec)
    return _FAST_FLETCHER32[0]


def _check_fletcher32(data: RawBytes) -> RawBytes:
    """The chunk without its checksum trailer, after checking the trailer against the data.

    HDF5 accepts the correct sum and, for files written by its releases before 1.6.3,
    the sum with the bytes of each 16-bit half swapped; so do we (a sum the fast codec
    refuses is checked again here, which also gives both sums for the message).
    """
    if len(data) < 4:
        raise ChecksumError(f"stored chunk of {len(data)} bytes is shorter than its Fletcher-32 checksum")
    codec = _fast_fletcher32()
    if codec is not None:
        try:
            decoded: RawBytes = codec.decode(data)
            return decoded
        except (RuntimeError, AssertionError, ValueError):
            pass
    body, trailer = data[:-4], data[-4:]
    stored = int.from_bytes(trailer, "little")
    computed = _fletcher32(body)
    le = computed.to_bytes(4, "little")
    swapped = int.from_bytes(bytes((le[1], le[0], le[3], le[2])), "little")
    if stored not in (computed, swapped):
        raise ChecksumError(f"Fletcher-32 checksum mismatch (stored {stored:#010x}, computed {computed:#010x})")
    return body


class ChunkIndex:
    """Byte offset and size of every stored chunk of one variable, by its chunk-grid position.

    Parameters
    ----------
    path : str
        The NetCDF-4 (HDF5) file.
    shape, chunk_shape : sequence of int
        The variable's stored shape and chunk shape.
    dtype : numpy dtype
        Stored values' type.
    fill : scalar
        HDF5 fill value (for chunks never written).
    filters : list of int
        HDF5 filter ids in pipeline order (deflate 1, shuffle 2, Fletcher-32 3).
    entries : dict
        ``{chunk grid position: (byte offset, size, filter mask)}``.
    varname, stamp, dims : optional
        The variable, the file's (size, mtime_ns) when indexed, and dimension names.

    References
    ----------
    The HDF Group, "HDF5 File Format Specification Version 3.0", section III.E (filter
    pipeline message) and the chunk B-tree.

    Examples
    --------
    >>> from climwidgets.io.chunkreader import _example_file
    >>> path = _example_file()  # 4 x 6 float32, chunks 2 x 3, deflate + shuffle + Fletcher-32
    >>> index = _build_index(path, "pr")
    >>> index.chunk_shape, index.filters, len(index.entries)
    ((2, 3), [3, 2, 1], 4)
    """

    def __init__(
        self,
        path: str,
        shape: Sequence[int],
        chunk_shape: Sequence[int],
        dtype: Any,
        fill: Any,
        filters: list[int],
        entries: dict[tuple[int, ...], tuple[int, int, int]],
        varname: str | None = None,
        stamp: tuple[int, int] | None = None,
        dims: list[str] | None = None,
    ) -> None:
        self.path = path
        self.dims = dims  # dimension names (from the file's dimension scales), for messages
        self.varname, self.stamp = varname, stamp  # stamp: (size, mtime_ns) of the file indexed
        self.shape = tuple(shape)
        self.chunk_shape = tuple(chunk_shape)
        self.dtype = np.dtype(dtype)
        self.fill = fill
        self.filters = filters  # list of filter ids in pipeline order
        self.entries = entries  # {chunk grid position tuple: (byte offset, size, filter mask)}

    def __reduce__(self) -> Any:
        # sent to another process (a dask worker) as the file's name only: the worker opens
        # the file and reads its chunk index itself, once per process, instead of receiving
        # every chunk's offset with every task
        if self.varname is None:
            return object.__reduce__(self)
        return _index_in_process, (self.path, self.varname, self.stamp)

    def positions(self, region: Region) -> NDArray[np.intp]:
        """Chunk-grid positions overlapping a region given as a tuple of slices."""
        ranges = [range(s.start // c, (s.stop - 1) // c + 1) for s, c in zip(region, self.chunk_shape)]
        return np.array(np.meshgrid(*ranges, indexing="ij")).reshape(len(ranges), -1).T

    def decode(self, raw: bytes, mask: int) -> np.ndarray:
        """One stored chunk's values; every filter undone is checked (ChunkCheckError if not)."""
        data: RawBytes = raw
        for i, fid in reversed(list(enumerate(self.filters))):  # undo the pipeline in reverse
            if mask & (1 << i):
                continue  # filter skipped for this chunk
            if fid == _DEFLATE:
                try:
                    data = zlib.decompress(
                        bytes(data) if isinstance(data, np.ndarray) else data
                    )  # checks the stream's Adler-32 and its end
                except zlib.error as exc:
                    raise ChunkCheckError(f"deflate stream is damaged (zlib.error: {exc})") from None
            elif fid == _SHUFFLE:
                if len(data) % self.dtype.itemsize:
                    raise ChunkCheckError(
                        f"shuffled chunk of {len(data)} bytes is not a whole number of "
                        f"{self.dtype.itemsize}-byte values"
                    )
                data = _unshuffle(data, self.dtype.itemsize)
            elif fid == _FLETCHER32:
                data = _check_fletcher32(data)
            else:  # pragma: no cover - _build_index admits no other filter
                raise ChunkCheckError(f"filter {fid} is not one this reader undoes")
        expected = int(np.prod(self.chunk_shape)) * self.dtype.itemsize
        nbytes = data.nbytes if hasattr(data, "nbytes") else len(data)  # bytes, memoryview or array
        if nbytes != expected:
            raise ChunkCheckError(
                f"decoded chunk has {nbytes} bytes, {expected} expected for its shape {self.chunk_shape}"
            )
        if isinstance(data, np.ndarray):
            values: np.ndarray = data.view(self.dtype).reshape(self.chunk_shape)
            return values
        return np.frombuffer(data, dtype=self.dtype).reshape(self.chunk_shape)

    def describe(self, pos: Sequence[int]) -> str:
        """Where the stored chunk at grid position ``pos`` lies, in words and as slices."""
        parts = []
        names: Sequence[str | None] = (
            self.dims if self.dims and len(self.dims) == len(self.shape) else [None] * len(self.shape)
        )
        nd = len(self.shape)
        for axis, (p, c, n, name) in enumerate(zip(pos, self.chunk_shape, self.shape, names)):
            lo, hi = p * c, min((p + 1) * c, n)
            if nd >= 2 and axis == nd - 2:
                what = f"rows {lo}–{hi - 1}" + (f" ({name})" if name else "")
            elif nd >= 2 and axis == nd - 1:
                what = f"columns {lo}–{hi - 1}" + (f" ({name})" if name else "")
            elif name == "time":
                what = f"time steps {lo}–{hi - 1}"
            else:
                what = f"{name or f'axis {axis}'} indices {lo}–{hi - 1}"
            parts.append(what)
        where = ", ".join(
            f"{name or f'axis {a}'} {lo}:{hi}"
            for a, (name, lo, hi) in enumerate(
                (nm, p * c, min((p + 1) * c, n)) for p, c, n, nm in zip(pos, self.chunk_shape, self.shape, names)
            )
        )
        return f"the stored chunk at {', '.join(parts)} [{where}]"


def _build_index(path: str, varname: str) -> ChunkIndex | None:
    try:
        import h5py
    except ImportError:  # pragma: no cover - h5py is a dependency
        return None
    try:
        with h5py.File(path, "r") as f:
            if varname not in f:
                return None
            d = f[varname]
            if d.chunks is None or not isinstance(d, h5py.Dataset) or d.dtype.kind not in "fiu":
                return None
            plist = d.id.get_create_plist()
            specs = [plist.get_filter(i) for i in range(plist.get_nfilters())]
            filters = [spec[0] for spec in specs]
            if any(fid not in (_DEFLATE, _SHUFFLE, _FLETCHER32) for fid in filters):
                return None  # a filter this reader does not undo: the library reads the file
            for fid, _flags, values, _name in specs:
                if fid == _SHUFFLE and values and int(values[0]) != d.dtype.itemsize:
                    return None  # shuffled with another element size than the values have
            entries: dict[tuple[int, ...], tuple[int, int, int]] = {}
            chunk = np.array(d.chunks)

            def add(info: Any) -> None:
                entries[tuple(np.array(info.chunk_offset) // chunk)] = (info.byte_offset, info.size, info.filter_mask)

            if hasattr(d.id, "chunk_iter"):
                d.id.chunk_iter(add)
            else:  # pragma: no cover - older HDF5
                for i in range(d.id.get_num_chunks()):
                    add(d.id.get_chunk_info(i))
            return ChunkIndex(
                path,
                d.shape,
                d.chunks,
                d.dtype,
                d.fillvalue,
                filters,
                entries,
                varname,
                _stamp(path),
                dims=_dim_names(d),
            )
    except (OSError, ValueError, KeyError, RuntimeError):
        return None


def _dim_names(d: Any) -> list[str] | None:
    """The names of a NetCDF-4 variable's dimensions (its HDF5 dimension scales), or None."""
    try:
        names = [dim[0].name.rsplit("/", 1)[-1] if len(dim) else None for dim in d.dims]
    except (KeyError, ValueError, RuntimeError, OSError, IndexError):
        return None
    return [str(n) for n in names] if all(names) else None


def _stamp(path: str) -> tuple[int, int]:
    st = os.stat(path)
    return st.st_size, st.st_mtime_ns


_INDEXES: dict[
    tuple[str, str, tuple[int, int] | None], ChunkIndex
] = {}  # chunk indexes rebuilt in this process, by (path, variable, stamp)


def _index_in_process(path: str, varname: str, stamp: tuple[int, int] | None) -> ChunkIndex:
    """The chunk index of a file in a worker process, read once; the file must be unchanged."""
    from ..errors import SourceError

    key = (path, varname, stamp)
    if key not in _INDEXES:
        try:
            now = _stamp(path)
        except OSError:
            now = None
        index = _build_index(path, varname) if now == stamp else None
        if index is None:
            raise SourceError(
                "changed, moved or became unreadable after it was opened",
                source=path,
                variable=varname,
                expected="the file as it was when opened",
                fix="open the data again (cw.open_precip) and recompute",
            )
        _INDEXES[key] = index
    return _INDEXES[key]


def read_region(index: ChunkIndex, region: Region) -> np.ndarray:
    """The stored values of a region (tuple of slices), assembled from whole chunks.

    Every filter undone is checked (:meth:`ChunkIndex.decode`).

    Parameters
    ----------
    index : ChunkIndex
    region : tuple of slice
        One slice per axis, with start and stop.

    Returns
    -------
    numpy.ndarray
        In the stored type.

    Raises
    ------
    ChunkReadError
        For a chunk that fails a check or is cut short.

    Examples
    --------
    >>> from climwidgets.io.chunkreader import _example_file
    >>> path = _example_file()  # 4 x 6 float32, chunks 2 x 3, deflate + shuffle + Fletcher-32
    >>> read_region(_build_index(path, "pr"), (slice(1, 3), slice(2, 5)))
    array([[ 8.,  9., 10.],
           [14., 15., 16.]], dtype=float32)
    """
    out = np.empty(tuple(s.stop - s.start for s in region), dtype=index.dtype)
    fd = os.open(index.path, os.O_RDONLY)
    try:
        for pos in index.positions(region):
            pos = tuple(int(p) for p in pos)
            lo = [p * c for p, c in zip(pos, index.chunk_shape)]
            entry = index.entries.get(pos)
            if entry is None:
                block = np.full(index.chunk_shape, index.fill, dtype=index.dtype)  # never written
            else:
                offset, size, mask = entry
                raw = os.pread(fd, size, offset)
                if len(raw) != size:
                    raise ChunkReadError(
                        index.describe(pos),
                        ChunkCheckError(f"only {len(raw)} of its {size} bytes are in the file (cut short)"),
                    )
                try:
                    block = index.decode(raw, mask)
                except ChunkCheckError as exc:
                    raise ChunkReadError(index.describe(pos), exc) from None
            src, dst = [], []
            for s, l, c in zip(region, lo, index.chunk_shape):
                a, b = max(s.start, l), min(s.stop, l + c)
                src.append(slice(a - l, b - l))
                dst.append(slice(a - s.start, b - s.start))
            out[tuple(dst)] = block[tuple(src)]
    finally:
        os.close(fd)
    return out


def _decode_cf(values: np.ndarray, fills: Sequence[Any], scale: Any, offset: Any) -> np.ndarray:
    """CF decoding of one region; unpacked floats stay in their stored precision here."""
    packed = scale is not None or offset is not None or values.dtype.kind != "f"
    # the loader converts to float64 next; unpacked floats only get native byte order here
    x = values.astype(np.float64) if packed else values.astype(values.dtype.newbyteorder("="), copy=False)
    flat = values.reshape(-1)
    if flat.size:
        lo, hi = np.fmin.reduce(flat), np.fmax.reduce(flat)
        present = [f for f in fills if lo <= f <= hi]  # skip the compare when no fill can be there
        if present:
            if x is values:
                x = values.copy()  # never write into a buffer we did not allocate
            x[np.isin(values, present)] = np.nan
    if scale is not None:
        x *= scale
    if offset is not None:
        x += offset
    return x


def _read_error(path: object, varname: object, region: Region, exc: BaseException) -> Exception:
    """A damaged or truncated file found while reading values, as a SourceError naming it."""
    from ..errors import SourceError

    where = ", ".join(f"{s.start}:{s.stop}" for s in region)
    kind = "zlib.error" if isinstance(exc, zlib.error) else type(exc).__name__
    return SourceError(
        f"could not read the values [{where}] ({kind}: {exc}); the file is damaged or truncated",
        source=path,
        variable=varname,
        expected="a complete, readable file",
        fix="check the file with 'ncdump' and copy or download it again",
    )


def _chunk_error(path: object, varname: object, exc: ChunkReadError) -> Exception:
    """A stored chunk that failed a check, as a SourceError naming the file, variable and chunk."""
    from ..errors import SourceError

    what = "checksum" if isinstance(exc.cause, ChecksumError) else "check"
    return SourceError(
        f"{exc.where} fails its {what}: {exc.cause}; the file is damaged (changed since "
        "it was written), so its values there cannot be trusted",
        source=path,
        variable=varname,
        expected="every stored chunk as it was written",
        fix="copy or download the file again (check it with 'h5dump' or 'ncdump'); the other chunks read normally",
    )


def _read_block(
    index: ChunkIndex,
    fills: Sequence[Any],
    scale: Any,
    offset: Any,
    varname: str | None = None,
    block_info: dict[Any, Any] | None = None,
) -> np.ndarray:
    assert block_info is not None  # dask passes it to functions that take it
    loc = block_info[None]["array-location"]
    region = tuple(slice(a, b) for a, b in loc)
    try:
        stored = tuple(slice(min(s.start, n), min(s.stop, n)) for s, n in zip(region, index.shape))
        if stored != region:
            # beyond the variable's own extent (shorter than its unlimited dimension): never
            # written, so missing
            out = np.full(tuple(s.stop - s.start for s in region), np.nan)
            if all(s.stop > s.start for s in stored):
                out[tuple(slice(0, s.stop - s.start) for s in stored)] = _decode_cf(
                    read_region(index, stored), fills, scale, offset
                )
            return out
        return _decode_cf(read_region(index, region), fills, scale, offset)
    except ChunkReadError as exc:
        raise _chunk_error(index.path, varname, exc) from None
    except (OSError, zlib.error, ValueError, RuntimeError) as exc:
        raise _read_error(index.path, varname, region, exc) from None


class _Backend:
    """Holds a lazily read xarray Variable so that dask passes it to tasks as it is."""

    def __init__(self, variable: Any) -> None:
        self.variable = variable


def _read_backend_block(
    backend: _Backend, path: object, varname: str, block_info: dict[Any, Any] | None = None
) -> np.ndarray:
    assert block_info is not None
    loc = block_info[None]["array-location"]
    region = tuple(slice(a, b) for a, b in loc)
    try:
        return np.asarray(backend.variable[region].values)
    except (OSError, ValueError, RuntimeError, IndexError, KeyError) as exc:
        raise _read_error(path, varname, region, exc) from None


def stored_extent(path: str, varname: str) -> tuple[int, ...] | None:
    """The shape a NetCDF-4 variable was written to (its HDF5 extent), or None if unknown.

    A variable on an unlimited dimension may be written for fewer records than the
    dimension holds; the netCDF library pads the rest with the fill value on reading.

    Parameters
    ----------
    path : str
    varname : str

    Returns
    -------
    tuple of int or None
        None for NetCDF-3 or files h5py cannot read.

    Examples
    --------
    >>> from climwidgets.io.chunkreader import _example_file
    >>> path = _example_file()  # 4 x 6 float32, chunks 2 x 3, deflate + shuffle + Fletcher-32
    >>> stored_extent(path, "pr")
    (4, 6)
    """
    try:
        import h5py

        with h5py.File(path, "r") as f:
            d = f.get(varname)
            return tuple(d.shape) if isinstance(d, h5py.Dataset) else None
    except (ImportError, OSError, ValueError, KeyError, RuntimeError):
        return None  # NetCDF-3 or not HDF5: every variable has the dimensions' lengths


def _missing_beyond(block: np.ndarray, extent: Sequence[int], block_info: dict[Any, Any] | None = None) -> np.ndarray:
    assert block_info is not None
    """``block`` as floats, NaN where it lies beyond the variable's written extent."""
    loc = block_info[0]["array-location"]
    keep = tuple(slice(0, max(0, min(b, n) - a)) for (a, b), n in zip(loc, extent))
    out = np.full(block.shape, np.nan)
    out[keep] = block[keep]
    return out


def backend_reader(variable: Any, path: Any, varname: str, chunks: tuple[Any, ...], name: str) -> Any:
    """A dask array reading ``variable`` (lazy, from xarray's backend) in ``chunks``.

    Same as ``variable.chunk``, except that a failing read (damaged or truncated file)
    raises a :class:`~climwidgets.errors.SourceError` that names the file, and records a
    variable was never written for (beyond its own extent on an unlimited dimension) are
    missing rather than the padding the netCDF library reads there.

    Parameters
    ----------
    variable : xarray.Variable
        Lazily backed by xarray's netCDF4 backend.
    path : str
        The file (named in errors).
    varname : str
    chunks : tuple
        Dask chunk sizes per axis.
    name : str
        The dask array's name.

    Returns
    -------
    dask.array.Array

    Examples
    --------
    >>> import xarray as xr
    >>> from climwidgets.io.chunkreader import _example_file
    >>> path = _example_file()  # 4 x 6 float32, chunks 2 x 3, deflate + shuffle + Fletcher-32
    >>> ds = xr.open_dataset(path)
    >>> data = backend_reader(ds["pr"].variable, path, "pr", (2, 6), name="pr-example")
    >>> float(data.sum().compute())
    276.0
    >>> ds.close()
    """
    import dask.array as dsa

    normalized = dsa.core.normalize_chunks(chunks, variable.shape)  # type: ignore[no-untyped-call]
    data = dsa.map_blocks(  # type: ignore[no-untyped-call]
        _read_backend_block,
        _Backend(variable),
        path,
        varname,
        dtype=variable.dtype,
        chunks=normalized,
        name=name,
        meta=np.array((), dtype=variable.dtype),
    )
    extent = stored_extent(path, varname) if isinstance(path, str) else None
    if extent is not None and len(extent) == variable.ndim and tuple(extent) != tuple(variable.shape):
        data = dsa.map_blocks(  # type: ignore[no-untyped-call]
            _missing_beyond, data, extent, dtype=np.float64, name=f"{name}-written", meta=np.array((), dtype=np.float64)
        )
    return data


def direct_reader(
    path: str,
    varname: str,
    encoding: Mapping[str, Any],
    chunks: tuple[Any, ...],
    name: str,
    shape: Sequence[int] | None = None,
) -> Any:
    """A dask array of the decoded variable read chunk by chunk outside the HDF5 lock, or None.

    ``chunks`` are dask chunk sizes per dim (whole multiples of the stored chunks are
    best); ``encoding`` is xarray's encoding of the variable (fill values, scale, offset).
    ``shape`` is the shape the file declares (its dimensions' lengths); a variable stored
    shorter than its unlimited dimension reads as missing (NaN) beyond its own extent.

    Parameters
    ----------
    path : str
        A local NetCDF-4 file.
    varname : str
    encoding : mapping
        xarray's encoding of the variable.
    chunks : tuple
        Dask chunk sizes per axis.
    name : str
        The dask array's name.
    shape : sequence of int, optional
        The declared shape.

    Returns
    -------
    dask.array.Array or None
        None when the file, its filters or its layout are not ones this reader undoes
        (the caller then reads through the library).

    Examples
    --------
    >>> from climwidgets.io.chunkreader import _example_file
    >>> path = _example_file()  # 4 x 6 float32, chunks 2 x 3, deflate + shuffle + Fletcher-32
    >>> data = direct_reader(path, "pr", {}, (4, 3), name="pr-direct-example")
    >>> data.dtype, float(data.sum().compute())
    (dtype('float32'), 276.0)
    """
    if not isinstance(path, str) or not os.path.isfile(path):
        return None
    index = _build_index(path, varname)
    if index is None:
        return None
    import dask.array as dsa

    shape = tuple(index.shape if shape is None else shape)
    if len(shape) != len(index.shape) or any(n < s for n, s in zip(shape, index.shape)):
        return None  # a layout this reader does not know: the backend reads it
    fills = [v for k in ("_FillValue", "missing_value") if (v := encoding.get(k)) is not None]
    fills = [f for v in fills for f in np.atleast_1d(v)]
    scale, offset = encoding.get("scale_factor"), encoding.get("add_offset")
    normalized = dsa.core.normalize_chunks(chunks, shape)  # type: ignore[no-untyped-call]
    packed = scale is not None or offset is not None or index.dtype.kind != "f" or shape != index.shape
    out = np.dtype(np.float64) if packed else index.dtype.newbyteorder("=")
    return dsa.map_blocks(  # type: ignore[no-untyped-call]
        _read_block,
        index,
        fills,
        scale,
        offset,
        varname,
        dtype=out,
        chunks=normalized,
        name=name,
        meta=np.array((), dtype=out),
    )


class StoredValues:
    """A loaded variable's values as decoded from disk, before the conversion to mm per step.

    The loader leaves one on its DataArray (``encoding["stored_values"]``) so that a
    reduction can work in the stored precision (float32 stays float32) and convert only its
    small results (``compute/_fused.py``). It describes the DataArray only while that
    DataArray's dask array is still the one named ``name``: any later operation renames the
    dask array, and the record is then ignored.

    Parameters
    ----------
    name : str
        Dask name of the converted array the record belongs to.
    data : dask.array.Array
        Decoded stored values (fill values already NaN).
    factor : float or array
        Stored units to mm per step.
    mask_fill, guard : bool
        The loader's fill heuristics and negative guard.
    source, variable : object
        For messages.
    max_depth : float, optional
        The plausibility bound in mm per step.
    dims : list, optional
        The dims of ``data``.

    Examples
    --------
    >>> import copy
    >>> record = StoredValues("pr-abc", None, 1.0, False, True, "pr.nc", "pr")
    >>> copy.deepcopy(record) is record  # copying a DataArray never copies the graph
    True
    """

    def __init__(
        self,
        name: str,
        data: Any,
        factor: Any,
        mask_fill: bool,
        guard: bool,
        source: object,
        variable: object,
        max_depth: float | None = None,
        dims: list[Any] | None = None,
    ) -> None:
        self.name = name  # dask name of the converted array this record belongs to
        self.data = data  # dask array of decoded stored values (fill values already NaN)
        self.factor = factor  # stored units -> mm per step
        self.mask_fill, self.guard = mask_fill, guard  # the loader's fill heuristics and negative guard
        self.source, self.variable = source, variable
        self.max_depth = max_depth  # the loader's plausibility bound in mm per step (None: off)
        self.dims = dims  # the dims of ``data``, to say where a bound is passed

    def __copy__(self) -> StoredValues:
        return self

    def __deepcopy__(self, memo: object) -> StoredValues:
        return self  # immutable record; copying a DataArray must not copy a dask graph


def _store_access(
    store: Any,
) -> tuple[Callable[[str], bytes], Callable[[str], Iterator[str]]] | None:
    """``(read(key) -> bytes, keys(prefix) -> relative keys)`` for a Zarr store, or None.

    Local folders are listed with ``os.walk``, fsspec mappers and URLs with their file
    system's ``find``: a listing of names, no chunk is read.
    """
    if isinstance(store, str) and "://" not in store and os.path.isdir(store):
        root = store

        def read(key: str) -> bytes:
            with open(os.path.join(root, key), "rb") as fh:
                return fh.read()

        def keys(prefix: str) -> Iterator[str]:
            base = os.path.join(root, prefix)
            for folder, _, files in os.walk(base):
                rel = os.path.relpath(folder, base)
                for f in files:
                    yield f if rel == "." else f"{rel.replace(os.sep, '/')}/{f}"

        return read, keys
    try:
        import fsspec
    except ImportError:  # pragma: no cover - fsspec comes with xarray's zarr support
        return None
    mapper = fsspec.get_mapper(store) if isinstance(store, str) else store
    fs, root_name = getattr(mapper, "fs", None), getattr(mapper, "root", None)
    if fs is None or root_name is None:
        return None
    root = str(root_name).rstrip("/")

    def read_fs(key: str) -> bytes:
        return bytes(mapper[key])

    def keys_fs(prefix: str) -> Iterator[str]:
        base = f"{root}/{prefix}".rstrip("/")
        for p in fs.find(base):
            p = str(p)
            yield p[len(base) + 1 :] if p.startswith(base + "/") else p.rsplit("/", 1)[-1]

    return read_fs, keys_fs


def zarr_stored_chunks(
    store: Any, varname: str
) -> tuple[tuple[int, ...], tuple[int, ...], set[tuple[int, ...]]] | None:
    """``(grid shape, chunk shape, set of stored chunk positions)`` of a Zarr array, from names
    only; or None when the store or its layout is not one this reads.

    Zarr reads a chunk that is not in the store as the array's fill value, so a chunk lost in
    a copy looks like missing data. Comparing the listed chunk names with the chunk grid the
    metadata declares finds such holes without reading any data. Zarr v2 and v3 (default and
    "v2" chunk key encodings) are understood; with sharding the shards are listed.

    Parameters
    ----------
    store : str or fsspec mapper
        A Zarr store.
    varname : str

    Returns
    -------
    tuple or None
        ``(grid shape, chunk shape, set of stored chunk positions)``.

    References
    ----------
    Zarr storage specification, versions 2 and 3 (zarr-specs.readthedocs.io).

    Examples
    --------
    >>> import os, tempfile, numpy as np, xarray as xr
    >>> store = os.path.join(tempfile.mkdtemp(), "pr.zarr")
    >>> ds = xr.Dataset({"pr": (("time", "x"), np.ones((4, 2)))}).chunk({"time": 2})
    >>> _ = ds.to_zarr(store, zarr_format=2)
    >>> grid, chunk, present = zarr_stored_chunks(store, "pr")
    >>> grid, chunk, sorted(present)
    ((2, 1), (2, 2), [(0, 0), (1, 0)])
    """
    import json

    access = _store_access(store)
    if access is None:
        return None
    read, keys = access
    meta = None
    for name in ("zarr.json", ".zarray"):
        try:
            meta = json.loads(read(f"{varname}/{name}"))
            break
        except (OSError, KeyError, ValueError):
            continue
    if not isinstance(meta, dict):
        return None
    try:
        shape = [int(n) for n in meta["shape"]]
        if meta.get("zarr_format") == 3:
            grid = meta["chunk_grid"]
            if grid.get("name") != "regular":
                return None
            chunk = [int(n) for n in grid["configuration"]["chunk_shape"]]
            enc = meta.get("chunk_key_encoding", {"name": "default"})
            sep = enc.get("configuration", {}).get("separator", "/" if enc.get("name") == "default" else ".")
            prefix = f"c{sep}" if enc.get("name") == "default" else ""
        else:
            chunk = [int(n) for n in meta["chunks"]]
            sep, prefix = meta.get("dimension_separator") or ".", ""
    except (KeyError, TypeError, ValueError):
        return None
    if len(chunk) != len(shape) or not shape:
        return None
    grid_shape = tuple(-(-s // c) if c else 0 for s, c in zip(shape, chunk))
    present: set[tuple[int, ...]] = set()
    for key in keys(varname):
        if not key.startswith(prefix) or key in ("zarr.json", ".zarray", ".zattrs"):
            continue
        parts = key[len(prefix) :].split(sep)
        if len(parts) == len(shape) and all(p.isdigit() for p in parts):
            present.add(tuple(int(p) for p in parts))
    return grid_shape, tuple(chunk), present


def _example_file() -> str:
    """A small NetCDF-4 file for the examples: ``pr`` 4 x 6 float32 (values 0 … 23), chunks
    2 x 3, deflate + shuffle + Fletcher-32, in a new temporary folder."""
    import tempfile

    import xarray as xr

    path = os.path.join(tempfile.mkdtemp(), "example.nc")
    values = np.arange(24, dtype=np.float32).reshape(4, 6)
    enc = {"pr": {"zlib": True, "shuffle": True, "fletcher32": True, "chunksizes": (2, 3), "_FillValue": None}}
    xr.Dataset({"pr": (("time", "x"), values)}).to_netcdf(path, engine="netcdf4", encoding=enc)
    return path
