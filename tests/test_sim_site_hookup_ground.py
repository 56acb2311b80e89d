"""Six-lead (winding-current) logger hook-up and an ungrounded / resistance-grounded source with a ground fault.

Sources: Kirchhoff's current law at the corners of a delta (``i_A = i_AB - i_CA``) and a balanced delta's
``I_line = sqrt(3) I_winding`` lagging by 30 deg (any circuits textbook, balanced three-phase circuits);
the symmetrical machine carries no zero-sequence (circulating) current in its delta, so with line C open
the windings take 2/3 and 1/3 of the line current (derived in the test).  Ground faults: Kirchhoff's
current law at the ground node with the neutral grounding impedance, the lines' charging capacitance and
the fault resistance (derived in the test); a bolted fault on an ungrounded system puts the neutral at
``-E_a`` and the healthy lines at sqrt(3) x their line-to-neutral voltage (Blackburn, *Symmetrical
Components for Power Systems Engineering*, ungrounded systems; from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from _site_support import SAMPLES, phasor, scenario_dict, simulate_site
from waveforms.errors import CaptureReadError
from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import run

W = 2 * math.pi * 60


def _lone(open_c: bool, **logger):
    d = scenario_dict({}, duration_s=0.35, switches={"ops": [{"line": "C", "time_s": 0.1, "action": "open"}]} if open_c else {})
    del d["site"]
    d["logger"].update(logger)
    return run(scenario_from_dict(d, "six-lead.toml", SAMPLES))


def _recorded_currents(sim):
    return np.vstack([sim.signals[f"I{c}"] for c in "abc"])


def test_six_lead_healthy_winding_currents_are_line_over_root_three_leading_30():
    sim = _lone(False, currents="winding")
    i_w = phasor(sim, _recorded_currents(sim), 0.05, 0.35)
    i_l = phasor(sim, sim.i_line_smooth_a, 0.05, 0.35)
    # balanced delta: I_line = sqrt(3) I_winding, and the line current lags the winding current (A-B) by 30 deg
    assert np.allclose(np.abs(i_l) / np.abs(i_w), math.sqrt(3), rtol=1e-3)
    assert np.allclose(np.degrees(np.angle(i_l / i_w)), -30.0, atol=0.1)
    assert sim.truth["capture"]["currents"] == "winding" and sim.truth["capture"]["current_channels"]["Iab"].startswith("winding A-B")
    # the capture says what the clamps measure: channels Iab, Ibc, Ica of reference "winding" (no external source)
    assert [(c.name, c.reference) for c in sim.capture.find("current")] == [("Iab", "winding"), ("Ibc", "winding"), ("Ica", "winding")]


def test_six_lead_with_line_c_open_splits_two_thirds_one_third():
    sim = _lone(True, currents="winding")
    i_w = np.abs(phasor(sim, _recorded_currents(sim), 0.2, 0.35))
    i_a = np.abs(phasor(sim, sim.i_line_smooth_a, 0.2, 0.35))[0]
    # derivation: i_C = i_CA - i_BC = 0 -> i_BC = i_CA; no circulating current: i_AB + i_BC + i_CA = 0 -> i_AB = -2 i_BC;
    # i_A = i_AB - i_CA = 3/2 i_AB -> |i_AB| = 2/3 |i_A|, |i_BC| = |i_CA| = 1/3 |i_A|; no winding channel goes dead
    assert i_w == pytest.approx([2 / 3 * i_a, 1 / 3 * i_a, 1 / 3 * i_a], rel=2e-3)
    assert i_w.min() > 20.0


def test_six_lead_needs_a_delta_motor_at_the_logger():
    d = scenario_dict({}, duration_s=0.1)
    del d["site"]
    d["scenario"]["machine"] = "sludge4.machine.toml"
    d["logger"]["currents"] = "winding"
    with pytest.raises(CaptureReadError, match="delta-connected"):
        scenario_from_dict(d, "bad.toml", SAMPLES)
    d = scenario_dict({"logger_at": "feeder"}, duration_s=0.1)
    d["logger"]["currents"] = "winding"
    with pytest.raises(CaptureReadError, match="logger_at='motor'"):
        scenario_from_dict(d, "bad.toml", SAMPLES)


def _ll(v):
    return np.array([v[0] - v[1], v[1] - v[2], v[2] - v[0]])


def test_bolted_ground_fault_on_an_ungrounded_source_shifts_the_neutral_only():
    sim = simulate_site({"logger_at": "feeder", "grounding": {"kind": "ungrounded", "charging_uf_per_phase": 2.0,
                                                              "faults": [{"line": "A", "start_s": 0.1, "end_s": 1.0}]}},
                        duration_s=0.25)
    v_log = np.vstack([sim.signals[f"V{c}"] for c in "abc"])
    before, during = phasor(sim, v_log, 0.02, 0.1), phasor(sim, v_log, 0.13, 0.25)
    e = phasor(sim, sim.emf_v, 0.02, 0.1)
    v_ph = 460 / math.sqrt(3)
    assert np.abs(before) == pytest.approx([v_ph] * 3, rel=1e-3)  # unfaulted: the neutral sits at ground
    # bolted fault on A: neutral at -E_a, line A at ground, B and C at sqrt(3) x V_ph (stiff source: no drops)
    assert np.abs(during) == pytest.approx([0.0, math.sqrt(3) * v_ph, math.sqrt(3) * v_ph], abs=0.5)
    assert phasor(sim, sim.site["v_neutral_v"][None, :], 0.13, 0.25)[0] == pytest.approx(-e[0], abs=0.5)
    # the line-to-line voltages the motor sees do not change
    assert np.abs(_ll(during)) == pytest.approx(np.abs(_ll(before)), rel=1e-4)
    ev = [x for x in sim.truth["events"] if x["kind"] == "ground_fault"]
    assert len(ev) == 1 and ev[0]["phase"] == "A" and ev[0]["end_s"] is None
    assert sim.truth["site"]["voltage_reference"].startswith("ground")


@pytest.mark.parametrize("c0_uf", [0.0, 3.0])
def test_resistance_grounded_fault_follows_kirchhoff_at_ground(c0_uf):
    rn, rf = 20.0, 5.0
    sim = simulate_site({"logger_at": "feeder", "grounding": {"kind": "resistance", "resistance_ohm": rn, "charging_uf_per_phase": c0_uf,
                                                              "faults": [{"line": "B", "start_s": 0.1, "end_s": 0.2, "resistance_ohm": rf}]}},
                        duration_s=0.3)
    e = phasor(sim, sim.emf_v, 0.02, 0.1)
    # KCL at ground: V_N / R_n + j w C0 sum(E_j + V_N) + (E_b + V_N) / R_f = 0, balanced E -> sum E_j = 0
    want = -(e[1] / rf) / (1 / rn + 1 / rf + 3j * W * c0_uf * 1e-6)
    got = phasor(sim, sim.site["v_neutral_v"][None, :], 0.12, 0.2)[0]
    assert got == pytest.approx(want, rel=1e-4)
    if c0_uf == 0:
        assert abs(got) == pytest.approx(abs(e[1]) * rn / (rn + rf), rel=1e-4)  # a plain divider
    assert np.abs(phasor(sim, sim.site["v_neutral_v"][None, :], 0.25, 0.3))[0] < 1e-3  # cleared: the resistor drains the neutral


def test_ground_fault_errors():
    with pytest.raises(CaptureReadError, match="short circuit"):
        scenario_from_dict(scenario_dict({"grounding": {"kind": "solid", "faults": [{"line": "A", "start_s": 0.1, "end_s": 0.2}]}}), "bad.toml", SAMPLES)
    with pytest.raises(CaptureReadError, match="resistance_ohm > 0"):
        scenario_from_dict(scenario_dict({"grounding": {"kind": "resistance"}}), "bad.toml", SAMPLES)
    with pytest.raises(CaptureReadError, match="unknown key"):
        scenario_from_dict(scenario_dict({"grounding": {"kind": "ungrounded", "petersen": True}}), "bad.toml", SAMPLES)
