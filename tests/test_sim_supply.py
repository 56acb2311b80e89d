"""Supply model: dips, harmonics and unbalance as the logger sees them."""

from __future__ import annotations

import math

import numpy as np
import pytest

from tests._motor_support import KRAUSE_50HP, fundamental_phasor, last_cycles, rms, simulate
from waveforms.sim.truth import window


def test_three_phase_dip_depth_at_the_terminals_without_source_impedance() -> None:
    # With no source impedance the terminal voltage is the source EMF: during a dip to 0.6 pu
    # the RMS is 0.6 x nominal (common practice, no source).
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=1.0, load={"kind": "constant", "torque_n_m": 150.0},
                   supply={"dips": [{"start_s": 0.3, "end_s": 0.6, "phases": "ABC", "residual_pu": 0.6}]})
    vph = 460 / math.sqrt(3)
    during = rms(sim.v_logger_v[:, int(0.4 * 6000):int(0.5 * 6000)])
    assert np.allclose(during, 0.6 * vph, rtol=1e-9)
    dips = [e for e in sim.truth["events"] if e["kind"] == "dip"]
    assert len(dips) == 1 and dips[0]["start_s"] == 0.3 and dips[0]["end_s"] == 0.6 and dips[0]["phase"] is None


def test_source_impedance_softens_a_dip_and_the_motor_current_drops() -> None:
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=1.0, load={"kind": "constant", "torque_n_m": 150.0},
                   supply={"source_x_ohm": 0.1, "dips": [{"start_s": 0.3, "end_s": 0.9, "phases": "A", "residual_pu": 0.5}]})
    vph = 460 / math.sqrt(3)
    va = rms(sim.v_logger_v[0, int(0.7 * 6000):int(0.8 * 6000)])
    assert 0.5 * vph < va < 0.8 * vph  # the motor's back-EMF holds the dipped phase up (common practice, no source)


def test_fifth_harmonic_is_negative_sequence_with_the_set_magnitude() -> None:
    # In a balanced A-B-C set the 5th harmonic rotates backwards: phase B leads A by 120 deg
    # at 5 f1 (common practice, no source).  Magnitude as set, 3 % of the fundamental.
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=0.5, load={"kind": "constant", "torque_n_m": 150.0},
                   supply={"harmonics": [{"order": 5, "percent": 3.0}]})
    sl = last_cycles(sim, 12)
    t = sim.t_s[sl]
    h_a = fundamental_phasor(sim.v_logger_v[0, sl], t, 300.0)
    h_b = fundamental_phasor(sim.v_logger_v[1, sl], t, 300.0)
    f_a = fundamental_phasor(sim.v_logger_v[0, sl], t, 60.0)
    assert abs(h_a) / abs(f_a) == pytest.approx(0.03, rel=1e-6)
    assert np.degrees(np.angle(h_b / h_a)) == pytest.approx(120.0, abs=1e-6)


def test_truth_unbalance_agrees_with_the_iec_line_to_line_formula() -> None:
    # IEC 61000-4-30 unbalance from line-to-line magnitudes only:
    # beta = sum U^4 / (sum U^2)^2, u2 = sqrt((1 - sqrt(3 - 6 beta)) / (1 + sqrt(3 - 6 beta)));
    # equals |V2|/|V1| (REFERENCES.md [mem] formula, [calc] equality).
    sim = simulate(KRAUSE_50HP, 460.0, duration_s=1.0, load={"kind": "constant", "torque_n_m": 150.0},
                   supply={"magnitude_pu": [1.0, 0.96, 1.02], "angle_offset_deg": [0.0, -2.0, 1.0]})
    w = window(sim, "w", 0.5, 1.0)
    u = np.array([w["V_ll"][k]["mag"] for k in ("ab", "bc", "ca")])
    beta = np.sum(u**4) / np.sum(u**2) ** 2
    u2 = math.sqrt((1 - math.sqrt(3 - 6 * beta)) / (1 + math.sqrt(3 - 6 * beta)))
    assert 100 * u2 == pytest.approx(w["V2_V1_pct"], abs=2e-3)
    assert w["V2_V1_pct"] > 1.0
    # The motor draws a much larger current unbalance.  Its sequence networks (T-equivalent circuit,
    # Krause et al.; the negative-sequence network sees slip 2 - s: textbook treatment of unbalanced
    # operation, from memory) give I2/I1 / (V2/V1) = |Z(s)| / |Z(2 - s)|, computed here independently
    # with numpy.  (The 6-10 x rule of thumb of REFERENCES.md [pub, secondary] is for the NEMA
    # definitions at full load; this part-load case gives about 9.8 on sequence ratios.)
    s = w["slip"]
    p = KRAUSE_50HP
    zm = 1j * p["xm_ohm"]

    def z_motor(slip):
        zr = p["rr_ohm"] / slip + 1j * p["xlr_ohm"]
        return p["rs_ohm"] + 1j * p["xls_ohm"] + zm * zr / (zm + zr)

    expected = abs(z_motor(s)) / abs(z_motor(2.0 - s))
    assert w["I2_I1_pct"] / w["V2_V1_pct"] == pytest.approx(expected, rel=0.02)
