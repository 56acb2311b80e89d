"""Batch fault tests (issue 20): SIGTERM, SIGKILL of the main process, an output that cannot be written.

Each run is a real `motor-waveforms batch` process.  Checked: the exit code,
parseable outputs (summary.csv, manifest JSON strict), the captures not
reached listed as not analysed, the lock released, no worker left alive, and
a rerun whose summary equals that of an uninterrupted run.  The package's
own rules: no external source.
"""

from __future__ import annotations

import json
import os
import resource
import signal
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pytest

from _batch_support import make_capture
from waveforms import batch

REPO = Path(__file__).resolve().parent.parent
PLUGIN = "_batch_support"
#: Columns that differ between two runs of the same work (timings, where the worker ran).
VOLATILE = ["elapsed_s"]


def _archive(root: Path, n: int = 3) -> None:
    for i in range(n):
        make_capture(root / "site" / f"logger{i:02d}.h5", i_rms=(20.0 + i, 20.0 + i, 19.0 + i), seconds=1.0)


def _recipe(tmp_path: Path, flag: Path, pidfile: Path) -> Path:
    p = tmp_path / "recipe.toml"
    p.write_text(f'[recipe]\nname = "faults"\nstages = ["import", "wait", "measure", "detect", "report"]\n'
                 f'plugins = ["{PLUGIN}"]\n[report]\nhtml = false\n'
                 f'[wait]\nseconds = 120.0\nonly_if_name_contains = "logger02"\nwhile_file_exists = "{flag}"\n',
                 encoding="utf-8")
    pidfile.write_text("")
    return p


def _env() -> dict[str, str]:
    return {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), str(REPO / "tests")])}


def _cmd(tmp_path: Path, rec: Path, out: Path) -> list[str]:
    return [sys.executable, "-c", "from waveforms.cli import main; main()", "batch", str(tmp_path / "in"),
            "--out", str(out), "--recipe", str(rec), "--jobs", "1", "--quiet"]


def _start(tmp_path: Path, rec: Path, out: Path, **kw) -> subprocess.Popen:
    return subprocess.Popen(_cmd(tmp_path, rec, out), env=_env(), stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True, **kw)


def _wait_entries(out: Path, n: int, proc: subprocess.Popen, timeout_s: float = 150.0) -> None:
    deadline = time.monotonic() + timeout_s  # generous: the test machine may be shared and loaded
    while time.monotonic() < deadline and len(list((out / "manifest").glob("*.json"))) < n:
        assert proc.poll() is None, proc.communicate()
        time.sleep(0.1)
    assert len(list((out / "manifest").glob("*.json"))) == n


def _held_worker(out: Path, timeout_s: float = 60.0) -> int:
    """Pid of the worker holding logger02: its staging folder is named after it (``.staging-NAME-PID``)."""
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        staged = list((out / "captures").glob(".staging-*logger02*")) if (out / "captures").exists() else []
        if staged:
            return int(staged[0].name.rsplit("-", 1)[1])
        time.sleep(0.1)
    raise AssertionError("the held capture never started")


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat", "rb") as fh:
            return fh.read().rsplit(b")", 1)[-1].split()[0] not in (b"Z", b"X")
    except FileNotFoundError:
        return False


def _gone_within(pid: int, seconds: float) -> bool:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if not _alive(pid):
            return True
        time.sleep(0.05)
    return not _alive(pid)


def _strict(path: Path) -> object:
    def refuse(token: str) -> object:
        raise AssertionError(f"{path}: {token} is not JSON")
    return json.loads(path.read_text(encoding="utf-8"), parse_constant=refuse)


def _clean_summary(out: Path) -> pd.DataFrame:
    s = pd.read_csv(out / "summary.csv", keep_default_na=False).drop(columns=VOLATILE)
    return s.sort_values("file").reset_index(drop=True)


@pytest.fixture()
def reference(tmp_path_factory) -> pd.DataFrame:
    """The summary of an uninterrupted run (in-process) of the same archive and recipe."""
    root = tmp_path_factory.mktemp("ref")
    _archive(root / "in")
    rec = _recipe(root, root / "no-flag", root / "pids")
    res = batch.run([root / "in"], recipe=rec, out=root / "out", jobs=1)
    assert res.ok
    return _clean_summary(root / "out")


@pytest.mark.parametrize("sig", [signal.SIGTERM, signal.SIGINT], ids=["SIGTERM", "SIGINT"])
def test_a_signal_stops_the_run_cleanly_and_the_rerun_completes_it(tmp_path, sig, reference):
    _archive(tmp_path / "in")
    flag = tmp_path / "hold"
    flag.write_text("")
    rec = _recipe(tmp_path, flag, tmp_path / "pids")
    out = tmp_path / "out"
    proc = _start(tmp_path, rec, out)
    try:
        _wait_entries(out, 2, proc)
        worker = _held_worker(out)
        proc.send_signal(sig)
        stdout, stderr = proc.communicate(timeout=60)
    finally:
        proc.kill()
    assert proc.returncode == 128 + sig, (stdout, stderr)
    assert "Traceback" not in stderr and "interrupted" in stderr
    assert "1 not analysed yet" in stdout
    assert _gone_within(worker, 10.0), "the worker outlived the stopped run"
    summary = pd.read_csv(out / "summary.csv", keep_default_na=False)
    assert list(summary["status"]).count("not analysed") == 1 and list(summary["status"]).count("ok") == 2
    assert "not analysed yet" in (out / "index.html").read_text(encoding="utf-8")
    assert _strict(out / "manifest.json")["complete"] is False
    for p in (out / "manifest").glob("*.json"):
        _strict(p)
    assert not (out / batch.LOCK_FILE).exists()
    flag.unlink()
    res = batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1)
    assert (res.n_skipped, res.n_done) == (2, 1) and res.ok
    assert not list((out / "captures").glob(".staging-*"))
    pd.testing.assert_frame_equal(_clean_summary(out).drop(columns=["outputs", "report", "path", "recipe_hash"]),
                                  reference.drop(columns=["outputs", "report", "path", "recipe_hash"]))


def test_sigkill_of_the_main_process_ends_the_workers_and_the_rerun_completes(tmp_path, reference):
    _archive(tmp_path / "in")
    flag = tmp_path / "hold"
    flag.write_text("")
    rec = _recipe(tmp_path, flag, tmp_path / "pids")
    out = tmp_path / "out"
    proc = _start(tmp_path, rec, out)
    try:
        _wait_entries(out, 2, proc)
        worker = _held_worker(out)
        proc.kill()  # SIGKILL: no handler runs
        proc.communicate(timeout=30)
    finally:
        proc.kill()
    assert _gone_within(worker, 10.0), "a worker outlived the killed main process"
    for p in (out / "manifest").glob("*.json"):
        _strict(p)
    flag.unlink()
    res = batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1)  # the stale lock is taken over
    assert (res.n_skipped, res.n_done) == (2, 1) and res.ok
    assert not list((out / "captures").glob(".staging-*"))
    pd.testing.assert_frame_equal(_clean_summary(out).drop(columns=["outputs", "report", "path", "recipe_hash"]),
                                  reference.drop(columns=["outputs", "report", "path", "recipe_hash"]))


def _limit_file_size() -> None:
    resource.setrlimit(resource.RLIMIT_FSIZE, (4096, 4096))  # small: a result file cannot be written whole


def test_an_output_that_cannot_be_written_stops_the_run_and_keeps_earlier_results(tmp_path):
    _archive(tmp_path / "in", n=2)
    rec = _recipe(tmp_path, tmp_path / "no-flag", tmp_path / "pids")
    out = tmp_path / "out"
    first = batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1)
    assert first.ok
    before = {str(p.relative_to(out)): p.read_bytes() for p in (out / "captures").rglob("*") if p.is_file()}
    entries = {str(p.relative_to(out)): p.read_bytes() for p in (out / "manifest").glob("*.json")}
    assert before and entries
    proc = subprocess.Popen(_cmd(tmp_path, rec, out) + ["--force"], env=_env(), stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, preexec_fn=_limit_file_size)
    stdout, stderr = proc.communicate(timeout=300)
    assert proc.returncode == 2, (stdout, stderr)
    lines = [ln for ln in stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("error: ") and "cannot write" in lines[0], stderr
    assert str(out) in lines[0]  # names the file
    after = {str(p.relative_to(out)): p.read_bytes() for p in (out / "captures").rglob("*") if p.is_file()}
    assert after == before  # every earlier result byte-identical, nothing half-replaced
    assert {str(p.relative_to(out)): p.read_bytes() for p in (out / "manifest").glob("*.json")} == entries
    assert not (out / batch.LOCK_FILE).exists()
    # the capture was not recorded as failed: a plain rerun (no limit) finds every capture done, none failed
    res = batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1)
    assert res.ok and res.n_failed == 0


def _batch_cli(args: list[str]) -> tuple[int, str]:
    from click.testing import CliRunner

    from waveforms.cli import cli

    res = CliRunner().invoke(cli, ["batch", *args, "--quiet"], catch_exceptions=True)
    assert res.exception is None or isinstance(res.exception, SystemExit), repr(res.exception)
    return res.exit_code, res.stderr


def test_an_output_folder_under_a_file_is_refused_in_one_line(tmp_path):
    """--out whose parent is a file: exit 2, one line naming the folder, nothing written (works as root too)."""
    _archive(tmp_path / "in", n=1)
    (tmp_path / "afile").write_text("not a folder\n", encoding="utf-8")
    code, err = _batch_cli([str(tmp_path / "in"), "--out", str(tmp_path / "afile" / "out")])
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert code == 2 and len(lines) == 1 and lines[0].startswith("error: ") and "afile" in lines[0], err
    assert (tmp_path / "afile").read_text(encoding="utf-8") == "not a folder\n"


def _make_unwritable(folder: Path) -> str:
    """Make ``folder`` refuse new files: chmod for a normal user; root ignores modes, so the immutable attribute."""
    if os.geteuid() != 0:
        folder.chmod(0o555)
        return "chmod"
    done = subprocess.run(["chattr", "+i", str(folder)], capture_output=True, text=True)
    if done.returncode != 0:
        pytest.skip(f"running as root, which ignores folder permissions, and chattr +i failed ({done.stderr.strip()})")
    return "chattr"


def _make_writable(folder: Path, how: str) -> None:
    if how == "chmod":
        folder.chmod(0o755)
    else:
        subprocess.run(["chattr", "-i", str(folder)], check=False)


def test_a_read_only_output_folder_is_refused_in_one_line(tmp_path):
    """An existing output folder that refuses writes: exit 2, one line naming it, no traceback, nothing changed."""
    _archive(tmp_path / "in", n=1)
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("mine\n", encoding="utf-8")
    how = _make_unwritable(out)
    try:
        code, err = _batch_cli([str(tmp_path / "in"), "--out", str(out)])
    finally:
        _make_writable(out, how)
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert code == 2 and len(lines) == 1 and lines[0].startswith("error: ") and str(out) in lines[0], err
    assert sorted(p.name for p in out.iterdir()) == ["keep.txt"]
