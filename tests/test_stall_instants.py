"""The two instants of a stall, pull-out and rest, against the simulator's truth (issue 12).

Pull-out: the load torque exceeds what the motor can deliver, the rotor decelerates
and the current rises towards its locked-rotor value; rest: the speed reaches zero.
The simulator's truth takes pull-out from its torque balance J dw/dt = T_e - T_L - B w
(Krause, Wasynczuk & Sudhoff, Analysis of Electric Machinery and Drive Systems,
chapter 4, rotor mechanical equation; equation number from memory) and rest from its
speed.  A single-phased motor's breakdown torque is well below its three-phase one
(about a third here, sample_captures/README.md), so a load it carried on three lines
can pull it out once single-phased: Fitzgerald, Kingsley & Umans, Electric Machinery,
single-phase motors chapter (from memory).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from waveforms.analysis import analyze
from waveforms.io import read_capture
from waveforms.sim.scenario import load_scenario
from waveforms.sim.simulate import run
from waveforms.sim.truth import REST_SPEED_PU

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
# the instant the load torque rises beyond the breakdown torque, from each scenario file
LOAD_RISE_S = {"jam": 3.0, "open_phase_stall": 7.0}


@pytest.mark.parametrize("name", sorted(LOAD_RISE_S))
def test_truth_pull_out_is_the_load_rise_and_rest_is_standstill(name):
    sim = run(load_scenario(SAMPLES / f"{name}.scenario.toml"))
    (st,) = [e for e in sim.truth["events"] if e["kind"] == "stall"]
    fs = sim.scenario.logger.sample_rate_hz
    # the jam and the load step take effect at once (a step of T_L in the torque balance, no external source)
    assert st["pull_out_s"] == pytest.approx(LOAD_RISE_S[name], abs=2.0 / fs)
    ws = sim.scenario.machine.synchronous_speed_rad_s(sim.scenario.supply.f_hz)
    k = int(round(st["rest_s"] * fs))
    assert abs(sim.omega_m_rad_s[k]) <= REST_SPEED_PU * ws < abs(sim.omega_m_rad_s[k - 1])
    assert st["pull_out_s"] < st["start_s"] <= st["rest_s"]
    # the stored truth file carries the same instants
    saved = [e for e in json.loads((SAMPLES / f"{name}.truth.json").read_text())["events"] if e["kind"] == "stall"]
    assert (saved[0]["pull_out_s"], saved[0]["rest_s"]) == (st["pull_out_s"], st["rest_s"])


@pytest.mark.parametrize("name", ["jam", "open_phase_stall", "start_open_line"])
def test_detected_instants_against_truth(name):
    res = analyze(read_capture(SAMPLES / f"{name}.h5"), speed=False, quality=False)
    (want,) = [e for e in json.loads((SAMPLES / f"{name}.truth.json").read_text())["events"] if e["kind"] == "stall"]
    (got,) = res.events_of("stall")
    f = got.figures
    assert f["rest_s"] == got.start_s  # docs/result.md: start_s is the rest instant
    assert abs(f["rest_s"] - want["rest_s"]) <= 0.05  # within 3 cycles of standstill (no external source)
    if want["pull_out_s"] is None:  # energised at locked rotor: it never ran, so never pulled out
        assert f["pull_out_s"] is None and f["from_energisation"]
    else:
        assert abs(f["pull_out_s"] - want["pull_out_s"]) <= 0.02  # about one cycle (no external source)
        assert f["pull_out_s"] < f["rest_s"]
