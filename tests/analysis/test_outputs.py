"""Tests of ringprint.analysis.outputs: output-dir checks, atomic writes, run.log.

These are file-system behaviour tests, not physics: no outside reference applies.
"""

from __future__ import annotations

import logging
import os
import tempfile

import numpy as np
import pytest

from ringprint.analysis import outputs
from ringprint.analysis.outputs import (TEMP_MARKER, RunLogHandler, atomic_path,
                                        atomic_write_bytes, atomic_write_text,
                                        prepare_output_dir, write_run_log)
from ringprint.errors import RingprintError


def _listing(directory):
    return sorted(os.listdir(directory))


def _assert_no_temp(directory):
    left = [name for name in os.listdir(directory) if TEMP_MARKER in name]
    assert left == [], f"temporary files left behind: {left}"


# --- output directory -------------------------------------------------------------

def test_prepare_creates_missing_nested_dir(tmp_path):
    target = tmp_path / "a" / "b" / "results"
    assert prepare_output_dir(target) == target
    assert target.is_dir()
    assert _listing(target) == []  # the write probe is gone


def test_prepare_accepts_existing_dir_and_keeps_its_files(tmp_path):
    (tmp_path / "keep.txt").write_text("x")
    prepare_output_dir(tmp_path)
    assert _listing(tmp_path) == ["keep.txt"]


def test_prepare_refuses_a_file(tmp_path):
    f = tmp_path / "results"
    f.write_text("I am a file")
    with pytest.raises(RingprintError) as err:
        prepare_output_dir(f)
    msg = str(err.value)
    assert str(f) in msg and "--out" in msg and "\n" not in msg
    assert f.read_text() == "I am a file"


def test_prepare_refuses_a_dir_under_a_file(tmp_path):
    f = tmp_path / "blocker"
    f.write_text("")
    with pytest.raises(RingprintError, match="cannot create output directory") as err:
        prepare_output_dir(f / "sub")
    assert str(f / "sub") in str(err.value)


def test_prepare_refuses_unwritable_dir_reported_by_os(tmp_path, monkeypatch):
    """The OS refusing a file in the directory becomes a one-line RingprintError.
    (Simulated: as root, permission bits do not stop writes.)"""
    def refuse(*args, **kwargs):
        raise PermissionError(13, "Permission denied")
    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    with pytest.raises(RingprintError, match="not writable") as err:
        prepare_output_dir(tmp_path)
    assert str(tmp_path) in str(err.value) and "\n" not in str(err.value)


@pytest.mark.skipif(os.geteuid() == 0, reason="root ignores permission bits")
def test_prepare_refuses_read_only_dir(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    ro.chmod(0o555)
    try:
        with pytest.raises(RingprintError, match="not writable"):
            prepare_output_dir(ro)
    finally:
        ro.chmod(0o755)


# --- atomic writes ----------------------------------------------------------------

def test_atomic_write_text_and_bytes(tmp_path):
    p = atomic_write_text(tmp_path / "a.txt", "héllo\nworld\n")
    assert p.read_text(encoding="utf-8") == "héllo\nworld\n"
    data = bytes(range(256)) * 3
    q = atomic_write_bytes(tmp_path / "b.bin", data)
    assert q.read_bytes() == data
    assert _listing(tmp_path) == ["a.txt", "b.bin"]


def test_atomic_write_has_normal_permissions(tmp_path):
    """mkstemp makes 0600 files; the result must follow the umask like open() does."""
    old = os.umask(0o022)
    try:
        p = atomic_write_text(tmp_path / "perm.txt", "x")
    finally:
        os.umask(old)
    assert (p.stat().st_mode & 0o777) == 0o644


def test_atomic_write_replaces_existing_file(tmp_path):
    p = tmp_path / "modes.json"
    p.write_text("old")
    atomic_write_text(p, "new")
    assert p.read_text() == "new"
    _assert_no_temp(tmp_path)


def test_exception_mid_write_leaves_no_partial_and_no_temp(tmp_path):
    final = tmp_path / "fields.h5"
    with pytest.raises(RuntimeError, match="disk full, pretend"):
        with atomic_path(final) as tmp:
            assert tmp.parent == tmp_path and tmp.exists()
            with open(tmp, "wb") as fh:
                fh.write(b"half of a file")
                raise RuntimeError("disk full, pretend")
    assert _listing(tmp_path) == []


def test_exception_mid_write_keeps_old_complete_file(tmp_path):
    final = tmp_path / "modes.csv"
    final.write_text("complete old content\n")
    with pytest.raises(ValueError):
        with atomic_path(final) as tmp:
            tmp.write_text("partial")
            raise ValueError("writer failed")
    assert final.read_text() == "complete old content\n"
    assert _listing(tmp_path) == ["modes.csv"]


def test_atomic_path_keeps_suffix_for_writers_that_pick_format_by_name(tmp_path):
    """matplotlib chooses the format from the extension of the path it is given."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(1, 1))
    fig.add_subplot().plot([0, 1], [0, 1])
    with atomic_path(tmp_path / "picture.png") as tmp:
        assert tmp.suffix == ".png" and tmp.name.startswith(".") and TEMP_MARKER in tmp.name
        fig.savefig(tmp)
    assert (tmp_path / "picture.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    _assert_no_temp(tmp_path)


def test_atomic_path_works_for_h5py(tmp_path):
    h5py = pytest.importorskip("h5py")
    with atomic_path(tmp_path / "fields.h5") as tmp:
        with h5py.File(tmp, "w") as f:
            f["ex"] = np.arange(6.0).reshape(2, 3)
    with h5py.File(tmp_path / "fields.h5", "r") as f:
        np.testing.assert_array_equal(f["ex"][...], np.arange(6.0).reshape(2, 3))
    assert _listing(tmp_path) == ["fields.h5"]


def test_rename_onto_a_directory_is_a_ringprint_error_and_cleans_up(tmp_path):
    (tmp_path / "report.html").mkdir()
    with pytest.raises(RingprintError, match="report.html"):
        atomic_write_text(tmp_path / "report.html", "<html></html>")
    _assert_no_temp(tmp_path)


def test_write_into_missing_dir_is_a_ringprint_error(tmp_path):
    with pytest.raises(RingprintError, match="cannot write in directory"):
        atomic_write_text(tmp_path / "nope" / "x.txt", "x")


# --- run.log ----------------------------------------------------------------------

def test_write_run_log_one_entry_per_line(tmp_path):
    p = write_run_log(tmp_path, ["start", "two\nlines", "end"])
    assert p == tmp_path / "run.log"
    assert p.read_text().splitlines() == ["start", "two | lines", "end"]
    assert write_run_log(tmp_path / "other.log", "just one").read_text() == "just one\n"


def test_run_log_handler_keeps_file_complete(tmp_path):
    logger = logging.getLogger("ringprint.test_outputs")
    logger.setLevel(logging.INFO)
    logger.propagate = False
    handler = RunLogHandler(tmp_path, interval_s=3600.0)
    logger.addHandler(handler)
    try:
        logger.info("first info")  # the first record is written at once
        assert "first info" in (tmp_path / "run.log").read_text()
        logger.info("second info")  # within the interval: held in memory
        assert "second info" not in (tmp_path / "run.log").read_text()
        logger.warning("a warning\nwith a second line")  # warnings are written at once
        text = (tmp_path / "run.log").read_text()
        assert "second info" in text and "a warning | with a second line" in text
        logger.info("last info")
    finally:
        logger.removeHandler(handler)
        handler.close()
    lines = (tmp_path / "run.log").read_text().splitlines()
    assert len(lines) == 4
    assert lines[2].split()[2] == "WARNING" and lines[3].endswith("last info")
    _assert_no_temp(tmp_path)


def test_run_log_handler_needs_an_existing_directory(tmp_path):
    with pytest.raises(RingprintError, match="does not exist"):
        RunLogHandler(tmp_path / "not-yet" / "run.log")


def test_umask_reader_matches_os():
    old = os.umask(0o027)
    try:
        assert outputs._current_umask() == 0o027
    finally:
        os.umask(old)
