"""Tests of climwidgets/atomic.py: the one atomic writer behind every output.

What "atomic" means here is the POSIX guarantee of rename(2): replacing a file by
``os.replace`` within one folder is all-or-nothing for readers (POSIX.1-2017, rename()).
"""

import errno
import os
import stat

import pytest

from climwidgets.atomic import OutputExistsError, atomic_write, atomic_write_file, check_target
from climwidgets.errors import InputError, ParameterError


def _leftovers(folder):
    return sorted(p.name for p in folder.iterdir() if p.name.endswith(".part"))


def test_writes_through_a_temporary_file_in_the_same_folder(tmp_path):
    seen = []

    def write(tmp):
        seen.append(tmp)
        tmp.write_text("new")

    out = atomic_write(tmp_path / "a.txt", False, write, "test output")
    assert out == tmp_path / "a.txt" and out.read_text() == "new"
    assert seen[0].parent == tmp_path and seen[0].name.startswith(".a.txt.") and seen[0].name.endswith(".part")
    assert _leftovers(tmp_path) == []


def test_refuses_to_overwrite_unless_asked(tmp_path):
    target = tmp_path / "a.txt"
    target.write_text("old")
    with pytest.raises(OutputExistsError) as info:
        atomic_write(target, False, lambda tmp: tmp.write_text("new"), "test output")
    assert isinstance(info.value, InputError) and isinstance(info.value, FileExistsError)
    assert "overwrite=True" in str(info.value)
    assert target.read_text() == "old"
    atomic_write(target, True, lambda tmp: tmp.write_text("new"), "test output")
    assert target.read_text() == "new"


def test_a_failed_write_keeps_the_previous_file_and_leaves_nothing(tmp_path):
    target = tmp_path / "a.txt"
    target.write_text("old")

    def fails(tmp):
        tmp.write_text("half")
        raise RuntimeError("boom")

    with pytest.raises(RuntimeError, match="boom"):
        atomic_write(target, True, fails, "test output")
    assert target.read_text() == "old" and _leftovers(tmp_path) == []


def test_os_errors_keep_their_type_and_errno_and_name_the_output(tmp_path):
    def disk_full(tmp):
        raise OSError(errno.ENOSPC, "No space left on device")

    with pytest.raises(OSError) as info:
        atomic_write(tmp_path / "b.nc", False, disk_full, "the NetCDF export")
    assert info.value.errno == errno.ENOSPC
    assert "the NetCDF export could not be written" in str(info.value) and "untouched" in str(info.value)
    assert _leftovers(tmp_path) == []


def test_a_file_that_appears_while_writing_is_not_replaced(tmp_path):
    target = tmp_path / "race.txt"

    def write(tmp):
        tmp.write_text("ours")
        target.write_text("theirs")  # another process wins the race

    with pytest.raises(OutputExistsError):
        atomic_write(target, False, write, "test output")
    assert target.read_text() == "theirs" and _leftovers(tmp_path) == []


def test_replacing_keeps_the_file_mode(tmp_path):
    target = tmp_path / "m.txt"
    target.write_text("old")
    os.chmod(target, 0o640)
    atomic_write(target, True, lambda tmp: tmp.write_text("new"), "test output")
    assert stat.S_IMODE(target.stat().st_mode) == 0o640


def test_a_new_file_gets_the_umask_mode(tmp_path):
    mask = os.umask(0o027)
    try:
        out = atomic_write(tmp_path / "n.txt", False, lambda tmp: tmp.write_text("x"), "test output")
    finally:
        os.umask(mask)
    assert stat.S_IMODE(out.stat().st_mode) == 0o666 & ~0o027  # what open(2) would give


def test_atomic_write_file_hands_an_open_file(tmp_path):
    out = atomic_write_file(tmp_path / "c.bin", lambda fh: fh.write(b"\x00\x01"))
    assert out.read_bytes() == b"\x00\x01"
    out = atomic_write_file(tmp_path / "c.bin", lambda fh: fh.write("text"), mode="w")  # overwrite=True default
    assert out.read_text() == "text"


@pytest.mark.parametrize(
    "path, overwrite, words",
    [
        ("", False, "not a file path"),
        (None, False, "not a file path"),
        ("x.txt", "yes", "not True or False"),
    ],
)
def test_check_target_rejects_bad_arguments(tmp_path, path, overwrite, words):
    with pytest.raises(ParameterError, match=words):
        check_target(path if path in ("", None) else tmp_path / path, overwrite, "test output")


def test_check_target_rejects_folders_and_missing_parents(tmp_path):
    with pytest.raises(ParameterError, match="is a folder"):
        check_target(tmp_path, True, "test output")
    with pytest.raises(ParameterError, match="does not exist"):
        check_target(tmp_path / "missing" / "x.txt", True, "test output")
