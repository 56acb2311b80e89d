"""Atomic output: nothing partial is left, the previous file survives a failure, permissions are usual."""

import os
import stat

import pytest

from waveforms.atomic import atomic_path, write_text


def test_failure_keeps_previous_file_and_leaves_no_temporary(tmp_path):
    target = tmp_path / "out.json"
    target.write_text("old")
    with pytest.raises(RuntimeError, match="boom"):
        with atomic_path(target) as tmp:
            tmp.write_text("half")
            raise RuntimeError("boom")
    assert target.read_text() == "old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out.json"]


def test_written_file_gets_umask_permissions(tmp_path):
    # Common practice, no source: new files are 0666 less the umask, not mkstemp's 0600.
    old = os.umask(0o022)
    try:
        write_text(tmp_path / "a.txt", "x")
    finally:
        os.umask(old)
    mode = stat.S_IMODE((tmp_path / "a.txt").stat().st_mode)
    assert mode == 0o644
