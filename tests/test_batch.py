"""Batch runs: corrupt files among good ones, resumption, killed workers, summary rows, nameplate mapping.

The captures are invented test signals (tests/_batch_support.py).
"""

from __future__ import annotations

import json
import math
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

import _batch_support
from _batch_support import make_capture, write_nameplate
from waveforms import batch
from waveforms.cli import cli
from waveforms.errors import CaptureReadError, InvalidParameterError
from waveforms.summary import SUMMARY_COLUMNS

REPO = Path(__file__).resolve().parents[1]
PLUGIN = _batch_support.__name__  # importable by name in the worker processes (same sys.path)


def _archive(root: Path, n_good: int = 3, corrupt: bool = True) -> list[Path]:
    """An invented archive: two sites, healthy and one open-phase capture, plus a damaged file."""
    files = []
    for i in range(n_good):
        site = "north-yard" if i % 2 == 0 else "pump-house"
        # line C opens at 1.015 s, on a cycle boundary (rising zero crossing of Va = cos), so no cycle mixes the two states
        kw = {"open_c_at_s": 1.015} if i == 1 else {"i_rms": (20.0 + i, 20.0 + i, 18.0 + i)}
        files.append(make_capture(root / site / f"logger{i:02d}.h5", **kw))
    if corrupt:
        bad = root / "north-yard" / "logger99.h5"
        bad.write_bytes(b"\x89HDF\r\n\x1a\n" + b"\x00" * 64)  # an HDF5 signature, then nothing: truncated
        files.append(bad)
    (root / "north-yard" / "notes.txt").write_text("site visit notes, not a capture\n")
    return files


def _recipe(tmp_path: Path, extra: str = "", stages: str = '"import", "measure", "detect", "thermal", "report"') -> Path:
    p = tmp_path / "recipe.toml"
    p.write_text(f'[recipe]\nname = "test"\nstages = [{stages}]\nplugins = ["{PLUGIN}"]\n[report]\nhtml = false\n{extra}',
                 encoding="utf-8")
    return p


def test_corrupt_file_becomes_error_row_and_others_go_on(tmp_path):
    files = _archive(tmp_path / "in")
    plate = write_nameplate(tmp_path / "plate.toml", fla=21.0)
    res = CliRunner().invoke(cli, ["batch", str(tmp_path / "in"), "--out", str(tmp_path / "out"), "--recipe", "triage",
                                   "--jobs", "2", "--motor", str(plate), "--quiet"])
    assert res.exit_code == 1, res.output  # some capture failed
    summary = pd.read_csv(tmp_path / "out" / "summary.csv", keep_default_na=False)
    assert len(summary) == len(files)  # notes.txt is not a capture
    bad = summary[summary["status"] == "error"]
    assert bad["file"].tolist() == ["north-yard/logger99.h5"]
    assert "logger99.h5" in bad["error"].iloc[0] and "HDF5" in bad["error"].iloc[0]
    assert bad["verdict"].iloc[0] == "error"
    good = summary[summary["status"] == "ok"]
    assert len(good) == 3 and (good["error"] == "").all()
    assert "failed: north-yard/logger99.h5" in res.output
    # the open-phase capture is found; the healthy ones are not flagged as open phase
    verdicts = dict(zip(good["file"], good["verdict"], strict=True))
    assert verdicts["pump-house/logger01.h5"].startswith("open phase")
    assert not verdicts["north-yard/logger00.h5"].startswith("open phase")


def test_summary_rows_match_the_per_capture_results(tmp_path):
    _archive(tmp_path / "in", corrupt=False)
    plate = write_nameplate(tmp_path / "plate.toml", fla=21.0)
    res = batch.run([tmp_path / "in"], recipe=_recipe(tmp_path), out=tmp_path / "out", jobs=2, motor=plate)
    assert res.ok and res.n_done == 3
    s = res.summary.set_index("file")
    assert list(res.summary.columns) == list(SUMMARY_COLUMNS)
    for _name, row in s.iterrows():
        folder = tmp_path / "out" / row["outputs"]
        ev = pd.read_csv(folder / "events.csv")
        cyc = pd.read_parquet(folder / "cycles.parquet")
        cyc = cyc[np.isfinite(cyc["frequency_hz"])]  # complete cycles only (docs/batch.md)
        for kind in ("open_phase", "stall", "dip", "unbalance"):
            sel = ev[ev["kind"] == kind]
            assert row[f"n_{kind}"] == len(sel)
            if len(sel):
                assert row[f"first_{kind}_s"] == pytest.approx(sel["start_s"].min())
            else:
                assert math.isnan(row[f"first_{kind}_s"])
        assert row["worst_i2_i1_pct"] == pytest.approx(np.nanmax(cyc["I2_I1_pct"]))
        # current x FLA: largest per-cycle line RMS over the nameplate FLA (definition; common practice, no source)
        assert row["max_current_x_fla"] == pytest.approx(np.nanmax(cyc[["Ia_rms", "Ib_rms", "Ic_rms"]].to_numpy()) / 21.0)
        assert row["duration_s"] == pytest.approx(2.0)
        assert row["start"] == "2031-05-04T06:00:00+00:00"
        # the thermal stage's peak capacity used, as in the capture's own result.json (no external source); a
        # steady capture starts from the steady state at its own current, so 22 A on 21 A FLA reads (22/21)^2
        doc = json.loads((folder / "result.json").read_text(encoding="utf-8"))
        assert row["thermal_capacity_used_pct"] == pytest.approx(doc["thermal"]["thermal_capacity_used_pct"])
        assert row["thermal_capacity_used_pct"] > 0
    # the healthy capture at 20 A RMS: max current x FLA is 20/21 (a sinusoid of peak sqrt(2) x 20 A has RMS 20 A;
    # common practice, no source)
    assert s.loc["north-yard/logger00.h5", "max_current_x_fla"] == pytest.approx(20.0 / 21.0, rel=1e-3)
    # the open-phase capture: lines A and B carry sqrt(3) x 20 A after line C opens (Kirchhoff, common practice)
    assert s.loc["pump-house/logger01.h5", "max_current_x_fla"] == pytest.approx(math.sqrt(3) * 20.0 / 21.0, rel=1e-3)
    assert s.loc["pump-house/logger01.h5", "n_open_phase"] == 1
    assert s.loc["pump-house/logger01.h5", "first_open_phase_s"] == pytest.approx(1.015, abs=0.02)
    t_open = pd.Timestamp(s.loc["pump-house/logger01.h5", "first_open_phase_time"])
    assert t_open - pd.Timestamp("2031-05-04T06:00:00+00:00") == pd.Timedelta(
        seconds=s.loc["pump-house/logger01.h5", "first_open_phase_s"]).round("us")
    assert s.loc["north-yard/logger00.h5", "first_open_phase_time"] == ""
    # Parquet and CSV hold the same table; the events table gathers every capture's events
    pq = pd.read_parquet(tmp_path / "out" / "summary.parquet")
    pd.testing.assert_frame_equal(pq, res.summary)
    assert set(res.events["file"]) <= set(res.summary["file"])
    pd.testing.assert_frame_equal(res.cycles("pump-house/logger01.h5"),
                                  pd.read_parquet(tmp_path / "out" / s.loc["pump-house/logger01.h5", "outputs"] / "cycles.parquet"))
    assert (res.events["kind"] == "open_phase").sum() == 1


def test_interrupted_run_resumes_and_skips_finished_captures(tmp_path):
    _archive(tmp_path / "in", n_good=4, corrupt=False)
    rec = _recipe(tmp_path)
    seen = []

    def stop_after_two(entry):
        seen.append(entry["key"])
        if len(seen) == 2:
            raise KeyboardInterrupt  # what Ctrl-C raises in the main process

    first = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=1, on_result=stop_after_two)
    assert first.interrupted and not first.ok
    # what finished is kept; the two not reached are listed as not analysed yet (no external source)
    assert len(first.summary) == 4 and (first.summary["status"] == "ok").sum() == 2
    assert (first.n_pending, first.n_failed) == (2, 0)
    assert (first.summary["status"] == "not analysed").sum() == 2
    entries = sorted((tmp_path / "out" / "manifest").glob("*.json"))
    assert len(entries) == 2
    stamps = {p.name: p.stat().st_mtime_ns for p in entries}
    second = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=2)
    assert (second.n_skipped, second.n_done) == (2, 2) and second.ok
    assert len(second.summary) == 4
    assert {p.name: p.stat().st_mtime_ns for p in entries} == stamps  # finished ones not redone
    third = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=2)
    assert (third.n_skipped, third.n_done) == (4, 0)
    pd.testing.assert_frame_equal(third.summary.drop(columns="elapsed_s"), second.summary.drop(columns="elapsed_s"))
    forced = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=2, force=True)
    assert (forced.n_skipped, forced.n_done) == (0, 4)
    reused = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=2, force=True, fresh_workers=False)
    pd.testing.assert_frame_equal(reused.summary.drop(columns="elapsed_s"), second.summary.drop(columns="elapsed_s"))
    # a changed recipe parameter changes the fingerprint: everything reruns
    changed = batch.run([tmp_path / "in"], recipe=_recipe(tmp_path, "[detect]\nmin_stall_s = 3.0\n"), out=tmp_path / "out", jobs=2)
    assert changed.n_done == 4
    # a changed file reruns alone
    make_capture(tmp_path / "in" / "north-yard" / "logger00.h5", i_rms=(25.0, 25.0, 25.0))
    again = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=2)
    assert (again.n_skipped, again.n_done) == (3, 1)


def test_ctrl_c_on_the_command_keeps_finished_captures(tmp_path):
    """A real SIGINT to `motor-waveforms batch`: exit 130, finished entries stay, the rerun resumes."""
    _archive(tmp_path / "in", n_good=3, corrupt=False)
    flag = tmp_path / "hold"
    flag.write_text("")
    rec = _recipe(tmp_path, f'[wait]\nseconds = 60.0\nonly_if_name_contains = "logger01"\nwhile_file_exists = "{flag}"\n',
                  stages='"import", "measure", "detect", "wait", "report"')
    out = tmp_path / "out"
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(REPO), str(REPO / "tests")])}
    cmd = [sys.executable, "-c", "from waveforms.cli import main; main()", "batch", str(tmp_path / "in"),
           "--out", str(out), "--recipe", str(rec), "--jobs", "1", "--quiet"]
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 150  # generous: the test machine may be shared and loaded
        while time.monotonic() < deadline and len(list((out / "manifest").glob("*.json"))) < 2:
            time.sleep(0.1)
        assert len(list((out / "manifest").glob("*.json"))) == 2, "the two quick captures should finish first"
        time.sleep(0.5)  # the third is now held in its worker
        proc.send_signal(signal.SIGINT)
        stdout, stderr = proc.communicate(timeout=30)
    finally:
        proc.kill()
    assert proc.returncode == 130, (stdout, stderr)
    assert "interrupted" in stderr
    assert "Traceback" not in stderr
    summary = pd.read_csv(out / "summary.csv")
    assert len(summary) == 3 and list(summary["status"]).count("not analysed") == 1
    assert json.loads((out / "manifest.json").read_text())["complete"] is False
    flag.unlink()  # release the held capture; the recipe (and its fingerprint) is unchanged
    res = batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1)
    assert (res.n_skipped, res.n_done) == (2, 1) and res.ok
    assert json.loads((out / "manifest.json").read_text())["complete"] is True


def test_killed_worker_becomes_error_row_others_finish(tmp_path):
    _archive(tmp_path / "in", n_good=3, corrupt=False)
    rec = _recipe(tmp_path, '[die]\nonly_if_name_contains = "logger01"\n', stages='"import", "die", "measure", "report"')
    res = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=2)
    s = res.summary.set_index("file")
    assert s.loc["pump-house/logger01.h5", "status"] == "error"
    assert "worker process died" in s.loc["pump-house/logger01.h5", "error"]
    assert (s.drop(index="pump-house/logger01.h5")["status"] == "ok").all()
    assert res.n_failed == 1
    # a crash says nothing about the file: the rerun tries it again (and it dies again)
    again = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "out", jobs=2)
    assert (again.n_skipped, again.n_done) == (2, 1)


def test_per_site_nameplates_from_a_mapping(tmp_path):
    _archive(tmp_path / "in", corrupt=False)
    write_nameplate(tmp_path / "plates" / "pump.toml", fla=30.0, name="pump motor <P-2>")
    write_nameplate(tmp_path / "plates" / "yard.toml", fla=15.0, name="yard fan")
    mapping = tmp_path / "motors.toml"
    mapping.write_text('[[motor]]\nsite = "pump-house"\nnameplate = "plates/pump.toml"\n'
                       '[[motor]]\nmatch = "north-yard/*"\nnameplate = "plates/yard.toml"\n', encoding="utf-8")
    res = batch.run([tmp_path / "in"], recipe=_recipe(tmp_path), out=tmp_path / "out", jobs=2, motors=mapping)
    s = res.summary.set_index("file")
    assert s.loc["pump-house/logger01.h5", "nameplate"] == "pump motor <P-2>"
    assert s.loc["north-yard/logger00.h5", "nameplate"] == "yard fan"
    assert s.loc["north-yard/logger00.h5", "max_current_x_fla"] == pytest.approx(20.0 / 15.0, rel=1e-3)
    html = (tmp_path / "out" / "index.html").read_text()
    assert "pump motor &lt;P-2&gt;" in html and "<P-2>" not in html
    bad = tmp_path / "bad.toml"
    bad.write_text('[[motor]]\nsite = "x"\nplate = "p.toml"\n', encoding="utf-8")
    with pytest.raises(CaptureReadError, match=r"bad\.toml: key motor\[0\]\.plate: unknown key"):
        batch.run([tmp_path / "in"], out=tmp_path / "out2", motors=bad)


def test_discovery_of_folders_globs_and_missing_inputs(tmp_path):
    files = _archive(tmp_path / "in")
    found = batch.discover([tmp_path / "in"])
    assert [f.name for f in found] == ["north-yard/logger00.h5", "north-yard/logger02.h5", "north-yard/logger99.h5",
                                       "pump-house/logger01.h5"]
    assert {f.site for f in found} == {"north-yard", "pump-house"}
    by_glob = batch.discover([str(tmp_path / "in" / "*" / "logger0[01].h5")])
    assert sorted(Path(f.path).name for f in by_glob) == ["logger00.h5", "logger01.h5"]
    assert len(batch.discover([tmp_path / "in", files[0]])) == 4  # duplicates collapse
    with pytest.raises(InvalidParameterError, match=r"nowhere: no such file or folder"):
        batch.discover([tmp_path / "nowhere"])
    with pytest.raises(InvalidParameterError, match=r"the pattern matches no file"):
        batch.discover([str(tmp_path / "in" / "*.xyz")])
    # the output folder is never read back as input
    assert batch.discover([tmp_path], exclude=[tmp_path / "in" / "pump-house"])[-1].name.startswith("in/north-yard")


def test_fsspec_url_input(tmp_path):
    make_capture(tmp_path / "in" / "yard" / "a.h5")
    res = batch.run([f"file://{tmp_path / 'in'}"], recipe=_recipe(tmp_path), out=tmp_path / "out", jobs=1)
    assert res.ok and res.summary["file"].tolist() == ["yard/a.h5"]
    assert res.summary["path"].iloc[0].startswith("file://")
    (tmp_path / "in" / "yard" / "b.h5").write_bytes(b"not a capture at all")
    res = batch.run([f"file://{tmp_path / 'in'}"], recipe=_recipe(tmp_path), out=tmp_path / "out", jobs=1)
    err = res.summary.set_index("file").loc["yard/b.h5", "error"]
    assert err.startswith(f"file://{tmp_path / 'in' / 'yard' / 'b.h5'}: ")  # the URL, not the temporary copy


def test_index_html_escapes_names_and_links_reports(tmp_path):
    nasty = tmp_path / "in" / 'site "<b>"' / "<script>alert(1)</script>&x.h5"
    make_capture(nasty)
    res = batch.run([tmp_path / "in"], recipe="triage", out=tmp_path / "out", jobs=1,
                    motor=write_nameplate(tmp_path / "plate.toml"))
    assert res.ok
    html = (tmp_path / "out" / "index.html").read_text()
    assert "<script>alert(1)" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;&amp;x.h5" in html  # html.escape, Python standard library
    assert 'site &quot;&lt;b&gt;&quot;' in html
    assert 'id="verdict"' in html and '<option value="no event found">' in html
    assert html.count("<script>") == 1  # our own sorting/filter script only


def test_dask_localcluster_gives_the_same_summary(tmp_path):
    distributed = pytest.importorskip("distributed")
    _archive(tmp_path / "in")
    rec = _recipe(tmp_path)
    plate = write_nameplate(tmp_path / "plate.toml")
    local = batch.run([tmp_path / "in"], recipe=rec, out=tmp_path / "local", jobs=2, motor=plate)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        # the scheduler given in the recipe's [batch] table (the --scheduler option overrides it)
        rec_dask = tmp_path / "recipe_dask.toml"
        rec_dask.write_text(rec.read_text() + f'[batch]\nscheduler = "{cluster.scheduler_address}"\n', encoding="utf-8")
        remote = batch.run([tmp_path / "in"], recipe=rec_dask, out=tmp_path / "dask", motor=plate)
        prefixes = set(cluster.scheduler.task_prefixes)
    assert remote.n_done == 4 and remote.n_failed == 1
    assert "waveforms-capture" in prefixes  # the tasks really went through the cluster
    drop = ["elapsed_s", "outputs", "report"]
    pd.testing.assert_frame_equal(local.summary.drop(columns=drop), remote.summary.drop(columns=drop))
    pd.testing.assert_frame_equal(local.events, remote.events)


def test_investigate_links_each_report_and_csv_is_formula_safe(tmp_path):
    make_capture(tmp_path / "in" / "=cmd.h5")
    res = batch.run([tmp_path / "in"], recipe="investigate", out=tmp_path / "out", jobs=1,
                    motor=write_nameplate(tmp_path / "plate.toml"))
    assert res.ok, res.summary["error"].tolist()
    report = res.summary["report"].iloc[0]
    assert report.endswith("report.html") and (tmp_path / "out" / report).is_file()
    folder = tmp_path / "out" / res.summary["outputs"].iloc[0]
    assert {"result.json", "events.csv", "report.html", "cycles.parquet"} <= {p.name for p in folder.iterdir()}
    html = (tmp_path / "out" / "index.html").read_text()
    assert f'href="{report.replace("=", "%3D")}"' in html  # URL-quoted relative link
    raw = (tmp_path / "out" / "summary.csv").read_text()
    assert "\n'=cmd.h5," in raw  # a spreadsheet must not run the file name as a formula


def test_one_run_per_output_folder(tmp_path):
    import socket

    make_capture(tmp_path / "in" / "a.h5")
    out = tmp_path / "out"
    out.mkdir()
    lock = out / batch.LOCK_FILE
    lock.write_text(f"{socket.gethostname()}:{os.getpid()}")  # a live process holds it
    with pytest.raises(InvalidParameterError, match=r"another batch run .* is writing this output folder"):
        batch.run([tmp_path / "in"], recipe=_recipe(tmp_path), out=out, jobs=1)
    gone = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True, text=True)
    lock.write_text(f"{socket.gethostname()}:{gone.stdout.strip()}")  # left by a run that no longer exists
    res = batch.run([tmp_path / "in"], recipe=_recipe(tmp_path), out=out, jobs=1)
    assert res.ok and res.n_done == 1
    assert not lock.exists()


def test_dry_run_lists_the_plan_and_writes_nothing(tmp_path):
    _archive(tmp_path / "in", n_good=2, corrupt=True)
    out = tmp_path / "out"
    rec = _recipe(tmp_path)
    p = batch.plan([tmp_path / "in"], recipe=rec, out=out)
    assert p["plan"].tolist() == ["to run"] * 3 and not out.exists()
    batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=2)
    p = batch.plan([tmp_path / "in"], recipe=rec, out=out).set_index("file")
    assert p.loc["north-yard/logger00.h5", "plan"] == "done: skipped"
    assert p.loc["north-yard/logger99.h5", "plan"].startswith("failed before")
    assert batch.plan([tmp_path / "in"], recipe=rec, out=out, retry_errors=True).set_index("file").loc[
        "north-yard/logger99.h5", "plan"] == "to run"
    res = CliRunner().invoke(cli, ["batch", str(tmp_path / "in"), "--out", str(out), "--recipe", str(rec), "--dry-run"])
    assert res.exit_code == 0 and "done: skipped" in res.output and "north-yard/logger99.h5" in res.output


def _worker_report() -> dict:
    import threadpoolctl

    return {"blas": [p["num_threads"] for p in threadpoolctl.threadpool_info() if p["user_api"] == "blas"],
            "env": {k: os.environ.get(k) for k in batch.executors.THREAD_VARIABLES}}


def test_workers_run_one_blas_thread_without_touching_the_environment(monkeypatch):
    """The pool initializer caps BLAS threads in the worker; os.environ of this process is left alone.

    threadpoolctl (PyPI) reads the thread count back from the loaded BLAS library; no external source for the policy.
    """
    import threadpoolctl

    for k in batch.executors.THREAD_VARIABLES:
        monkeypatch.delenv(k, raising=False)
    here = [p["num_threads"] for p in threadpoolctl.threadpool_info() if p["user_api"] == "blas"]
    assert here, "numpy's BLAS is loaded"
    if max(here) < 2:
        pytest.skip("BLAS runs one thread here anyway (one core): the cap cannot be seen")
    before = dict(os.environ)
    pool = batch.executors._Pool(1, batch.runner.load_recipe(None))
    try:
        seen = pool.executor.submit(_worker_report).result(timeout=120)
    finally:
        pool.executor.shutdown(wait=True)
    assert seen["blas"] and set(seen["blas"]) == {1}
    assert seen["env"] == {k: None for k in batch.executors.THREAD_VARIABLES}  # not passed through the environment
    assert dict(os.environ) == before


def test_a_changed_file_replaces_its_old_result_once_the_new_one_is_complete(tmp_path):
    """Issue 20 batch fault 9: the outputs of an older version of a changed file are removed after the new result.

    Removed: the old capture folder and manifest entry of the same path, recipe and nameplate.  Kept: the other
    captures, and the old result when the new version cannot be analysed (no complete new result).  The
    package's own rules: no external source.
    """
    _archive(tmp_path / "in", n_good=2, corrupt=False)
    rec = _recipe(tmp_path)
    out = tmp_path / "out"
    assert batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1).ok
    folders = {p.name for p in (out / "captures").iterdir()}
    entries = {p.name for p in (out / "manifest").glob("*.json")}
    other = next(p for p in (out / "captures").iterdir() if "logger01" in p.name)
    other_bytes = {q.name: q.read_bytes() for q in other.iterdir()}
    old00 = next(p.name for p in (out / "captures").iterdir() if "logger00" in p.name)
    # the file changes: the rerun analyses it alone, and its old folder and entry are gone afterwards
    make_capture(tmp_path / "in" / "north-yard" / "logger00.h5", i_rms=(25.0, 25.0, 25.0))
    again = batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1)
    assert again.ok and again.n_done == 1
    now = {p.name for p in (out / "captures").iterdir()}
    new00 = next(n for n in now if "logger00" in n)
    assert old00 not in now and new00 != old00 and len(now) == len(folders)
    assert (out / "captures" / new00 / "result.json").is_file()
    assert len(list((out / "manifest").glob("*.json"))) == len(entries)
    assert {q.name: q.read_bytes() for q in other.iterdir()} == other_bytes  # the other capture untouched
    # the file becomes unreadable: no complete new result, so the last good one stays
    (tmp_path / "in" / "north-yard" / "logger00.h5").write_bytes(b"not a capture")
    broken = batch.run([tmp_path / "in"], recipe=rec, out=out, jobs=1)
    assert broken.n_failed == 1
    assert (out / "captures" / new00 / "result.json").is_file()
