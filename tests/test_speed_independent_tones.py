"""The slip estimator on currents whose speed lines are placed by formulas written out here, not by the package.

`waveforms.speed.synthetic` places its test lines with the estimator's own `waveforms.speed.signatures`
formulas, so a wrong formula would be confirmed by its own test signal.  Here the tone frequencies are
computed in the test from the textbook expressions:

* mixed-eccentricity sidebands  f_ecc = f1 * (1 +/- (1 - s) / p)                   [1], [2]
* principal rotor slot harmonics f_sh = f1 * (R (1 - s) / p +/- 1)   (k = 1, n_w = +/-1)  [1], [3]
* shaft speed                    n = 60 f1 (1 - s) / p  [rpm]                       (any machines textbook)

with p pole pairs and R rotor bars.  Worked numbers for R = 28, p = 2, s = 0.03, f1 = 50 Hz: 28 x 0.97 / 2 =
13.58, so the slot lines sit at 679 -/+ 50 = 629 and 729 Hz and the shaft turns at 1455 rpm.

References
----------
.. [1] W. T. Thomson, M. Fenger, "Current signature analysis to detect induction motor faults",
       IEEE Industry Applications Magazine 7(4), 2001 (eccentricity and slot-harmonic expressions; from memory).
.. [2] J. R. Cameron, W. T. Thomson, A. B. Dow, "Vibration and current monitoring for detecting airgap
       eccentricity in large induction motors", IEE Proc. B 133(3), 1986 (from memory).
.. [3] K. D. Hurst, T. G. Habetler, "Sensorless speed measurement using current harmonic spectral estimation
       in induction machine drives", IEEE Trans. Power Electronics 11(1), 1996 (from memory).
"""

from __future__ import annotations

import numpy as np
import pytest

from _speed_support import FS_HZ, plate
from waveforms.speed import track_speed


def _current(duration_s: float, f1_hz: float, tones: list[tuple[float, float]], seed: int) -> np.ndarray:
    """A 100 A (RMS) fundamental plus tones (frequency [Hz], level [dBc]) plus white noise 60 dB down."""
    rng = np.random.default_rng(seed)
    t = np.arange(int(duration_s * FS_HZ)) / FS_HZ
    a0 = 100.0 * np.sqrt(2.0)
    x = a0 * np.cos(2 * np.pi * f1_hz * t)
    for f, dbc in tones:
        x += a0 * 10 ** (dbc / 20.0) * np.cos(2 * np.pi * f * t + rng.uniform(0, 2 * np.pi))
    return x + rng.normal(0.0, a0 / np.sqrt(2.0) * 1e-3, t.size)


@pytest.mark.parametrize("slip", [0.015, 0.027, 0.05])
def test_eccentricity_lines_from_the_textbook_formula(slip):
    f1, p = 50.0, 2
    fr = f1 * (1 - slip) / p  # rotor rotation frequency [Hz]
    tones = [(f1 - fr, -50.0), (f1 + fr, -50.0)]  # f1 (1 -/+ (1-s)/p), Thomson & Fenger 2001
    x = _current(20.0, f1, tones, seed=31)
    tr = track_speed(x, FS_HZ, plate(), window_s=10.0, supply_hz=f1)
    est = tr[tr.status == "estimate"]
    assert len(est) == len(tr) > 0
    assert np.max(np.abs(est.slip - slip)) <= 5e-4
    assert np.max(np.abs(est.rpm - 60.0 * f1 * (1 - slip) / p)) < 0.5


def test_slot_lines_from_the_textbook_formula():
    f1, p, bars, slip = 50.0, 2, 28, 0.03
    centre = f1 * bars * (1 - slip) / p  # 679 Hz (worked numbers in the module docstring)
    assert centre == pytest.approx(679.0)
    tones = [(centre - f1, -50.0), (centre + f1, -50.0)]  # 629 / 729 Hz, Hurst & Habetler 1996
    x = _current(20.0, f1, tones, seed=32)
    tr = track_speed(x, FS_HZ, plate(rotor_bars=bars), window_s=10.0, supply_hz=f1)
    est = tr[tr.status == "estimate"]
    assert len(est) == len(tr) > 0 and (est.component == "slot").all()
    assert np.max(np.abs(est.slip - slip)) <= 5e-4
    assert np.max(np.abs(est.rpm - 1455.0)) < 1.0


def test_lines_of_another_slip_are_not_read_as_this_one():
    """A property: lines placed for slip 0.02 give slip 0.02, not the nameplate's rated slip (0.027 at 1460 rpm)."""
    f1, p, slip = 50.0, 2, 0.02
    fr = f1 * (1 - slip) / p
    x = _current(20.0, f1, [(f1 - fr, -50.0), (f1 + fr, -50.0)], seed=33)
    tr = track_speed(x, FS_HZ, plate(rated_speed_rpm=1460.0), window_s=10.0, supply_hz=f1)
    est = tr[tr.status == "estimate"]
    assert len(est) and np.max(np.abs(est.slip - slip)) <= 5e-4
