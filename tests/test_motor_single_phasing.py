"""Open line (single phasing) and locked rotor: published physics and facts of the trade."""

from __future__ import annotations

import math

import numpy as np
import pytest

from tests._motor_support import KRAUSE_3HP, KRAUSE_50HP, fundamental_phasor, last_cycles, rms, simulate

A = np.exp(2j * np.pi / 3)


def fortescue(pa: complex, pb: complex, pc: complex) -> tuple[complex, complex, complex]:
    # Fortescue, AIEE 1918: X0 = (Xa+Xb+Xc)/3, X1 = (Xa + a Xb + a^2 Xc)/3, X2 = (Xa + a^2 Xb + a Xc)/3
    return (pa + pb + pc) / 3, (pa + A * pb + A * A * pc) / 3, (pa + A * A * pb + A * pc) / 3


def locked(machine: dict, v_ll: float, closed: str) -> tuple[float, float, np.ndarray]:
    """(RMS line current of a closed line [A], mean torque [N m], torque samples) at standstill, held."""
    sim = simulate(machine, v_ll, duration_s=0.6, scenario={"locked_rotor": True},
                   initial={"state": "rest"}, switches={"closed_at_start": closed})
    sl = last_cycles(sim, 12)
    j = "ABC".index(closed[0])
    return float(rms(sim.i_line_a[j, sl])), float(np.mean(sim.torque_n_m[sl])), sim.torque_n_m[sl]


def test_single_phase_locked_rotor_current_is_sqrt3_over_2_of_three_phase() -> None:
    # REFERENCES.md [calc]: I_1ph = V_LL/(Z1 + Z2) with Z1 = Z2 at standstill, so
    # I_1ph / I_3ph = sqrt(3)/2; on the Krause 3 hp machine 56.93 A / 65.74 A.
    i3, _, _ = locked(KRAUSE_3HP, 220.0, "ABC")
    i1, _, _ = locked(KRAUSE_3HP, 220.0, "AB")
    assert i3 == pytest.approx(65.74, abs=0.01)
    assert i1 == pytest.approx(56.93, abs=0.01)
    assert i1 / i3 == pytest.approx(math.sqrt(3) / 2, rel=1e-4)


def test_no_mean_torque_at_standstill_single_phased() -> None:
    # A single-phased machine at standstill has I1 = -I2 (REFERENCES.md [derived]): the field
    # pulsates along one axis and the rotor flux stays aligned with it, so there is no
    # starting torque at all, not even a pulsating one (common practice, no source).
    _, t3, _ = locked(KRAUSE_3HP, 220.0, "ABC")
    i1, t1, samples = locked(KRAUSE_3HP, 220.0, "BC")
    assert t3 > 10.0  # the three-phase machine does have locked-rotor torque
    assert i1 > 50.0  # while the single-phased one draws locked-rotor current
    assert abs(t1) < 1e-6 * t3
    assert np.max(np.abs(samples)) < 1e-6 * t3


@pytest.mark.parametrize("direction", [1.0, -1.0])
def test_single_phased_motor_accelerates_in_the_pushed_direction(direction: float) -> None:
    # Pushed to 20 % of synchronous speed in either direction, a single-phased motor runs up
    # in that direction (the pulsating field splits into two rotating fields; common
    # practice, no source for the numbers).
    sim = simulate(KRAUSE_3HP, 220.0, duration_s=1.5, initial={"state": "coasting", "speed_rpm": direction * 360.0},
                   switches={"closed_at_start": "AB"}, load={"kind": "constant", "torque_n_m": 1.0})
    w = sim.omega_m_rad_s * direction
    assert w[-1] > 0.85 * 2 * math.pi * 30  # beyond 85 % of synchronous speed, in the pushed direction
    assert np.all(np.diff(w[:: 600]) > 0)  # and it got there by accelerating all the way


def test_mirror_symmetry_of_the_push() -> None:
    # The single-phased machine is symmetric in the two directions: pushing either way
    # gives mirror-image speed curves (common practice, no source).
    fw = simulate(KRAUSE_3HP, 220.0, duration_s=0.8, initial={"state": "coasting", "speed_rpm": 400.0},
                  switches={"closed_at_start": "AB"})
    bw = simulate(KRAUSE_3HP, 220.0, duration_s=0.8, initial={"state": "coasting", "speed_rpm": -400.0},
                  switches={"closed_at_start": "AB"})
    assert np.allclose(fw.omega_m_rad_s, -bw.omega_m_rad_s, rtol=1e-4, atol=1e-3)


def _single_phased_run(machine: dict, open_line: str = "C"):
    return simulate(machine, 460.0, duration_s=3.0, load={"kind": "constant", "torque_n_m": 120.0},
                    switches={"ops": [{"line": open_line, "time_s": 0.5, "action": "open"}]})


@pytest.mark.parametrize("open_line", ["A", "B", "C"])
def test_positive_and_negative_sequence_currents_are_equal_with_one_line_open(open_line: str) -> None:
    # Open line: I_open = 0 and the other two are equal and opposite, so I0 = 0 and
    # |I1| = |I2| (Fortescue 1918; REFERENCES.md example Ia = 10/0, Ib = 10/180, Ic = 0
    # -> I1 = 5.774/-30, I2 = 5.774/30).
    p = fortescue(10 + 0j, -10 + 0j, 0j)
    assert abs(p[1]) == pytest.approx(5.774, abs=5e-4) and abs(p[2]) == pytest.approx(5.774, abs=5e-4)
    sim = _single_phased_run(KRAUSE_50HP, open_line)
    sl = last_cycles(sim, 30)
    t = sim.t_s[sl]
    ph = [fundamental_phasor(sim.i_line_a[j, sl], t, 60.0) for j in range(3)]
    i0, i1, i2 = fortescue(*ph)
    assert abs(ph["ABC".index(open_line)]) < 1e-9
    assert abs(i1) > 20.0
    assert abs(i2) == pytest.approx(abs(i1), rel=1e-9)
    assert abs(i0) < 1e-9 * abs(i1)


def test_running_current_rises_when_single_phased() -> None:
    # Same load, one line lost: the two remaining lines carry about sqrt(3) x the current
    # (REFERENCES.md [derived]; secondary sources quote "about twice" to 2.4 x: range).
    sim = _single_phased_run(KRAUSE_50HP, "C")
    before = rms(sim.i_line_a[0, :3000])  # 0 .. 0.5 s: three-phase
    after = rms(sim.i_line_a[0, last_cycles(sim, 30)])
    assert 1.5 < after / before < 2.4
    # the motor keeps turning, at a higher slip (common practice, no source)
    assert 0.9 * 188.5 < sim.omega_m_rad_s[-1] < sim.omega_m_rad_s[2999]


def test_open_terminal_carries_regenerated_voltage_upstream_and_supply_voltage_downstream() -> None:
    # Running single-phased, the back-EMF keeps a voltage on the open terminal (seen by a
    # logger at the motor); a logger on the supply side sees the supply voltage there
    # (common practice, no source).
    up = simulate(KRAUSE_50HP, 460.0, duration_s=2.0, load={"kind": "constant", "torque_n_m": 120.0},
                  switches={"open_point": "upstream", "ops": [{"line": "C", "time_s": 0.5, "action": "open"}]})
    down = simulate(KRAUSE_50HP, 460.0, duration_s=2.0, load={"kind": "constant", "torque_n_m": 120.0},
                    switches={"open_point": "downstream", "ops": [{"line": "C", "time_s": 0.5, "action": "open"}]})
    sl = last_cycles(up, 30)
    vph = 460.0 / math.sqrt(3)
    vc_up = float(rms(up.v_logger_v[2, sl]))
    vc_down = float(rms(down.v_logger_v[2, sl]))
    assert 0.5 * vph < vc_up < 0.97 * vph  # regenerated: substantial but not the full supply voltage
    assert vc_down == pytest.approx(vph, rel=1e-9)  # exactly the source EMF: no current, no drop
    assert float(rms(up.i_line_a[2, sl])) < 1e-9 and float(rms(down.i_line_a[2, sl])) < 1e-9


def test_line_interrupts_at_its_first_current_zero_after_the_command() -> None:
    # An AC switch interrupts at a current zero (common practice, no source): within half a
    # cycle of the command, with the current at zero there.
    sim = _single_phased_run(KRAUSE_50HP, "B")
    (line, cmd, act), = sim.trajectory.interruptions
    assert line == "B" and cmd == 0.5 and 0.5 < act < 0.5 + 1 / 120
    i_b = sim.i_line_smooth_a[1]
    k = int(act * 6000)  # last sample before the interruption
    slope = 1.01 * 2 * math.pi * 60 * np.max(np.abs(i_b[:3000]))  # steepest fall of the sinusoid [A/s], 1 % for the sampled peak
    assert abs(i_b[k]) <= slope * (act - k / 6000)  # the current was heading through zero at act
    assert np.all(np.abs(i_b[k + 1:]) < 1e-9)
    assert np.all(np.sign(i_b[3000:k + 1]) == np.sign(i_b[3000]))  # no earlier zero after the command


def test_delta_winding_currents_single_phased_split_two_thirds_one_third() -> None:
    # Delta motor with one line open (ideal case, no zero-sequence circulating current):
    # the winding across the two live lines carries 2/3 of the line current, the other two
    # 1/3 each (REFERENCES.md [derived]).
    delta = dict(KRAUSE_50HP, connection="delta", rs_ohm=3 * 0.087, xls_ohm=3 * 0.302, xm_ohm=3 * 13.08,
                 xlr_ohm=3 * 0.302, rr_ohm=3 * 0.228)
    sim = _single_phased_run(delta, "A")
    sl = last_cycles(sim, 30)
    i_line = float(rms(sim.i_line_a[1, sl]))
    i_ab, i_bc, i_ca = rms(sim.i_winding_a[:, sl])
    assert i_bc == pytest.approx(2 / 3 * i_line, rel=1e-6)
    assert i_ab == pytest.approx(1 / 3 * i_line, rel=1e-6) and i_ca == pytest.approx(1 / 3 * i_line, rel=1e-6)


def test_delta_with_one_third_impedances_equals_the_star_machine_at_the_terminals() -> None:
    # Delta-star transformation of a balanced load: Z_star = Z_delta / 3 (common practice,
    # no source).  Same line currents, healthy and single-phased.
    star = _single_phased_run(KRAUSE_50HP, "C")
    delta = _single_phased_run(dict(KRAUSE_50HP, connection="delta", rs_ohm=0.261, xls_ohm=0.906, xm_ohm=39.24,
                                    xlr_ohm=0.906, rr_ohm=0.684), "C")
    assert np.allclose(rms(star.i_line_a[:, -6000:]), rms(delta.i_line_a[:, -6000:]), rtol=1e-5)
    assert np.allclose(star.omega_m_rad_s[::100], delta.omega_m_rad_s[::100], rtol=1e-6)


def test_power_balance_while_single_phased() -> None:
    # Energy conservation over whole cycles of steady single-phased running: electrical input
    # = stator and rotor copper losses + mechanical power T_e w_m (stored magnetic and kinetic
    # energy return to the same values each cycle).  Copper loss of power-invariant space
    # vectors is r |i|^2 (Krause et al. ch. 4; common practice).  Checks the torque equation and
    # the constrained stator equation together.
    sim = _single_phased_run(KRAUSE_50HP, "C")
    sl = last_cycles(sim, 60)
    m = sim.scenario.machine
    y = sim.trajectory.states[:, sl]
    i_s2 = y[0] ** 2 + y[1] ** 2
    i_r = (y[2:4] - m.lm_h * y[0:2]) / m.lr_h
    p_in = float(np.mean(np.sum(sim.v_logger_v[:, sl] * sim.i_line_smooth_a[:, sl], axis=0)))
    p_cu = float(np.mean(m.rs_ohm * i_s2 + m.rr_ohm * (i_r[0] ** 2 + i_r[1] ** 2)))
    p_mech = float(np.mean(sim.torque_n_m[sl] * sim.omega_m_rad_s[sl]))
    assert p_in > 10e3
    assert p_in == pytest.approx(p_cu + p_mech, rel=2e-4)
