"""A second induction machine on the motor's feeder (waveforms.sim.site / network) against circuit theory.

Sources: Kirchhoff's current law at the bus (feeder current = sum of the branch currents); the power
balance of a network (Tellegen's theorem: the source's power equals the power taken by the branches
plus the series-resistance losses, the stored magnetic energy returning to the same value over whole
cycles in steady state; any circuits textbook); Newton's second law on each shaft (steady speed: mean
electromagnetic torque = load torque + friction; Krause, Wasynczuk & Sudhoff 2002, ch. 4, from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from _site_support import phasor, simulate_site, window

SECOND = {"machine": "sludge4.machine.toml", "load": {"kind": "constant", "torque_n_m": 120.0}, "name": "sludge pump 4"}
IMP = {"source_r_ohm": 0.01, "source_x_ohm": 0.06}


@pytest.fixture(scope="module")
def healthy():
    return simulate_site({"logger_at": "feeder", "cable_r_ohm": 0.02, "cable_x_ohm": 0.01, "second_motor": SECOND},
                         duration_s=0.25, supply=IMP)


@pytest.fixture(scope="module")
def single_phased():
    return simulate_site({"logger_at": "feeder", "second_motor": SECOND}, duration_s=0.4, supply=IMP,
                         switches={"ops": [{"line": "B", "time_s": 0.1, "action": "open"}]})


def test_feeder_current_is_the_sum_of_the_branch_currents(healthy):
    s = healthy.site
    # Kirchhoff's current law at bus S, sample by sample
    assert np.allclose(s["i_feeder_a"], s["i_branch_a"] + s["i_second_motor_a"], atol=1e-4)
    assert np.allclose(s["i_branch_a"], healthy.i_line_smooth_a, atol=1e-4)  # no bank: the cable carries the motor current
    # the logger on the feeder records the sum
    i_log = np.vstack([healthy.signals[f"I{c}"] for c in "abc"])
    assert np.abs(phasor(healthy, i_log, 0.1, 0.25)) == pytest.approx(np.abs(phasor(healthy, s["i_feeder_a"], 0.1, 0.25)), rel=2e-3)


def test_power_balance_of_the_feeder(healthy):
    sc = healthy.scenario
    sl = window(healthy, 0.05, 0.05 + 12 / 60)  # whole cycles: the stored energy returns to its value
    s = healthy.site
    i_f, i_c = s["i_feeder_a"][:, sl], s["i_branch_a"][:, sl]
    p_emf = np.mean(np.sum(healthy.emf_v[:, sl] * i_f, axis=0))
    p_bus = np.mean(np.sum(s["v_bus_v"][:, sl] * i_f, axis=0))
    loss_src = sc.supply.source_r_ohm * np.mean(np.sum(i_f**2, axis=0))
    assert p_emf == pytest.approx(p_bus + loss_src, rel=1e-4)
    p1 = np.mean(np.sum(healthy.v_motor_v[:, sl] * healthy.i_line_smooth_a[:, sl], axis=0))
    p2 = np.mean(np.sum(s["v_bus_v"][:, sl] * s["i_second_motor_a"][:, sl], axis=0))
    loss_cable = sc.site.cable_r_ohm * np.mean(np.sum(i_c**2, axis=0))
    assert p_bus == pytest.approx(p1 + p2 + loss_cable, rel=1e-4)
    assert 30e3 < p1 < 50e3 and 15e3 < p2 < 40e3  # both machines motoring at their loads


def test_both_machines_start_in_torque_balance(healthy):
    sl = window(healthy, 0.05, 0.25)
    w2 = healthy.site["omega2_rad_s"][sl]
    assert np.ptp(w2) < 0.05 and np.ptp(healthy.omega_m_rad_s[sl]) < 0.05  # steady at t = 0: no run-up
    m2 = healthy.scenario.site.second_motor.machine
    assert np.mean(healthy.site["torque2_n_m"][sl]) == pytest.approx(120.0 + m2.friction_n_m_s * np.mean(w2), rel=2e-3)


def test_single_phased_motor_leaves_the_feeder_line_carrying_the_other_motor(single_phased):
    sim = single_phased
    s = sim.site
    after = (0.3, 0.4)
    assert np.allclose(s["i_feeder_a"], s["i_branch_a"] + s["i_second_motor_a"], atol=1e-4)
    assert np.abs(phasor(sim, s["i_branch_a"], *after))[1] < 1e-6
    i_feed = phasor(sim, s["i_feeder_a"], *after)
    i_two = phasor(sim, s["i_second_motor_a"], *after)
    assert abs(i_feed[1] - i_two[1]) < 1e-3 and abs(i_feed[1]) > 20.0  # the "open" line is not dead at the feeder
    ev = [e for e in sim.truth["events"] if e["kind"] == "open_phase"]
    assert len(ev) == 1 and ev[0]["phase"] == "B" and ev[0]["location"] == "downstream" and ev[0]["where"] == "motor switch"
    assert sim.truth["site"]["logger_currents"].endswith("the second motor")


def test_logger_on_the_other_branch():
    sim = simulate_site({"logger_at": "second_motor", "second_motor": SECOND}, duration_s=0.12, supply=IMP)
    i_log = np.vstack([sim.signals[f"I{c}"] for c in "abc"])
    assert np.abs(phasor(sim, i_log, 0.02, 0.12)) == pytest.approx(np.abs(phasor(sim, sim.site["i_second_motor_a"], 0.02, 0.12)), rel=2e-3)
    assert sim.truth["capture"]["open_point"] == "other_branch"
