"""Unbalance definitions (waveforms.measure.unbalance)."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from waveforms.measure.sequence import sequence_components
from waveforms.measure.unbalance import iec_line_to_line_pct, max_deviation_pct, vuf_pct


def test_nema_mg1_worked_example():
    # NEMA MG-1 (voltage unbalance clause, 14.36 in recent editions): 460, 467, 450 V -> average 459,
    # maximum deviation 9 V, unbalance 100 x 9 / 459 = 1.96 %.
    got = max_deviation_pct(np.array(460.0), np.array(467.0), np.array(450.0))
    assert float(got) == pytest.approx(1.96, abs=0.005)
    assert float(got) == pytest.approx(100.0 * 9.0 / 459.0, rel=1e-12)


def test_balanced_is_zero_in_every_definition():
    # Common practice, no source: a balanced set has no unbalance in any definition.
    a = np.exp(2j * np.pi / 3)
    va = 230.0 + 0j
    _, v1, v2 = sequence_components(va, va * a * a, va * a)
    assert float(vuf_pct(v1, v2)) < 1e-12
    assert float(iec_line_to_line_pct(400.0, 400.0, 400.0)) < 1e-6
    assert float(max_deviation_pct(400.0, 400.0, 400.0)) == 0.0


def _triangle(r: tuple[float, float, float]) -> tuple[float, float, float] | None:
    a, b, c = r
    if a + b <= c * 1.0001 or a + c <= b * 1.0001 or b + c <= a * 1.0001:
        return None
    return a, b, c


@settings(max_examples=200, deadline=None)
@given(st.tuples(*(st.floats(300.0, 500.0) for _ in range(3))), st.floats(0.0, 2 * np.pi))
def test_iec_line_to_line_formula_equals_true_ratio(sides, rot):
    # REFERENCES.md [calc]: the IEC 61000-4-30 line-to-line formula equals |V2|/|V1| exactly for any
    # closed triangle of line-to-line phasors (they sum to zero, so the triangle's sides fix V1, V2).
    tri = _triangle(sides)
    assume(tri is not None)  # counted by hypothesis as a rejected example, not a silent pass
    uab, ubc, uca = tri
    # build the triangle Vab + Vbc + Vca = 0 with the given side lengths (law of cosines)
    cos_b = (uab**2 + ubc**2 - uca**2) / (2 * uab * ubc)
    vab = uab * np.exp(1j * rot)
    vbc = -ubc * np.exp(1j * (rot - np.arccos(np.clip(cos_b, -1, 1))))  # exterior turn at B
    vca = -(vab + vbc)
    assert abs(vca) == pytest.approx(uca, rel=1e-9)
    _, y1, y2 = sequence_components(vab, vbc, vca)
    true_pct = 100.0 * min(abs(y1), abs(y2)) / max(abs(y1), abs(y2))
    assert float(iec_line_to_line_pct(uab, ubc, uca)) == pytest.approx(true_pct, abs=1e-9)


def test_nema_approximates_true_unbalance_for_small_unbalance():
    # Pillay & Manyage, "Definitions of Voltage Unbalance", IEEE Power Engineering Review 2001
    # (REFERENCES.md [pub]): NEMA (LVUR) 2 % corresponds to a true VUF of about 2-2.3 %.  On the NEMA
    # worked-example magnitudes (460, 467, 450 V; LVUR 1.96 %) the VUF (IEC formula, equal to |V2|/|V1|
    # by the property test above) is about 2.146 %.
    vuf = float(iec_line_to_line_pct(460.0, 467.0, 450.0))
    assert 2.0 <= vuf <= 2.3
