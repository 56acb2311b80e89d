"""Scenario files, the synth command and the written capture + truth."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest
from click.testing import CliRunner

from waveforms.cli import cli
from waveforms.errors import CaptureReadError
from waveforms.io import read_capture
from waveforms.sim.scenario import load_scenario

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"

SCENARIO = """
[scenario]
name = "tiny"
duration_s = 0.3
seed = 5
machine = "{machine}"
nameplate = "{nameplate}"

[load]
kind = "quadratic"
torque_n_m = 150.0
reference_speed_rpm = 1740

[supply]
voltage_ll_v = 460
frequency_hz = 60

[switches]
ops = [{{line = "C", time_s = 0.1, action = "open"}}]

[logger]
sample_rate_hz = 4000
start_time = 2026-05-01T12:00:00+02:00
noise_a = 0.01

[[truth.windows]]
name = "single"
start_s = 0.2
end_s = 0.3
"""


def _write(tmp_path: Path, text: str | None = None) -> Path:
    p = tmp_path / "tiny.scenario.toml"
    p.write_text(text or SCENARIO.format(machine=(SAMPLES / "pump2.machine.toml").as_posix(),
                                         nameplate=(SAMPLES / "pump2.nameplate.toml").as_posix()))
    return p


@pytest.mark.parametrize("suffix", [".h5", ".csv"])
def test_synth_writes_a_readable_capture_and_its_truth(tmp_path: Path, suffix: str) -> None:
    out = tmp_path / f"tiny{suffix}"
    res = CliRunner().invoke(cli, ["synth", str(_write(tmp_path)), "--out", str(out)])
    assert res.exit_code == 0, res.output
    cap = read_capture(out)
    truth = json.loads((tmp_path / "tiny.truth.json").read_text())
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia", "Ib", "Ic")
    assert cap.n_samples == truth["capture"]["n_samples"] == 1200
    assert cap.start_time.isoformat() == "2026-05-01T12:00:00+02:00"
    assert truth["capture"]["file"] == out.name
    (ev,) = [e for e in truth["events"] if e["kind"] == "open_phase"]
    assert ev["phase"] == "C" and 0.1 < ev["start_s"] < 0.1 + 1 / 120 and ev["end_s"] is None
    ic = cap.read(channels=["Ic"])[0]
    k = int(np.ceil(ev["start_s"] * 4000))
    assert np.max(np.abs(ic[k + 1:])) < 0.1  # only the logger's noise after the interruption
    assert truth["windows"][0]["I"]["c"]["mag"] == 0.0
    if suffix == ".h5":
        assert cap.nameplate is not None and cap.nameplate.fla_a == 58.4


def test_unknown_key_names_the_file_and_key(tmp_path: Path) -> None:
    p = _write(tmp_path, SCENARIO.replace("noise_a = 0.01", "noise_amps = 0.01").format(
        machine=(SAMPLES / "pump2.machine.toml").as_posix(), nameplate=(SAMPLES / "pump2.nameplate.toml").as_posix()))
    with pytest.raises(CaptureReadError, match=r"tiny.scenario.toml: key logger.noise_amps: unknown key"):
        load_scenario(p)


def test_missing_machine_file_is_reported(tmp_path: Path) -> None:
    p = _write(tmp_path, SCENARIO.format(machine="nowhere.toml", nameplate="n.toml"))
    with pytest.raises(CaptureReadError, match=r"nowhere.toml: machine file not found"):
        load_scenario(p)


def test_bad_value_names_the_table(tmp_path: Path) -> None:
    text = SCENARIO.format(machine=(SAMPLES / "pump2.machine.toml").as_posix(), nameplate=(SAMPLES / "pump2.nameplate.toml").as_posix())
    p = _write(tmp_path, text.replace('kind = "quadratic"', 'kind = "cubic"'))
    with pytest.raises(CaptureReadError, match=r"table \[load\]: load kind='cubic' must be one of"):
        load_scenario(p)


def test_steady_start_beyond_breakdown_is_refused(tmp_path: Path) -> None:
    text = SCENARIO.format(machine=(SAMPLES / "pump2.machine.toml").as_posix(), nameplate=(SAMPLES / "pump2.nameplate.toml").as_posix())
    p = _write(tmp_path, text.replace("torque_n_m = 150.0", "torque_n_m = 5000.0").replace('kind = "quadratic"', 'kind = "constant"'))
    res = CliRunner().invoke(cli, ["synth", str(p), "--out", str(tmp_path / "x.h5")])
    assert res.exit_code == 2
    assert "exceeds the breakdown torque" in res.output
    assert not (tmp_path / "x.h5").exists()
