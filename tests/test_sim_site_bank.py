"""The simulator's capacitor banks (waveforms.sim.site / network) against circuit theory.

Sources: the capacitor's current ``i = C dv/dt`` (phasor ``I = j w C V``), three-phase reactive power
``Q = sqrt(3) V_LL I`` and the balanced star-delta transformation ``C_Y = 3 C_delta`` (any circuits
textbook, e.g. Alexander & Sadiku, *Fundamentals of Electric Circuits*, chapters on capacitors, AC power
and balanced three-phase circuits; chapter numbers from memory); Kirchhoff's current law at the
bank's node; an ideal capacitor absorbs no mean real power (same textbooks).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from _site_support import SAMPLES, phasor, scenario_dict, simulate_site, window
from waveforms.errors import CaptureReadError
from waveforms.sim.scenario import scenario_from_dict

W = 2 * math.pi * 60.0
V_LL = 460.0
OPEN_C = {"ops": [{"line": "C", "time_s": 0.1, "action": "open"}]}


@pytest.mark.parametrize("connection", ["star", "delta"])
def test_stiff_bus_bank_current_is_v_omega_c(connection):
    kvar = 15.0
    sim = simulate_site({"logger_at": "feeder", "capacitor": [{"at": "bus", "connection": connection, "kvar": kvar}]}, duration_s=0.1)
    bank = sim.truth["site"]["capacitor_banks"][0]
    c_unit = bank["unit_capacitance_uf"] * 1e-6
    i = np.abs(phasor(sim, sim.site["i_bank_bus_a"], 0.02, 0.1))
    # textbook: Q = sqrt(3) V_LL I_line -> I_line from the rating alone
    assert np.allclose(i, kvar * 1e3 / (math.sqrt(3) * V_LL), rtol=1e-4)
    if connection == "star":
        # star leg: I = V_ph w C
        assert np.allclose(i, V_LL / math.sqrt(3) * W * c_unit, rtol=1e-4)
    else:
        # delta leg carries V_LL w C; Kirchhoff at a corner of a balanced delta: line = sqrt(3) x leg current
        assert np.allclose(i, math.sqrt(3) * V_LL * W * c_unit, rtol=1e-4)
    # I = j w C V: the bank's current leads the bus voltage by 90 degrees
    v = phasor(sim, sim.site["v_bus_v"], 0.02, 0.1)
    ib = phasor(sim, sim.site["i_bank_bus_a"], 0.02, 0.1)
    assert np.allclose(np.degrees(np.angle(ib / v)), 90.0, atol=0.01)


def test_star_and_delta_banks_of_one_rating_draw_the_same_line_currents():
    # balanced star-delta transformation: C_Y = 3 C_delta gives identical line currents
    got = {}
    for conn in ("star", "delta"):
        sim = simulate_site({"logger_at": "feeder", "capacitor": [{"at": "bus", "connection": conn, "fla_pu": 0.3}]},
                            duration_s=0.1, supply={"source_r_ohm": 0.01, "source_x_ohm": 0.06})
        got[conn] = sim.site["i_bank_bus_a"]
        caps = sim.truth["site"]["capacitor_banks"][0]
        got[conn + "_c"] = caps["unit_capacitance_uf"]
    assert np.allclose(got["star"], got["delta"], atol=1e-6)
    assert got["star_c"] == pytest.approx(3 * got["delta_c"], rel=1e-6)


def test_stiff_bus_bank_keeps_its_current_on_the_open_line_and_adds_to_the_feeder():
    sim = simulate_site({"logger_at": "feeder", "capacitor": [{"at": "bus", "connection": "delta", "fla_pu": 0.3}]},
                        duration_s=0.3, switches=OPEN_C)
    s = sim.site
    # Kirchhoff's current law at the bus, sample by sample: feeder = motor branch + bank
    assert np.allclose(s["i_feeder_a"], s["i_branch_a"] + s["i_bank_bus_a"], atol=1e-9)
    before, after = np.abs(phasor(sim, s["i_bank_bus_a"], 0.02, 0.1)), np.abs(phasor(sim, s["i_bank_bus_a"], 0.2, 0.3))
    # stiff source: the bank's current depends on the bus voltage only, so the motor's open line does not change it
    assert np.allclose(before, after, rtol=1e-6) and np.allclose(before, 0.3 * 58.4, rtol=1e-4)
    feeder_after = np.abs(phasor(sim, s["i_feeder_a"], 0.2, 0.3))
    assert feeder_after[2] == pytest.approx(after[2], rel=1e-3)  # the open line carries the bank's current, not zero
    assert np.abs(phasor(sim, s["i_branch_a"], 0.2, 0.3))[2] < 1e-6
    # the logger at the feeder records it
    assert sim.signals["Ic"][window(sim, 0.2, 0.3)].std() > 10.0


def test_bus_bank_behind_source_impedance_obeys_c_dv_dt():
    # behind an impedance the bank is a network node: check i = C_Y dv/dt against the bus voltage's numerical derivative
    sim = simulate_site({"logger_at": "feeder", "capacitor": [{"at": "bus", "connection": "star", "fla_pu": 0.3}]},
                        duration_s=0.25, rate_hz=40000.0, supply={"source_r_ohm": 0.01, "source_x_ohm": 0.06}, switches=OPEN_C)
    cy = sim.truth["site"]["capacitor_banks"][0]["star_equivalent_uf"] * 1e-6
    v = sim.site["v_bus_v"]
    v = v - v.mean(axis=0)
    dvdt = np.gradient(v, sim.t_s, axis=1)
    for t0, t1 in ((0.03, 0.09), (0.17, 0.25)):
        want = phasor(sim, cy * dvdt, t0, t1)
        got = phasor(sim, sim.site["i_bank_bus_a"], t0, t1)
        assert np.allclose(got, want, rtol=2e-3, atol=2e-3)
    # an ideal capacitor takes no mean real power: feeder power = branch power at the bus
    sl = window(sim, 0.17, 0.25)
    p_feed = np.mean(np.sum(sim.site["v_bus_v"][:, sl] * sim.site["i_feeder_a"][:, sl], axis=0))
    p_branch = np.mean(np.sum(sim.site["v_bus_v"][:, sl] * sim.site["i_branch_a"][:, sl], axis=0))
    assert abs(p_feed - p_branch) < 1e-3 * p_branch


def test_bank_at_motor_terminals_is_fed_by_the_regenerated_voltage():
    sim = simulate_site({"logger_at": "motor", "cable_r_ohm": 0.01, "cable_x_ohm": 0.03,
                         "capacitor": [{"at": "motor", "connection": "delta", "fla_pu": 0.3}]},
                        duration_s=0.3, rate_hz=20000.0, switches=OPEN_C)
    s = sim.site
    # Kirchhoff at the terminals: cable current = motor current + bank current
    assert np.allclose(s["i_branch_a"], sim.i_line_smooth_a + s["i_bank_motor_a"], atol=1e-9)
    after = (0.2, 0.3)
    assert np.abs(phasor(sim, s["i_branch_a"], *after))[2] < 1e-6  # the open line upstream carries nothing
    i_mot = phasor(sim, sim.i_line_smooth_a, *after)
    i_bank = phasor(sim, s["i_bank_motor_a"], *after)
    # ... so on that line the bank's current circulates through the motor: i_motor,C = -i_bank,C, not zero
    assert abs(i_mot[2] + i_bank[2]) < 1e-6 and abs(i_mot[2]) > 5.0
    # the bank obeys I = j w C_Y V at the motor terminals, V the regenerated voltage of the open terminal included
    cy = sim.truth["site"]["capacitor_banks"][0]["star_equivalent_uf"] * 1e-6
    vt = sim.v_motor_v - sim.v_motor_v.mean(axis=0)
    assert np.allclose(i_bank, 1j * W * cy * phasor(sim, vt, *after), rtol=5e-3, atol=0.05)
    # the logger at the motor records that current on the open line
    assert np.abs(phasor(sim, np.vstack([sim.signals["Ia"], sim.signals["Ib"], sim.signals["Ic"]]), *after))[2] > 5.0


@pytest.mark.parametrize("site, problem", [
    ({"capacitor": [{"at": "bus", "kvar": 10, "fla_pu": 0.2}]}, "exactly one of kvar and fla_pu"),
    ({"capacitor": [{"at": "attic", "kvar": 10}]}, "must be one of"),
    ({"capacitor": [{"at": "bus", "connection": "zigzag", "kvar": 10}]}, "'delta' or 'star'"),
    ({"capacitor": [{"at": "motor", "kvar": 10}]}, "cable_x_ohm > 0"),
    ({"capacitor": [{"at": "bus", "kvar": 10, "colour": "grey"}]}, "unknown key"),
    ({"logger_at": "roof"}, "logger_at"),
])
def test_bank_scenario_errors_are_clear(site, problem):
    with pytest.raises(CaptureReadError, match=problem):
        scenario_from_dict(scenario_dict(site), "bad.toml", SAMPLES)


def test_bank_in_pu_of_fla_needs_a_nameplate():
    with pytest.raises(CaptureReadError, match="needs scenario.nameplate"):
        scenario_from_dict(scenario_dict({"capacitor": [{"at": "bus", "fla_pu": 0.2}]}, nameplate=False), "bad.toml", SAMPLES)


def test_open_point_contradicting_the_logger_position_is_refused():
    d = scenario_dict({"logger_at": "feeder"}, switches={"open_point": "upstream"})
    with pytest.raises(CaptureReadError, match="contradicts site logger_at"):
        scenario_from_dict(d, "bad.toml", SAMPLES)
