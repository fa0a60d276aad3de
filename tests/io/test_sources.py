"""fsspec sources, offline: fsspec's memory filesystem and the local filesystem (file://)."""

import importlib.metadata
import uuid

import fsspec
import numpy as np
import pytest

import climwidgets as cw
from climwidgets.errors import SourceError

from .conftest import checksum, write_cf

DAY = 86400.0


@pytest.fixture
def memfs():
    fs = fsspec.filesystem("memory")
    root = f"/cw-{uuid.uuid4().hex[:8]}"
    yield fs, root
    fs.rm(root, recursive=True)


def _dataset(tmp_path, n=6):
    import xarray as xr

    path = write_cf(
        tmp_path / "src.nc", np.full((n, 3, 4), 2e-5), units="kg m-2 s-1", standard_name="precipitation_flux"
    )
    return path, xr.open_dataset(path, decode_times=False).load()


def test_zarr_in_memory_filesystem_by_url_and_mapper(tmp_path, memfs):
    fs, root = memfs
    path, ds = _dataset(tmp_path)
    url = f"memory://{root}/pr.zarr"
    ds.to_zarr(fsspec.get_mapper(url), mode="w", zarr_format=2)
    by_url = cw.open_precip(url)
    by_mapper = cw.open_precip(fsspec.get_mapper(url))
    expected = cw.open_precip(path)
    np.testing.assert_allclose(by_url.values, 2e-5 * DAY)  # hand-computed: rate x seconds per day
    np.testing.assert_allclose(by_mapper.values, expected.values)
    assert by_url.attrs["sources"] == url and by_mapper.attrs["sources"].endswith("pr.zarr")


def test_netcdf4_in_memory_filesystem(tmp_path, memfs):
    fs, root = memfs
    path, _ = _dataset(tmp_path)
    with open(path, "rb") as fh:
        fs.pipe(f"{root}/pr.nc", fh.read())
    pr = cw.open_precip(f"memory://{root}/pr.nc")
    np.testing.assert_allclose(pr.values, cw.open_precip(path).values)


def test_file_url_and_file_glob_are_plain_paths(tmp_path):
    a = write_cf(tmp_path / "a.nc", start="2001-01-01", periods=3)
    write_cf(tmp_path / "b.nc", start="2001-01-04", periods=3)
    before = checksum(a)
    one = cw.open_precip(f"file://{a}")
    assert one.attrs["sources"] == a and "fsspec" not in one.attrs["reader"]  # read as a local file
    both = cw.open_precip(f"file://{tmp_path}/*.nc")
    assert both.sizes["time"] == 6
    assert checksum(a) == before


def test_opening_reads_no_data_values(tmp_path, memfs):
    """Only metadata and coordinates are read at open: the data chunks may be absent until
    the values are asked for (validate=False skips the value checks, which do read)."""
    fs, root = memfs
    _, ds = _dataset(tmp_path)
    url = f"memory://{root}/lazy.zarr"
    ds.to_zarr(fsspec.get_mapper(url), mode="w", zarr_format=2)
    for key in fs.ls(f"{root}/lazy.zarr/pr", detail=False):
        if not key.rsplit("/", 1)[-1].startswith("."):
            fs.rm(key)  # remove the data chunks, keep the metadata
    pr = cw.open_precip(url, validate=False)
    assert pr.sizes["time"] == 6
    values = pr.values  # missing chunks read as the fill value: here, only now
    assert np.isnan(values).all()


def test_fsspec_errors_say_what_to_do(memfs):
    fs, root = memfs
    with pytest.raises(SourceError, match="does not exist"):
        cw.open_precip(f"memory://{root}/absent.zarr")
    fs.pipe(f"{root}/junk.nc", b"not a netcdf file")
    with pytest.raises(SourceError, match="could not be read as NetCDF-4 or Zarr through fsspec"):
        cw.open_precip(f"memory://{root}/junk.nc")
    with pytest.raises(SourceError, match="pattern matches no files"):
        cw.open_precip(f"memory://{root}/*.nc4")
    with pytest.raises(SourceError, match="cloud"):
        cw.open_precip("nosuchprotocol://bucket/pr.zarr")


def test_glob_in_memory_filesystem_combines_files(tmp_path, memfs):
    fs, root = memfs
    for k, start in enumerate(("2001-01-01", "2001-01-04")):
        p = write_cf(tmp_path / f"p{k}.nc", start=start, periods=3)
        with open(p, "rb") as fh:
            fs.pipe(f"{root}/p{k}.nc", fh.read())
    pr = cw.open_precip(f"memory://{root}/p*.nc")
    assert pr.sizes["time"] == 6 and pr.attrs["sources"].count("memory://") == 2


# Writing a Zarr v3 store needs zarr-python 3; with zarr 2 (allowed by the declared minimum)
# only the v2 layout can be made here.
_ZARR3 = pytest.mark.skipif(
    int(importlib.metadata.version("zarr").split(".")[0]) < 3, reason="zarr-python 2 cannot write a Zarr v3 store"
)


@pytest.mark.parametrize("zarr_format", [2, pytest.param(3, marks=_ZARR3)])
def test_zarr_chunk_missing_from_a_store_is_found_by_listing(tmp_path, memfs, zarr_format):
    fs, root = memfs
    path, ds = _dataset(tmp_path)
    url = f"memory://{root}/cut{zarr_format}.zarr"
    mapper = fsspec.get_mapper(url)
    ds.chunk({"time": 2}).to_zarr(mapper, mode="w", zarr_format=zarr_format, consolidated=False)
    lost = "pr/1.0.0" if zarr_format == 2 else "pr/c/1/0/0"
    assert lost in mapper
    del mapper[lost]  # as an interrupted copy leaves it
    for source in (url, fsspec.get_mapper(url)):
        with pytest.raises(SourceError, match=r"1 of 3 chunks of 'pr' missing from the store .*time steps 2\.\.3"):
            cw.open_precip(source)
