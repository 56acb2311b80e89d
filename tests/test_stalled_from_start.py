"""A capture that begins with the rotor already locked, without a nameplate (waveforms.detect.stall.stalled_from_start).

The captures are simulated (waveforms.sim, the bundled sludge pump 4 model of sample_captures/jam):
the simulator's own state (``locked_rotor = true`` holds the rotor at rest) is the outside reference.
Locked-rotor power factor 0.15-0.5 by motor size: from memory (IEEE Std 399 starting studies, no table
cited); the rotor-speed lines collapse onto the supply frequency at slip 1: common practice, no source.
"""

from __future__ import annotations

import dataclasses
import tomllib
from pathlib import Path

import pytest

from waveforms.analysis import analyze
from waveforms.io import read_capture
from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import simulate

S = Path(__file__).resolve().parent.parent / "sample_captures"


def _jam_variant(**load):
    d = tomllib.loads((S / "jam.scenario.toml").read_text())
    d["scenario"]["duration_s"] = 3.0
    d["switches"] = {"closed_at_start": "ABC"}
    d.pop("truth", None)
    d["load"].pop("jam")
    d["load"].update(load)
    return d


@pytest.fixture(scope="module")
def locked():
    d = _jam_variant()
    d["scenario"]["locked_rotor"] = True
    d["initial"] = {"state": "rest"}
    cap, truth = simulate(scenario_from_dict(d, "locked_from_start", S))
    return analyze(dataclasses.replace(cap, nameplate=None), None), truth


def test_locked_from_the_first_sample_is_a_stall_judged_without_a_nameplate(locked):
    # source: the simulator holds the rotor at rest from t = 0 (waveforms.sim, locked_rotor = true)
    res, _ = locked
    st = [e for e in res.events if e.kind == "stall"]
    assert len(st) == 1
    e = st[0]
    assert e.start_s < 0.05 and e.end_s is None
    assert e.figures["judged_without_nameplate"] and e.figures["present_at_capture_start"]
    assert 0.15 <= e.figures["power_factor_median"] <= 0.55  # locked-rotor power factor (from memory)
    assert e.figures["rotor_line_db"] < -80.0  # no rotor-speed line at slip 1
    assert "judged without a nameplate" in e.summary and "FLA" not in e.summary


def test_a_lightly_loaded_running_motor_at_a_low_power_factor_is_not_taken_for_a_stall():
    # source: the simulator runs the motor at a light load (steady state, 20 N m); its eccentricity
    # sidebands (signatures -48 dB) show the rotor turning although the power factor is low
    d = _jam_variant(torque_n_m=20.0)
    cap, _ = simulate(scenario_from_dict(d, "light_load", S))
    res = analyze(dataclasses.replace(cap, nameplate=None), None)
    pf = float(res.cycles["PF"].abs().median())
    assert pf < 0.75  # the case the spectrum must decide (measured 0.34 for this load; its f - f_r sideband at 30.4 Hz, -48 dB)
    assert not [e for e in res.events if e.kind == "stall"]


@pytest.mark.parametrize("name", ["healthy_run", "unbalanced_supply", "dip_three_phase", "open_phase_50hz",
                                  "sequence/booster_sequence_1", "sequence/booster_sequence_3"])
def test_running_samples_without_a_nameplate_give_no_stall(name):
    # source: the samples' truth files (sample_captures/README.md): the motor runs throughout
    cap = dataclasses.replace(read_capture(S / f"{name}.h5"), nameplate=None)
    res = analyze(cap, None)
    assert not [e for e in res.events if e.kind == "stall"]
    assert not [n for n in res.notes if "already-stalled" in n]


def test_the_verdict_says_already_stalled_when_the_capture_began(locked):
    # source: the simulator holds the rotor at rest from t = 0 (waveforms.sim, locked_rotor = true):
    # the file holds no onset, so the verdict must not date the stall from its first cycle
    res, _ = locked
    assert "already stalled (locked rotor) when the capture began" in res.verdict
    assert "still stalled at the end of the capture" in res.verdict
    assert "to the end of the capture" not in res.verdict and " from 0.0" not in res.verdict
