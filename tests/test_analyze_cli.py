"""The ``waveforms analyze`` command: outputs written, verdict printed, bad input in one line."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from waveforms.cli import cli
from waveforms.report import validate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"


def test_analyze_writes_three_files(tmp_path):
    out = tmp_path / "out"
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "healthy_run.h5"), "--out", str(out), "--no-speed"])
    assert r.exit_code == 0, r.output
    assert sorted(p.name for p in out.iterdir()) == ["events.csv", "report.html", "result.json"]
    doc = json.loads((out / "result.json").read_text())
    validate(doc)
    assert doc["events"] == []  # healthy run: nothing happens (truth file lists no event)
    assert doc["verdict"].split(".")[0] in r.output
    assert "qualified people" in r.output


def test_analyze_with_motor_file_and_no_html(tmp_path):
    out = tmp_path / "o"
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "healthy_run.h5"), "--motor", str(SAMPLES / "pump2.nameplate.toml"),
                                 "--out", str(out), "--no-html", "--no-speed", "--motor-tau", "900"])
    assert r.exit_code == 0, r.output
    assert not (out / "report.html").exists()
    doc = json.loads((out / "result.json").read_text())
    assert doc["thermal"]["motor_tau_s"] == 900.0


def test_missing_capture_is_one_line(tmp_path):
    r = CliRunner().invoke(cli, ["analyze", str(tmp_path / "nope.h5"), "--out", str(tmp_path / "o")])
    assert r.exit_code == 2
    assert "nope.h5" in r.output and "not found" in r.output and "Traceback" not in r.output


def test_bad_motor_tau_is_one_line(tmp_path):
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "healthy_run.h5"), "--out", str(tmp_path / "o"), "--motor-tau", "-5"])
    assert r.exit_code == 2
    assert "--motor-tau" in r.output and "positive" in r.output
    assert not (tmp_path / "o").exists()
