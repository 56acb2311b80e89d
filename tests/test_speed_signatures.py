"""Signature formulas against the worked numbers of REFERENCES.md and the cited papers."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from waveforms.errors import InvalidParameterError
from waveforms.speed import signatures as sg


class TestWorkedNumbers:
    # REFERENCES.md "Motor current signature analysis", worked numbers [calc]:
    # 50 Hz, p = 2, s = 0.03, R = 28.

    def test_speed_1455_rpm(self):
        # n = 60 f1 (1 - s) / p = 1455 rpm (REFERENCES.md [calc]; common practice, no source)
        assert sg.speed_rpm(0.03, 50.0, 2) == pytest.approx(1455.0, abs=1e-9)

    def test_eccentricity_sidebands(self):
        # f_ecc = f1 (1 -/+ (1 - s)/p): 25.75 / 74.25 Hz (Thomson & Fenger 2001, from memory; REFERENCES.md [calc])
        lo, hi = sg.eccentricity_signatures((1,))
        assert sg.component_frequency_hz(lo, 0.03, 50.0, 2) == pytest.approx(25.75, abs=1e-9)
        assert sg.component_frequency_hz(hi, 0.03, 50.0, 2) == pytest.approx(74.25, abs=1e-9)

    def test_slot_harmonics(self):
        # f_sh = f1 (R (1 - s)/p -/+ 1): 629 / 729 Hz (Hurst & Habetler 1996, from memory; REFERENCES.md [calc])
        lo, hi = sg.slot_signatures(28, (-1, 1))
        assert sg.component_frequency_hz(lo, 0.03, 50.0, 2) == pytest.approx(629.0, abs=1e-9)
        assert sg.component_frequency_hz(hi, 0.03, 50.0, 2) == pytest.approx(729.0, abs=1e-9)

    def test_slip_from_speed(self):
        # s = (n_s - n)/n_s with n_s = 1500 rpm: 1455 rpm -> 0.03 (common practice, no source)
        assert sg.slip_from_speed(1455.0, 50.0, 2) == pytest.approx(0.03, abs=1e-12)

    def test_second_order_eccentricity(self):
        # m = 2: f1 (1 +/- 2 (1 - s)/p) = 1.5 / 98.5 Hz; the lower one sits at |f| of a negative frequency
        # (Thomson & Fenger 2001 formula with m = 2, from memory)
        lo, hi = sg.eccentricity_signatures((2,))
        assert sg.component_frequency_hz(lo, 0.03, 50.0, 2) == pytest.approx(1.5, abs=1e-9)
        assert sg.component_frequency_hz(hi, 0.03, 50.0, 2) == pytest.approx(98.5, abs=1e-9)


@settings(max_examples=60, deadline=None)
@given(slip=st.floats(-0.05, 0.95), f1=st.floats(45.0, 65.0), p=st.integers(1, 6),
       bars=st.integers(8, 80), nu=st.sampled_from([-3, -1, 1, 3]))
def test_inversion_round_trip(slip, f1, p, bars, nu):
    # eq. (1) of signatures.py is affine in (1 - s): inverting it must return the slip (algebra, no source)
    for sig in sg.slot_signatures(bars, (nu,)) + sg.eccentricity_signatures((1, 2)):
        f = sg.component_frequency_hz(sig, slip, f1, p)
        assert sg.slip_from_frequency(sig, f, f1, p) == pytest.approx(slip, abs=1e-9)


def test_band_sign_and_order():
    # for p = 2 and slips 0..0.15 the lower sideband f1 (1 - (1-s)/p) runs 25..28.75 Hz, positive
    # (eq. (1); algebra, no source)
    lo, _ = sg.eccentricity_signatures((1,))
    b0, b1, sign = sg.signature_band_hz(lo, 0.0, 0.15, 50.0, 2)
    assert (b0, b1, sign) == (pytest.approx(25.0), pytest.approx(28.75), 1)
    lo2, _ = sg.eccentricity_signatures((2,))
    assert sg.signature_band_hz(lo2, 0.0, 0.15, 50.0, 1)[2] == -1  # 1 - 2(1-s) < 0 for s < 0.5
    assert sg.signature_band_hz(lo2, 0.0, 0.9, 50.0, 1)[2] == 0    # crosses zero at s = 0.5


def test_bad_arguments():
    with pytest.raises(InvalidParameterError, match="rotor_bars=3 must be >= 4"):
        sg.slot_signatures(3)
    with pytest.raises(InvalidParameterError, match="nu=2 must be odd"):
        sg.slot_signatures(28, (2,))
    with pytest.raises(InvalidParameterError, match="m=0 must be >= 1"):
        sg.eccentricity_signatures((0,))


def test_rotor_frequency_array():
    # fr = f1 (1 - s)/p, vectorised (common practice, no source)
    s = np.array([0.0, 0.5, 1.0])
    np.testing.assert_allclose(sg.rotor_frequency_hz(s, 60.0, 2), [30.0, 15.0, 0.0])
