"""The voltage at the motor behind a cable: ``V_term = V_logger - Z I`` (issue 19 item 6).

Sources: Kirchhoff's voltage law along each line's series impedance; the approximate voltage-drop
formula ``dV ~ I (R cos phi + X sin phi)`` per line of IEEE Std 141 (Red Book), voltage-drop chapter
(from memory), as a cross-check; symmetrical components (Fortescue): a symmetrical series impedance
gives ``V2,term = V2 - Z I2``.
"""

from __future__ import annotations

import cmath
import math

import numpy as np
import pytest

from waveforms.analysis import analyze
from waveforms.capture import from_arrays, standard_channels
from waveforms.detect import DetectParams
from waveforms.errors import InvalidParameterError
from waveforms.io import read_capture
from waveforms.motor.terminal import Cable, approximate_drop_v, cable_from_params, terminal_ll_phasors

A = cmath.exp(-2j * math.pi / 3)


def test_phasor_drop_matches_the_hand_calculation_and_the_red_book_approximation():
    # hand calculation: Va = 277 V, Ia = 100 A at 0.85 pf lagging, Z = 0.05 + j0.04 ohm per line
    z, pf = complex(0.05, 0.04), 0.85
    ia = 100 * cmath.exp(-1j * math.acos(pf))
    va_t = 277.0 - z * ia
    v = np.array([277.0, 277.0 * A, 277.0 * A * A])[:, None]
    i = np.array([ia, ia * A, ia * A * A])[:, None]
    vt = terminal_ll_phasors(v, i, "LN", Cable(0.05, 0.04))
    assert vt[0, 0] == pytest.approx(va_t - va_t * A, abs=1e-9)  # Kirchhoff, line by line
    drop_ln = 277.0 - abs(va_t)
    # IEEE 141 approximate formula (from memory): 100 (0.05 x 0.85 + 0.04 x 0.527) = 6.357 V, within 0.05 V of exact
    assert approximate_drop_v(100.0, pf, Cable(0.05, 0.04)) == pytest.approx(6.357, abs=1e-3)
    assert drop_ln == pytest.approx(6.357, abs=0.05)
    # the same set recorded line-to-line gives the same terminal voltages
    v_ll = np.vstack([v[0] - v[1], v[1] - v[2], v[2] - v[0]])
    assert np.allclose(terminal_ll_phasors(v_ll, i, "LL", Cable(0.05, 0.04)), vt)


def test_negative_sequence_at_the_terminal_is_v2_minus_z_i2():
    rng = np.random.default_rng(5)
    v = 277 * np.array([1, A, A * A]) * (1 + 0.03 * rng.normal(size=3))
    i = 80 * np.array([1, A, A * A]) * cmath.exp(-0.5j) * (1 + 0.2 * rng.normal(size=3))
    z = complex(0.08, 0.03)
    vt = terminal_ll_phasors(v[:, None], i[:, None], "LN", Cable(0.08, 0.03))[:, 0]
    a = cmath.exp(2j * math.pi / 3)
    seq2 = lambda x: (x[0] + a * a * x[1] + a * x[2]) / 3  # noqa: E731  Fortescue
    v_ll = np.array([v[0] - v[1], v[1] - v[2], v[2] - v[0]])
    i_ll = np.array([i[0] - i[1], i[1] - i[2], i[2] - i[0]])
    assert seq2(vt) == pytest.approx(seq2(v_ll) - z * seq2(i_ll), abs=1e-9)


def test_cable_from_length_and_bad_combinations():
    c = cable_from_params(DetectParams(cable_length_m=150.0, cable_r_ohm_per_km=0.32, cable_x_ohm_per_km=0.08))
    assert (c.r_ohm, c.x_ohm) == pytest.approx((0.048, 0.012))  # 0.15 km x per-km values
    assert cable_from_params(DetectParams()) is None
    with pytest.raises(InvalidParameterError):
        DetectParams(cable_r_ohm=0.1, cable_length_m=100.0)
    with pytest.raises(InvalidParameterError):
        DetectParams(cable_length_m=100.0)
    assert "cable_r_ohm" not in DetectParams().to_dict()  # no cable: nothing recorded (no external source)


def test_analysis_uses_the_terminal_voltage_for_the_tolerance_check():
    from pathlib import Path

    cap = read_capture(Path(__file__).resolve().parent.parent / "sample_captures" / "healthy_run.h5")
    base = analyze(cap, speed=False)
    res = analyze(cap, speed=False, detect_params=DetectParams(cable_r_ohm=0.1, cable_x_ohm=0.05))
    t0, t1 = base.voltage["motor_terminal"], res.voltage["motor_terminal"]
    cab = t1["cable"]
    # IEEE 141 approximation per line, times sqrt(3) for line-to-line, at the running current and power factor
    cyc = base.measurements.cycles
    i1 = float(np.median(cyc["I1"]))
    pf = float(np.median(cyc["DPF"]))
    approx_ll = math.sqrt(3) * approximate_drop_v(i1, pf, Cable(0.1, 0.05))
    assert t0["measured_ll_v"] - t1["measured_ll_v"] == pytest.approx(approx_ll, rel=0.05)
    assert cab["drop_pct"] == pytest.approx(100 * approx_ll / t0["measured_ll_v"], rel=0.05)
    assert cab["nema_derating_terminal"] == 1.0 and "estimated" in t1["sentence"]
    assert res.parameters["detect"]["cable_r_ohm"] == 0.1


def test_a_cable_lowers_the_stall_threshold_voltage_ratio():
    t = np.arange(5000) / 5000.0
    ph = np.array([0.0, -2.0, 2.0])[:, None] * np.pi / 3
    v = 230 * math.sqrt(2) * np.cos(2 * np.pi * 50 * t + ph)
    i = 50 * math.sqrt(2) * np.cos(2 * np.pi * 50 * t + ph - 0.6)
    cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0, nominal_voltage_v=400.0)
    from waveforms.analysis import detection_input, measure_capture

    m = measure_capture(cap)
    plain = detection_input(cap, m, None, None, DetectParams())
    cabled = detection_input(cap, m, None, None, DetectParams(cable_r_ohm=0.2, cable_x_ohm=0.1))
    # locked-rotor current scales with the voltage at the motor: lower behind the cable (Kirchhoff drop)
    drop = abs(1 - complex(0.2, 0.1) * 50 * cmath.exp(-0.6j) / 230)
    assert np.median(cabled.v_ll_max_ratio) == pytest.approx(np.median(plain.v_ll_max_ratio) * drop, rel=2e-3)
