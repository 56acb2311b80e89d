"""Symmetrical components and phase sequence (waveforms.measure.sequence)."""

from __future__ import annotations

import numpy as np
import pytest

from waveforms.measure.sequence import A, phase_sequence, sequence_components, sequence_from_line_to_line


def polar(mag: float, deg: float) -> complex:
    return mag * np.exp(1j * np.radians(deg))


def assert_polar(x: complex, mag: float, deg: float, mag_tol: float, deg_tol: float) -> None:
    assert abs(x) == pytest.approx(mag, abs=mag_tol)
    d = (np.degrees(np.angle(x)) - deg + 180.0) % 360.0 - 180.0
    assert abs(d) <= deg_tol


class TestFortescue:
    def test_gonen_example_9_1(self):
        # Gonen, Electric Power Transmission System Engineering, 2nd ed., Example 9.1:
        # Va = 7.3/12.5, Vb = 0.4/-100, Vc = 4.4/154 -> V0 = 1.47/45.1, V1 = 3.97/20.5, V2 = 2.52/-19.7.
        # The book rounds to three figures, hence the tolerances.
        v0, v1, v2 = sequence_components(polar(7.3, 12.5), polar(0.4, -100.0), polar(4.4, 154.0))
        assert_polar(v0, 1.47, 45.1, 0.005, 0.05)
        assert_polar(v1, 3.97, 20.5, 0.005, 0.05)
        assert_polar(v2, 2.52, -19.7, 0.005, 0.05)

    def test_pure_negative_sequence_set(self):
        # Fortescue 1918: a balanced A-C-B set (Vb = a Va, Vc = a^2 Va) is pure negative sequence.
        va = polar(100.0, 17.0)
        v0, v1, v2 = sequence_components(va, A * va, A * A * va)
        assert abs(v0) < 1e-12 and abs(v1) < 1e-12
        assert v2 == pytest.approx(va, abs=1e-12)

    def test_open_line_gives_equal_positive_and_negative_current(self):
        # One dead line: Ia = 10/0, Ib = 10/180, Ic = 0 -> I0 = 0, I1 = 5.774/-30, I2 = 5.774/+30
        # (REFERENCES.md [calc]; the |I1| = |I2| identity follows from Fortescue 1918 with Ic = 0, Ia = -Ib).
        i0, i1, i2 = sequence_components(polar(10.0, 0.0), polar(10.0, 180.0), 0.0)
        assert abs(i0) < 1e-12
        assert_polar(i1, 10.0 / np.sqrt(3.0), -30.0, 1e-12, 1e-9)
        assert_polar(i2, 10.0 / np.sqrt(3.0), 30.0, 1e-12, 1e-9)

    def test_three_wire_currents_have_no_zero_sequence(self):
        # Kirchhoff's current law in a 3-wire system: Ia + Ib + Ic = 0, so I0 = 0 (common practice, no source).
        rng = np.random.default_rng(7)
        ia = rng.normal(size=50) + 1j * rng.normal(size=50)
        ib = rng.normal(size=50) + 1j * rng.normal(size=50)
        i0, _, _ = sequence_components(ia, ib, -(ia + ib))
        assert np.abs(i0).max() < 1e-14

    def test_inverse_matrix_round_trip(self):
        # Fortescue 1918: Xa = X0 + X1 + X2, Xb = X0 + a^2 X1 + a X2, Xc = X0 + a X1 + a^2 X2.
        rng = np.random.default_rng(3)
        x = rng.normal(size=(3, 20)) + 1j * rng.normal(size=(3, 20))
        x0, x1, x2 = sequence_components(*x)
        np.testing.assert_allclose(x0 + x1 + x2, x[0], atol=1e-13)
        np.testing.assert_allclose(x0 + A * A * x1 + A * x2, x[1], atol=1e-13)
        np.testing.assert_allclose(x0 + A * x1 + A * A * x2, x[2], atol=1e-13)


class TestLabelsAgreeWithSequence:
    def test_acb_trap_from_references(self):
        # REFERENCES.md rotation-convention trap [calc]: 147/13, 154/129, 150/237 deg with the standard
        # matrix give V0 = 14.824/142.704, V1 = 10.135/49.004, V2 = 149.285/6.321; the large component is
        # the negative sequence because the set rotates A-C-B, and the sequence label must say so.
        v0, v1, v2 = sequence_components(polar(147.0, 13.0), polar(154.0, 129.0), polar(150.0, 237.0))
        assert_polar(v0, 14.824, 142.704, 1e-3, 1e-3)
        assert_polar(v1, 10.135, 49.004, 1e-3, 1e-3)
        assert_polar(v2, 149.285, 6.321, 1e-3, 1e-3)
        assert phase_sequence(np.array([v1]), np.array([v2]))[0] == "ACB"

    def test_abc_and_ambiguous(self):
        # Common practice, no source: the dominant component names the rotation; no clear winner, no label.
        v1 = np.array([100.0, 10.0, 50.0])
        v2 = np.array([5.0, 90.0, 45.0])
        assert list(phase_sequence(v1, v2)) == ["ABC", "ACB", ""]

    def test_noise_on_a_dead_supply_gets_no_sequence(self):
        # Common practice, no source: millivolts of noise before a contactor closes have no rotation.
        v1, v2 = np.array([0.002, 230.0]), np.array([0.02, 1.0])
        assert list(phase_sequence(v1, v2, min_magnitude=23.0)) == ["", "ABC"]


class TestLineToLine:
    def test_line_to_line_gives_line_to_neutral_equivalents(self):
        # Vab = Va - Vb etc.; the LL set has V1_LL = sqrt3/+30 V1 and V2_LL = sqrt3/-30 V2
        # (common practice, no source), so the LN-equivalent components come back exactly.
        rng = np.random.default_rng(11)
        va, vb, vc = rng.normal(size=(3, 30)) + 1j * rng.normal(size=(3, 30))
        _, v1, v2 = sequence_components(va, vb, vc)
        w1, w2 = sequence_from_line_to_line(va - vb, vb - vc, vc - va)
        np.testing.assert_allclose(w1, v1, atol=1e-13)
        np.testing.assert_allclose(w2, v2, atol=1e-13)
