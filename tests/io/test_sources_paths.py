"""Tests of climwidgets/io/sources.py: from what the user passed to opened datasets.

The truncation check reads the classic NetCDF header as laid out in the NetCDF Classic and
64-bit Offset Format specification (Unidata, "The NetCDF Classic Format Specification",
NetCDF User's Guide, appendix on file formats): files are written here by the netCDF4
library itself, the reference implementation, in each classic variant.
"""

import os

import netCDF4
import numpy as np
import pytest

from climwidgets.errors import SourceError
from climwidgets.io import sources


def _classic(path, fmt, nrec=5):
    with netCDF4.Dataset(path, "w", format=fmt) as nc:
        nc.createDimension("time", None)
        nc.createDimension("lat", 3)
        nc.setncattr("title", "sources test")
        lat = nc.createVariable("lat", "f8", ("lat",))
        lat[:] = [1.0, 2.0, 3.0]
        pr = nc.createVariable("pr", "f4", ("time", "lat"))
        pr.units = "mm"
        pr[:] = np.arange(nrec * 3, dtype="f4").reshape(nrec, 3)
    return path


@pytest.mark.parametrize(
    "text, url",
    [
        ("https://example.invalid/data.nc", True),
        ("HTTP://example.invalid/x", True),
        ("dap4://example.invalid/x", True),
        ("data/pr.nc", False),
        ("/tmp/https.nc", False),
    ],
)
def test_is_url(text, url):
    assert sources.is_url(text) is url


def test_is_zarr_by_suffix_or_metadata(tmp_path):
    assert sources.is_zarr(tmp_path / "store.zarr")
    for marker in (".zgroup", "zarr.json"):  # Zarr v2 and v3 group metadata
        store = tmp_path / f"store_{marker.strip('.')}"
        store.mkdir()
        (store / marker).write_text("{}")
        assert sources.is_zarr(store)
    plain = tmp_path / "plain"
    plain.mkdir()
    assert not sources.is_zarr(plain) and not sources.is_zarr(tmp_path / "a.nc")


def test_resolve_paths_globs_and_lists(tmp_path):
    for name in ("pr_2002.nc", "pr_2001.nc", "other.txt"):
        (tmp_path / name).write_bytes(b"")
    found = sources.resolve(str(tmp_path / "pr_*.nc"))
    assert found == [str(tmp_path / "pr_2001.nc"), str(tmp_path / "pr_2002.nc")]  # sorted by name
    listed = sources.resolve([tmp_path / "pr_2002.nc", str(tmp_path / "pr_2001.nc")])
    assert listed == [str(tmp_path / "pr_2002.nc"), str(tmp_path / "pr_2001.nc")]  # order kept
    assert sources.resolve("https://example.invalid/x.nc") == ["https://example.invalid/x.nc"]


@pytest.mark.parametrize(
    "make, words",
    [
        (lambda d: [], "empty list"),
        (lambda d: str(d / "none_*.nc"), "matches no files"),
        (lambda d: str(d / "missing.nc"), "does not exist"),
        (lambda d: str(d), "is a folder but not a Zarr store"),
    ],
)
def test_resolve_refuses_with_a_fix(tmp_path, make, words):
    with pytest.raises(SourceError, match=words) as info:
        sources.resolve(make(tmp_path))
    assert "Fix:" in str(info.value)


@pytest.mark.parametrize("fmt", ["NETCDF3_CLASSIC", "NETCDF3_64BIT_OFFSET", "NETCDF3_64BIT_DATA"])
def test_netcdf3_min_size_is_a_lower_bound_of_complete_files(tmp_path, fmt):
    path = _classic(tmp_path / "a.nc", fmt)
    head = path.read_bytes()
    need = sources.netcdf3_min_size(head)
    assert need is not None and 0 < need <= len(head)
    # the record data (5 records of 3 float32 values) lie inside the bound
    assert need >= 5 * 3 * 4


def test_netcdf3_min_size_ignores_other_formats(tmp_path):
    assert sources.netcdf3_min_size(b"\x89HDF\r\n\x1a\n" + bytes(32)) is None  # NetCDF-4 / HDF5 signature
    assert sources.netcdf3_min_size(b"CDF") is None  # too short to tell


def test_open_raw_refuses_a_truncated_classic_file(tmp_path):
    path = _classic(tmp_path / "cut.nc", "NETCDF3_CLASSIC", nrec=50)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) - 100])
    with pytest.raises(SourceError, match="truncated") as info:
        sources.open_raw(str(path))
    assert str(path) in str(info.value)


def test_open_raw_is_lazy_and_leaves_times_undecoded(tmp_path):
    path = tmp_path / "t.nc"
    with netCDF4.Dataset(path, "w", format="NETCDF4") as nc:
        nc.createDimension("time", 2)
        t = nc.createVariable("time", "f8", ("time",))
        t.units = "days since 2001-01-01"
        t[:] = [0.0, 1.0]
    before = os.path.getmtime(path)
    ds = sources.open_raw(str(path))
    try:
        assert ds["time"].dtype == np.float64 and ds["time"].attrs["units"] == "days since 2001-01-01"
    finally:
        ds.close()
    assert os.path.getmtime(path) == before  # opened for reading only


# Kinds of file from POSIX stat(2) (S_ISFIFO, S_ISCHR) and link loops from ELOOP
# (POSIX.1-2017, <errno.h>): refused before anything opens them, so nothing can block.
def test_fifo_is_refused_at_once(tmp_path):
    fifo = tmp_path / "pr.nc"
    os.mkfifo(fifo)
    with pytest.raises(SourceError, match=r"named pipe \(FIFO\), not a regular file") as err:
        sources.resolve(str(fifo))
    assert str(fifo) in str(err.value)


def test_fifo_inside_a_glob_is_refused(tmp_path):
    _classic(tmp_path / "a.nc", "NETCDF3_CLASSIC")
    os.mkfifo(tmp_path / "b.nc")
    with pytest.raises(SourceError, match="b.nc: is a named pipe"):
        sources.resolve(str(tmp_path / "*.nc"))


def test_character_device_is_refused():
    with pytest.raises(SourceError, match="is a character device"):
        sources.resolve("/dev/zero")


def test_symlink_loop_is_named_as_such(tmp_path):
    link = tmp_path / "loop.nc"
    link.symlink_to(link)
    with pytest.raises(SourceError, match="symbolic link that loops"):
        sources.resolve(str(link))


def test_dangling_symlink_names_its_target(tmp_path):
    link = tmp_path / "pr.nc"
    link.symlink_to(tmp_path / "gone.nc")
    with pytest.raises(SourceError, match="gone.nc', which does not exist"):
        sources.resolve(str(link))


@pytest.mark.skipif(os.geteuid() == 0, reason="root reads files whatever their mode")
def test_unreadable_file_says_permission_denied(tmp_path):
    path = _classic(tmp_path / "pr.nc", "NETCDF3_CLASSIC")
    path.chmod(0)
    try:
        with pytest.raises(SourceError, match="permission denied"):
            sources.resolve(str(path))
    finally:
        path.chmod(0o644)
