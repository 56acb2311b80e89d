"""The ``motor-waveforms analyze`` command: outputs written, verdict printed, bad input in one line."""

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


# -- the command runs a recipe (waveforms.recipe.run_recipe) ----------------------------------
def _doc(out: Path) -> dict:
    doc = json.loads((out / "result.json").read_text())
    doc.pop("generated_at")
    doc["provenance"].pop("timings_s")
    return doc


def test_default_recipe_writes_what_the_library_call_writes(tmp_path):
    """Consistency of two paths (no external source): the command (default recipe) and analyze() + write_report."""
    from waveforms.analysis import analyze
    from waveforms.io import read_capture
    from waveforms.report import write_report

    out = tmp_path / "cli"
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "open_phase_stall.h5"), "--out", str(out)])
    assert r.exit_code == 0, r.output
    ref = analyze(read_capture(SAMPLES / "open_phase_stall.h5"))
    write_report(ref, tmp_path / "lib")
    assert _doc(out) == _doc(tmp_path / "lib")
    assert (out / "events.csv").read_bytes() == (tmp_path / "lib" / "events.csv").read_bytes()
    assert ref.verdict in r.output
    assert sorted(p.name for p in out.iterdir()) == ["events.csv", "report.html", "result.json"]


def test_recipe_option_takes_a_file_and_command_line_options_override_it(tmp_path):
    recipe = tmp_path / "mine.toml"
    recipe.write_text('[recipe]\nname = "mine"\nstages = ["import", "measure", "detect", "thermal", "report"]\n'
                      '[thermal]\nmotor_tau_s = 900.0\n[report]\nhtml = false\n', encoding="utf-8")
    args = ["analyze", str(SAMPLES / "healthy_run.h5"), "--motor", str(SAMPLES / "pump2.nameplate.toml"), "--recipe", str(recipe)]
    r = CliRunner().invoke(cli, [*args, "--out", str(tmp_path / "a")])
    assert r.exit_code == 0, r.output
    doc = json.loads((tmp_path / "a" / "result.json").read_text())
    assert doc["thermal"]["motor_tau_s"] == 900.0  # from the recipe file
    assert doc["provenance"]["parameters"]["speed_enabled"] is False  # no speed stage in the recipe
    assert not (tmp_path / "a" / "report.html").exists()
    r = CliRunner().invoke(cli, [*args, "--out", str(tmp_path / "b"), "--motor-tau", "1200", "--cycles", "csv"])
    assert r.exit_code == 0, r.output
    doc = json.loads((tmp_path / "b" / "result.json").read_text())
    assert doc["thermal"]["motor_tau_s"] == 1200.0  # the command line wins
    head = (tmp_path / "b" / "cycles.csv").read_text().splitlines()[0].split(",")
    assert "t_s" in head and "Ia_rms" in head
    assert "wrote " + str(tmp_path / "b" / "cycles.csv") in r.output


def test_recipe_without_detect_or_missing_stage_option_is_one_line(tmp_path):
    recipe = tmp_path / "m.toml"
    recipe.write_text('[recipe]\nname = "m"\nstages = ["import", "measure", "report"]\n', encoding="utf-8")
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "healthy_run.h5"), "--out", str(tmp_path / "o"), "--recipe", str(recipe)])
    assert r.exit_code == 2 and "detect" in r.output and "Traceback" not in r.output
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "healthy_run.h5"), "--out", str(tmp_path / "o"), "--recipe", "triage",
                                 "--speed-window", "2"])
    assert r.exit_code == 2 and "--speed-window" in r.output and "'speed'" in r.output
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "healthy_run.h5"), "--out", str(tmp_path / "o"), "--recipe", "nonesuch"])
    assert r.exit_code == 2 and "nonesuch" in r.output and "investigate" in r.output
    assert not (tmp_path / "o").exists()


def test_recipe_import_table_fills_what_the_reading_options_leave_open(tmp_path):
    recipe = tmp_path / "v.toml"
    recipe.write_text('[recipe]\nname = "v"\nstages = ["import", "measure", "detect", "report"]\n'
                      '[import]\nnominal_voltage_v = 480.0\n[report]\nhtml = false\n', encoding="utf-8")
    base = ["analyze", str(SAMPLES / "healthy_run.h5"), "--recipe", str(recipe)]
    r = CliRunner().invoke(cli, [*base, "--out", str(tmp_path / "a")])
    assert r.exit_code == 0, r.output
    assert json.loads((tmp_path / "a" / "result.json").read_text())["capture"]["nominal_voltage_v"] == 480.0
    r = CliRunner().invoke(cli, [*base, "--out", str(tmp_path / "b"), "--nominal-voltage", "415"])
    assert r.exit_code == 0, r.output
    assert json.loads((tmp_path / "b" / "result.json").read_text())["capture"]["nominal_voltage_v"] == 415.0  # command line wins
