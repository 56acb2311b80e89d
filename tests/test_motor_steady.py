"""Balanced steady state of the dynamic model against the textbook T-equivalent circuit.

The reference solution is computed here, independently of the package, with
numpy complex arithmetic on the per-phase T-equivalent circuit (Krause,
Wasynczuk & Sudhoff, Analysis of Electric Machinery and Drive Systems, 2nd ed.,
ch. 4 steady-state equivalent circuit; equation number from memory):

    Z = rs + j Xls + (j XM || (r'r/s + j X'lr)),  I = V/Z,
    T = 3 (P/2) |I'r|^2 r'r / (s w_e).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from tests._motor_support import KRAUSE_3HP, fundamental_phasor, last_cycles, rms, simulate, speed_rpm


def t_circuit(m: dict, v_ll: float, f_hz: float, slip: float) -> tuple[float, float, float]:
    """(line current RMS [A], torque [N m], power factor) of the T circuit at ``slip``."""
    k = f_hz / m["base_frequency_hz"]
    v = v_ll / math.sqrt(3.0)
    zr = m["rr_ohm"] / slip + 1j * m["xlr_ohm"] * k
    zm = 1j * m["xm_ohm"] * k
    z = m["rs_ohm"] + 1j * m["xls_ohm"] * k + zm * zr / (zm + zr)
    i = v / z
    ir = i * zm / (zm + zr)
    we = 2 * math.pi * f_hz
    torque = 3 * (m["poles"] / 2) * abs(ir) ** 2 * m["rr_ohm"] / (slip * we)
    return abs(i), torque, math.cos(math.atan2(i.imag, i.real))


def test_reference_values_of_the_3hp_machine() -> None:
    # REFERENCES.md [calc]: Krause 3 hp machine at s = 0.05 -> 8.84 A, 14.0 N m, pf 0.815
    i, t, pf = t_circuit(KRAUSE_3HP, 220.0, 60.0, 0.05)
    assert i == pytest.approx(8.84, abs=0.005)
    assert t == pytest.approx(14.0, abs=0.05)
    assert pf == pytest.approx(0.815, abs=0.0005)


@pytest.mark.parametrize("slip", [0.05, 0.02, 0.3])
def test_dynamic_model_at_constant_slip_equals_t_circuit(slip: float) -> None:
    # Speed held (infinite inertia) at the slip; after the electrical transient decays
    # (rotor time constant about 0.09 s, 1.2 s simulated) the model must equal the T circuit.
    sim = simulate(KRAUSE_3HP, 220.0, duration_s=1.2, scenario={"locked_rotor": True},
                   initial={"state": "coasting", "speed_rpm": speed_rpm(slip)})
    sl = last_cycles(sim, 12)
    i_ref, t_ref, pf_ref = t_circuit(KRAUSE_3HP, 220.0, 60.0, slip)
    i_rms = rms(sim.i_line_a[:, sl])
    assert np.allclose(i_rms, i_ref, rtol=2e-4)
    assert float(np.mean(sim.torque_n_m[sl])) == pytest.approx(t_ref, rel=2e-4)
    t = sim.t_s[sl]
    va = fundamental_phasor(sim.v_logger_v[0, sl], t, 60.0)
    ia = fundamental_phasor(sim.i_line_a[0, sl], t, 60.0)
    assert math.cos(np.angle(ia / va)) == pytest.approx(pf_ref, abs=2e-4)


def test_air_gap_power_balance() -> None:
    # Power into the stator minus stator copper loss is the air-gap power T_e w_e/(P/2)
    # (Krause et al. ch. 4 steady state; any machines text; from memory).
    slip = 0.05
    sim = simulate(KRAUSE_3HP, 220.0, duration_s=1.2, scenario={"locked_rotor": True},
                   initial={"state": "coasting", "speed_rpm": speed_rpm(slip)})
    sl = last_cycles(sim, 12)
    p_in = float(np.mean(np.sum(sim.v_logger_v[:, sl] * sim.i_line_a[:, sl], axis=0)))
    p_cu = float(np.sum(rms(sim.i_line_a[:, sl]) ** 2)) * KRAUSE_3HP["rs_ohm"]
    p_ag = float(np.mean(sim.torque_n_m[sl])) * 2 * math.pi * 60.0 / 2
    assert p_in - p_cu == pytest.approx(p_ag, rel=1e-3)


def test_free_running_motor_settles_where_the_load_torque_is_met() -> None:
    # Starting from the computed operating point the free rotor must stay there: the mean
    # electromagnetic torque equals the load torque (Newton's second law, J dw/dt = T_e - T_L).
    sim = simulate(KRAUSE_3HP, 220.0, duration_s=1.0, load={"kind": "constant", "torque_n_m": 10.0})
    sl = last_cycles(sim, 30)
    assert float(np.mean(sim.torque_n_m[sl])) == pytest.approx(10.0, rel=1e-3)
    assert np.ptp(sim.omega_m_rad_s) < 1e-3
