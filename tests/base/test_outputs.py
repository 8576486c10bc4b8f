"""Output folders: a user's files are never overwritten, nothing half-written, errors name the folder and reason."""

import json
import os

import pytest

from stillhook.errors import InputFileError
from stillhook.outputs import MARKER, check_out_dir, write_files


def test_new_folder_gets_the_files_and_the_marker(tmp_path):
    out = tmp_path / "a" / "b"
    written = write_files(out, {"x.txt": "1", "sub/y.bin": b"\x00"})
    assert [p.read_bytes() for p in written] == [b"1", b"\x00"]
    assert json.loads((out / MARKER).read_text())["files"] == ["sub/y.bin", "x.txt"]
    assert [p.name for p in tmp_path.iterdir()] == ["a"]  # no temporary folder left beside it


def test_non_empty_folder_is_refused_without_force(tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "report.html").write_text("my own notes")
    with pytest.raises(InputFileError, match="is not empty.*--force"):
        check_out_dir(out)
    with pytest.raises(InputFileError, match="not written by stillhook"):
        write_files(out, {"report.html": "new"}, force=True)
    assert (out / "report.html").read_text() == "my own notes"


def test_force_replaces_only_what_stillhook_wrote(tmp_path):
    out = tmp_path / "out"
    write_files(out, {"old.txt": "old", "keep.txt": "v1"})
    (out / "mine.txt").write_text("user")
    write_files(out, {"keep.txt": "v2"}, force=True)
    assert sorted(p.name for p in out.iterdir()) == sorted([MARKER, "keep.txt", "mine.txt"])
    assert (out / "keep.txt").read_text() == "v2" and (out / "mine.txt").read_text() == "user"
    with pytest.raises(InputFileError, match="did not write.*mine.txt"):
        write_files(out, {"mine.txt": "overwrite?"}, force=True)
    assert (out / "mine.txt").read_text() == "user"


def test_a_failure_while_writing_leaves_nothing(tmp_path):
    out = tmp_path / "out"
    with pytest.raises(ValueError):
        write_files(out, {"ok.txt": "1", "../escape.txt": "2"})
    assert list(tmp_path.iterdir()) == []


@pytest.mark.skipif(not os.path.isdir("/proc/self"), reason="needs Linux /proc")
def test_unwritable_folder_is_named_with_the_real_reason():
    with pytest.raises(InputFileError) as info:
        check_out_dir("/proc/x")
    msg = str(info.value)
    assert msg.startswith("output folder '/proc/x' cannot be created or written") and "'/proc'" in msg


def test_file_in_the_way_is_refused(tmp_path):
    f = tmp_path / "f"
    f.write_text("x")
    with pytest.raises(InputFileError, match="is not a folder"):
        check_out_dir(f)
