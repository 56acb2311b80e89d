"""Loads, starts and rotation: the mechanical side of the model."""

from __future__ import annotations

import math

import numpy as np
import pytest

from tests._motor_support import KRAUSE_50HP, last_cycles, rms, simulate
from waveforms.errors import CaptureReadError, InvalidParameterError

WS = 2 * math.pi * 30  # synchronous speed of the 4-pole machines at 60 Hz [rad/s]


def test_quadratic_load_operating_point_obeys_newton() -> None:
    # Steady running: mean electromagnetic torque = load torque + friction
    # (J dw/dt = T_e - T_L - B w with dw/dt = 0; Krause et al. ch. 4 mechanical equation).
    sim = simulate(dict(KRAUSE_50HP, friction_n_m_s=0.05), 460.0, duration_s=0.5,
                   load={"kind": "quadratic", "torque_n_m": 180.0, "reference_speed_rpm": 1750, "breakaway_n_m": 10.0})
    sl = last_cycles(sim, 12)
    w = float(np.mean(sim.omega_m_rad_s[sl]))
    expected = 180.0 * (w / (1750 * 2 * math.pi / 60)) ** 2 + 10.0 * math.tanh(w / 0.5) + 0.05 * w
    assert float(np.mean(sim.torque_n_m[sl])) == pytest.approx(expected, rel=1e-4)


def test_jam_stalls_the_motor_at_the_locked_rotor_current() -> None:
    # A resisting torque beyond breakdown stops the rotor; the stalled motor then draws what a
    # held rotor draws (no counter-EMF; common practice, no source).
    jam = simulate(KRAUSE_50HP, 460.0, duration_s=2.0, load={"kind": "constant", "torque_n_m": 150.0,
                                                             "jam": {"time_s": 0.5, "torque_n_m": 1500.0}})
    held = simulate(KRAUSE_50HP, 460.0, duration_s=0.6, scenario={"locked_rotor": True}, initial={"state": "rest"})
    (stall,) = [e for e in jam.truth["events"] if e["kind"] == "stall"]
    assert 0.5 < stall["start_s"] < 1.0 and stall["end_s"] is None
    i_jam = rms(jam.i_line_a[:, last_cycles(jam, 12)])
    i_held = rms(held.i_line_a[:, last_cycles(held, 12)])
    assert np.allclose(i_jam, i_held, rtol=5e-3)
    assert abs(jam.omega_m_rad_s[-1]) < 0.01 * WS


def test_load_step_slows_the_motor() -> None:
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=1.5, load={"kind": "constant", "torque_n_m": 100.0,
                                                            "steps": [{"time_s": 0.5, "torque_n_m": 200.0}]})
    assert sim.omega_m_rad_s[-1] < sim.omega_m_rad_s[2999] - 1.0
    assert float(np.mean(sim.torque_n_m[last_cycles(sim, 12)])) == pytest.approx(200.0, rel=2e-3)


def test_direct_on_line_start_runs_up_and_reports_the_start() -> None:
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=2.5, initial={"state": "rest"},
                   switches={"closed_at_start": "", "ops": [{"line": x, "time_s": 0.2, "action": "close"} for x in "ABC"]},
                   load={"kind": "quadratic", "torque_n_m": 150.0, "reference_speed_rpm": 1750})
    (start,) = [e for e in sim.truth["events"] if e["kind"] == "start"]
    assert start["start_s"] == 0.2 and start["outcome"] == "accelerated"
    k = int(round(start["end_s"] * 6000))
    assert sim.omega_m_rad_s[k - 1] < 0.9 * WS <= sim.omega_m_rad_s[k]
    # the start draws several times the running current (common practice, no source)
    first = rms(sim.i_line_a[0, int(0.25 * 6000):int(0.35 * 6000)])
    final = rms(sim.i_line_a[0, last_cycles(sim, 12)])
    assert first > 4 * final


def test_started_in_reverse_the_motor_turns_round() -> None:
    # Energised while turning backwards, a three-phase motor brakes, reverses and runs up
    # forwards (plugging; common practice, no source).
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=3.0, initial={"state": "coasting", "speed_rpm": -900.0},
                   load={"kind": "constant", "torque_n_m": 20.0})
    assert sim.omega_m_rad_s[0] < 0 and sim.omega_m_rad_s[-1] > 0.9 * WS


def test_reversed_phase_sequence_runs_the_motor_backwards() -> None:
    # Swapping two lines (A-C-B supply) reverses the rotating field (common practice, no source).
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=2.5, initial={"state": "rest"}, supply={"sequence": "ACB"},
                   load={"kind": "constant", "torque_n_m": 20.0})
    assert sim.omega_m_rad_s[-1] < -0.9 * WS


def test_single_phased_start_does_not_turn() -> None:
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=1.0, initial={"state": "rest"},
                   switches={"closed_at_start": "", "ops": [{"line": "A", "time_s": 0.1, "action": "close"},
                                                          {"line": "B", "time_s": 0.1, "action": "close"}]},
                   load={"kind": "quadratic", "torque_n_m": 150.0, "reference_speed_rpm": 1750, "breakaway_n_m": 5.0})
    assert np.max(np.abs(sim.omega_m_rad_s)) < 1e-6 * WS
    kinds = {e["kind"]: e for e in sim.truth["events"]}
    assert kinds["start"]["outcome"] == "failed" and kinds["stall"]["start_s"] == 0.1
    assert kinds["open_phase"]["phase"] == "C"


def test_switch_operation_outside_the_capture_is_refused() -> None:
    with pytest.raises(CaptureReadError, match=r"key switches.ops\[0\].time_s: 0.0 s is outside the capture \(0, 0.2\) s"):
        simulate(KRAUSE_50HP, 460.0, duration_s=0.2, initial={"state": "rest"},
                 switches={"closed_at_start": "", "ops": [{"line": "A", "time_s": 0.0, "action": "close"}]})
    from waveforms.sim.dynamics import SwitchOp, integrate
    from waveforms.sim.loads import Load
    from waveforms.sim.machine import KRAUSE_50HP as M
    from waveforms.sim.supply import Supply

    with pytest.raises(InvalidParameterError, match=r"switch operation open B at -0.5 s is not after t = 0"):
        integrate(M, Supply(voltage_ll_v=460.0), Load(), np.arange(100) / 1000.0, np.zeros(6), switch_ops=[SwitchOp("B", -0.5, "open")])


def test_machine_table_errors_name_the_key() -> None:
    with pytest.raises(CaptureReadError, match=r"key poles_count: unknown machine key"):
        simulate(dict(KRAUSE_50HP, poles_count=4), 460.0, duration_s=0.2)
    with pytest.raises(CaptureReadError, match=r"machine rs_ohm=-1.0 must be a positive number"):
        simulate(dict(KRAUSE_50HP, rs_ohm=-1.0), 460.0, duration_s=0.2)
