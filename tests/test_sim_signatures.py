"""Speed signatures in the simulated current: lines where the published formulas put them."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import periodogram

from tests._motor_support import KRAUSE_50HP, simulate
from waveforms.sim.signatures import Signatures, expected_lines_hz, modulation


@pytest.fixture(scope="module")
def running():
    return simulate(KRAUSE_50HP, 460.0, duration_s=4.0, load={"kind": "constant", "torque_n_m": 150.0},
                    signatures={"eccentricity_db": -50.0, "slot_db": -55.0, "rotor_bars": 28})


def _line_db(f: np.ndarray, p: np.ndarray, f0: float, p1: float) -> tuple[float, float]:
    """(frequency, level re the fundamental in dB) of the largest bin within +/-1 Hz of f0."""
    sel = np.nonzero(np.abs(f - f0) < 1.0)[0]
    k = sel[np.argmax(p[sel])]
    return float(f[k]), 10 * np.log10(p[k] / p1)


def test_eccentricity_and_slot_lines_at_the_published_frequencies(running) -> None:
    # Mixed eccentricity f1 (1 +/- (1-s)/p) (Thomson & Fenger, IEEE IA Magazine 7(4), 2001,
    # from memory); principal slot harmonics f1 (R (1-s)/p +/- 1) (Hurst & Habetler, IEEE
    # Trans. Power Electronics 11(1), 1996, from memory).  Spectrum with scipy.signal.periodogram,
    # flat-top window (amplitude-accurate to about 0.1 dB).
    sim = running
    fs = sim.scenario.logger.sample_rate_hz
    sl = slice(int(fs), sim.t_s.size)  # skip nothing transient (steady start), keep 3 s
    slip = 1 - float(np.mean(sim.omega_m_rad_s[sl])) / (2 * np.pi * 30)
    assert 0.01 < slip < 0.06
    f, p = periodogram(sim.i_line_a[0, sl], fs=fs, window="flattop", scaling="spectrum")
    p1 = p[np.argmin(np.abs(f - 60.0))]
    fr = 60.0 * (1 - slip) / 2
    cases = {60 - fr: -50.0, 60 + fr: -50.0, 28 * fr - 60: -55.0, 28 * fr + 60: -55.0}
    assert len(cases) == 4
    for f0, level in cases.items():
        fk, db = _line_db(f, p, f0, p1)
        assert fk == pytest.approx(f0, abs=0.34)  # one bin of a 3 s record
        assert db == pytest.approx(level, abs=0.3)


def test_expected_lines_helper_agrees_with_the_worked_numbers() -> None:
    # REFERENCES.md [calc]: 50 Hz, p = 2, s = 0.03, R = 28 -> eccentricity 25.75 / 74.25 Hz,
    # slot harmonics 629 / 729 Hz.
    sig = Signatures(eccentricity_db=-50, slot_db=-50, rotor_bars=28)
    lines = expected_lines_hz(sig, 50.0, 0.03, 2)
    assert lines["ecc_lower_hz"] == pytest.approx(25.75)
    assert lines["ecc_upper_hz"] == pytest.approx(74.25)
    assert lines["slot_lower_hz"] == pytest.approx(629.0)
    assert lines["slot_upper_hz"] == pytest.approx(729.0)


def test_no_signature_means_no_modulation() -> None:
    theta = np.linspace(0, 100, 1000)
    assert np.all(modulation(Signatures(), theta) == 1.0)
