"""The simulator's upstream delta-wye transformer (waveforms.sim.site / network) against transformer theory.

Sources: IEC 60076-1 vector groups (clock-hour notation: the low-voltage phasor lags the high-voltage
one by the clock number x 30 deg, so Dyn11 leads by 30 deg and Dyn1 lags by 30 deg; from memory); the
ideal transformer's voltage ratio and ampere-turn balance and the delta winding's connection (any
electrical machines textbook, e.g. Chapman, *Electric Machinery Fundamentals*, chapter on transformers,
from memory).  The open-primary results are derived in the tests from the winding connection.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from _site_support import SAMPLES, phasor, scenario_dict, simulate_site, window
from waveforms.errors import CaptureReadError
from waveforms.sim.scenario import scenario_from_dict

V_PRIM, V_SEC = 4160.0, 460.0
UNLOADED = {"initial": {"state": "rest"}, "switches": {"closed_at_start": ""}}  # the motor's switch open throughout


def _transformer(group="Dyn11", **kw):
    return {"kva": 300, "primary_voltage_ll_v": V_PRIM, "secondary_voltage_ll_v": V_SEC, "vector_group": group, **kw}


def _ll(p):
    return np.array([p[0] - p[1], p[1] - p[2], p[2] - p[0]])


@pytest.mark.parametrize("group, shift_deg", [("Dyn11", 30.0), ("Dyn1", -30.0)])
def test_ratio_and_phase_shift_on_a_balanced_supply(group, shift_deg):
    sim = simulate_site({"logger_at": "feeder", "transformer": _transformer(group)}, duration_s=0.1,
                        supply={"voltage_ll_v": V_PRIM}, **UNLOADED)
    v_sec = phasor(sim, sim.site["v_bus_v"], 0.02, 0.1)
    e = phasor(sim, sim.emf_v, 0.02, 0.1)
    # rated ratio, unloaded (the magnetising current's drop in the leakage impedance is ~0.05 %)
    assert np.abs(_ll(v_sec)) / np.abs(_ll(e)) == pytest.approx(np.full(3, V_SEC / V_PRIM), rel=1e-3)
    # IEC 60076-1 clock notation: Dyn11 -> the secondary leads by 30 deg, Dyn1 -> lags by 30 deg
    d = np.degrees(np.angle(v_sec / e))
    assert np.allclose(d, shift_deg, atol=0.05)


def test_open_primary_line_unloaded_secondary_voltages_follow_the_winding_connection():
    sim = simulate_site({"logger_at": "feeder", "transformer": _transformer("Dyn11", closed_at_start="BC")}, duration_s=0.1,
                        supply={"voltage_ll_v": V_PRIM}, **UNLOADED)
    e = phasor(sim, sim.emf_v, 0.02, 0.1)
    v_sec = phasor(sim, sim.site["v_bus_v"], 0.02, 0.1)
    # Derivation: with primary line A open, the delta windings A-B and C-A are in series across C-B; unloaded, with equal
    # magnetising impedances, each takes half: w_AB = w_CA = (V_C - V_B)/2 = -V_BC/2, while w_BC = V_BC.  Dyn11 puts
    # secondary winding a on A-B, b on B-C, c on C-A, with the turns ratio n = V_LL,prim / V_ph,sec.
    n = V_PRIM / (V_SEC / math.sqrt(3))
    v_bc = e[1] - e[2]
    u = np.array([-v_bc / 2, v_bc, -v_bc / 2]) / n
    want = _ll(u)  # = (-1.5, +1.5, 0) x V_BC / n: two line-to-line voltages at 86.6 % of rated, one at zero
    got = _ll(v_sec)
    assert np.allclose(got, want, rtol=2e-3, atol=0.5)
    assert np.abs(got) / V_SEC == pytest.approx([math.sqrt(3) / 2, math.sqrt(3) / 2, 0.0], abs=3e-3)


def test_open_primary_line_loaded_secondary_currents_split_one_two_one():
    sim = simulate_site({"logger_at": "motor", "transformer": _transformer("Dyn11", ops=[{"line": "A", "time_s": 0.1, "action": "open"}])},
                        duration_s=0.35, supply={"voltage_ll_v": V_PRIM})
    s = sim.site
    sl = window(sim, 0.15, 0.35)
    i = s["i_feeder_a"][:, sl]
    # Derivation: primary line A open -> i_A = i_AB - i_CA = 0, so the windings A-B and C-A carry the same current;
    # ampere-turn balance puts the same current in secondary windings a and c; no neutral current (three-wire loads)
    # leaves b = -(a + c) = -2 a: the 2:1:1 split, with no dead line on the secondary
    scale = np.max(np.abs(i))
    assert np.allclose(i[0], i[2], atol=1e-5 * scale) and np.allclose(i[1], -2 * i[0], atol=1e-5 * scale)
    assert np.abs(phasor(sim, s["i_primary_a"], 0.15, 0.35))[0] < 1e-6
    assert np.abs(phasor(sim, sim.i_line_smooth_a, 0.15, 0.35)).min() > 20.0
    ev = [e for e in sim.truth["events"] if e["kind"] == "open_phase"]
    assert len(ev) == 1 and ev[0]["phase"] == "A" and ev[0]["location"] == "transformer_primary"
    assert ev[0]["start_s"] == pytest.approx(sim.truth["site"]["transformer"]["primary_interruptions"][0]["current_zero_s"])


def test_power_balance_through_the_transformer():
    sim = simulate_site({"logger_at": "motor", "transformer": _transformer("Dyn1")}, duration_s=0.25, supply={"voltage_ll_v": V_PRIM})
    sl = window(sim, 0.05, 0.05 + 12 / 60)
    s = sim.site
    p_prim = np.mean(np.sum(sim.emf_v[:, sl] * s["i_primary_a"][:, sl], axis=0))
    p_sec = np.mean(np.sum(s["v_bus_v"][:, sl] * s["i_feeder_a"][:, sl], axis=0))
    loss = sim.scenario.site.transformer.leakage_r_ohm * np.mean(np.sum(s["i_feeder_a"][:, sl] ** 2, axis=0))
    # ideal transformer: no power of its own; the leakage resistance's loss is the difference
    assert p_prim == pytest.approx(p_sec + loss, rel=1e-4)
    # ampere-turns: primary line current = secondary line current x V_sec / V_prim on balanced load
    assert np.abs(phasor(sim, s["i_primary_a"], 0.05, 0.25)) == pytest.approx(
        np.abs(phasor(sim, s["i_feeder_a"], 0.05, 0.25)) * V_SEC / V_PRIM, rel=1e-4)
    assert sim.capture.nominal_voltage_v == V_SEC


@pytest.mark.parametrize("tr, problem", [
    ({"primary_voltage_ll_v": 4160, "secondary_voltage_ll_v": 460}, "site.transformer.kva"),
    (_transformer("Yyn0"), "vector_group"),
    (_transformer(ops=[{"line": "D", "time_s": 1.0, "action": "open"}]), "must be A/B/C"),
    (_transformer(closed_at_start="AX"), "letters from 'ABC'"),
])
def test_transformer_scenario_errors_are_clear(tr, problem):
    with pytest.raises(CaptureReadError, match=problem):
        scenario_from_dict(scenario_dict({"transformer": tr}, supply={"voltage_ll_v": V_PRIM}), "bad.toml", SAMPLES)
