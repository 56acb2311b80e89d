"""Rotation direction from phase sequence (Fortescue 1918 via waveforms.measure.sequence)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from waveforms.errors import InvalidParameterError
from waveforms.measure.sequence import sequence_components
from waveforms.speed.direction import cycle_phasors, direction_from_cycles, direction_from_waveforms, rotation_direction

FS = 5000.0
A = np.exp(2j * np.pi / 3)


def _polar(mag, deg):
    return mag * np.exp(1j * np.deg2rad(deg))


def _wave(phasors, f1=50.0, seconds=1.0):
    t = np.arange(int(seconds * FS)) / FS
    return np.array([np.sqrt(2) * np.real(p * np.exp(2j * np.pi * f1 * t)) for p in phasors])


def test_cycle_phasors_recover_rms_phasors():
    # single-bin DFT over whole cycles returns the RMS phasor (common practice, no source)
    ph = [_polar(230, 10), _polar(229, -112), _polar(231, 128)]
    t, got = cycle_phasors(_wave(ph), FS, 50.0, window_cycles=10)
    assert got.shape == (3, 5) and t[0] == pytest.approx(0.1)
    np.testing.assert_allclose(got[:, 2], ph, rtol=1e-9)


def test_forward_and_reverse_three_phase():
    fwd = [_polar(230, 0), _polar(230, -120), _polar(230, 120)]
    rev = [fwd[0], fwd[2], fwd[1]]
    cur = [p / 23 * np.exp(-0.5j) for p in fwd]
    d = direction_from_waveforms(_wave(fwd), _wave(cur), sample_rate_hz=FS, f1_hz=50.0)
    assert (d.rotation == "forward").all() and (d.basis == "three_phase").all()
    d2 = direction_from_waveforms(_wave(rev), _wave([cur[0], cur[2], cur[1]]), sample_rate_hz=FS, f1_hz=50.0)
    assert (d2.rotation == "reverse").all() and (d2.v_sequence == "ACB").all()


def test_rotation_convention_trap_from_references():
    # REFERENCES.md [calc]: 147/13, 154/129, 150/237 deg -> V1 = 10.135, V2 = 149.285: the large one is the
    # NEGATIVE sequence (A-C-B), so the rotation is reverse
    va, vb, vc = _polar(147, 13), _polar(154, 129), _polar(150, 237)
    _, v1, v2 = sequence_components(va, vb, vc)
    assert abs(v1) == pytest.approx(10.135, abs=1e-3) and abs(v2) == pytest.approx(149.285, abs=1e-3)
    d = rotation_direction(np.array([abs(v1)]), np.array([abs(v2)]))
    assert d.rotation.tolist() == ["reverse"]


def test_single_phased_running_uses_regenerated_voltage():
    # line A open downstream of the switch, motor side: Va is the back-EMF of the turning rotor, close to
    # the healthy phase angle; Ia = 0 -> the three voltages still rotate A-B-C (derived; no published example)
    vb, vc = _polar(230, -120), _polar(230, 120)
    va_regen = _polar(190, -8)
    i = [0.0, _polar(40, -150), _polar(40, 30)]  # Ib = -Ic, Ia = 0 (open line, Fortescue 1918 open-line case)
    d = direction_from_waveforms(_wave([va_regen, vb, vc]), _wave(i), sample_rate_hz=FS, f1_hz=50.0,
                                 open_point="upstream")
    assert (d.basis == "regenerated_voltage").all() and (d.rotation == "forward").all()
    d = direction_from_waveforms(_wave([va_regen, vb, vc]), _wave(i), sample_rate_hz=FS, f1_hz=50.0)
    assert (d.basis == "single_phased_voltage_unverified").all() and (d.rotation == "forward").all()
    # downstream open point: the voltage inputs see the supply, which says nothing about the rotation
    d = direction_from_waveforms(_wave([_polar(230, 0), vb, vc]), _wave(i), sample_rate_hz=FS, f1_hz=50.0,
                                 open_point="downstream")
    assert (d.basis == "supply_side_voltage").all() and (d.rotation == "").all()


def test_single_phased_stalled_has_no_direction():
    # stalled, A open: the open terminal sits at (Vb + Vc)/2 -> |V1| = |V2| (Fortescue 1918; algebra)
    vb, vc = _polar(230, -120), _polar(230, 120)
    va = (vb + vc) / 2
    _, v1, v2 = sequence_components(va, vb, vc)
    assert abs(v1) == pytest.approx(abs(v2))
    i = [0.0, _polar(150, -150), _polar(150, 30)]
    d = direction_from_waveforms(_wave([va, vb, vc]), _wave(i), sample_rate_hz=FS, f1_hz=50.0, open_point="upstream")
    assert (d.rotation == "").all() and (d.basis == "regenerated_voltage").all()


def test_no_voltage_single_phased_and_clash():
    d = rotation_direction(None, None, np.array([10.0]), np.array([10.0]), np.array([[0.0], [10.0], [10.0]]))
    assert d.basis.tolist() == ["single_phased_no_voltage"] and d.rotation.tolist() == [""]
    d = rotation_direction(np.array([230.0]), np.array([1.0]), np.array([1.0]), np.array([20.0]),
                           np.array([[20.0], [20.0], [20.0]]))
    assert d.basis.tolist() == ["inconsistent"] and d.rotation.tolist() == [""]
    d = rotation_direction(np.array([230.0]), np.array([1.0]), None, None, np.zeros((3, 1)))
    assert d.basis.tolist() == ["no_current"]
    # a de-energised stretch (noise-level currents) inside a record is no_current, not a random sequence
    il = np.array([[40.0, 0.03], [40.0, 0.02], [40.0, 0.04]])
    d = rotation_direction(np.array([230.0, 0.1]), np.array([1.0, 0.05]), None, None, il)
    assert d.basis.tolist() == ["three_phase", "no_current"] and d.rotation.tolist() == ["forward", ""]
    with pytest.raises(InvalidParameterError, match="open_point='left'"):
        rotation_direction(np.array([1.0]), np.array([0.0]), open_point="left")


def test_from_cycle_table_columns():
    cyc = pd.DataFrame({"t_s": [0.01, 0.03], "V1": [230.0, 230.0], "V2": [1.0, 1.0], "I1": [20.0, 20.0],
                        "I2": [0.5, 0.5], "Ia_mag": [20.0, 0.1], "Ib_mag": [20.0, 30.0], "Ic_mag": [20.0, 30.0]})
    d = direction_from_cycles(cyc, open_point="upstream")
    assert d.t_s.tolist() == [0.01, 0.03]
    assert d.basis.tolist() == ["three_phase", "regenerated_voltage"]
    with pytest.raises(InvalidParameterError, match="no column 't_s'"):
        direction_from_cycles(cyc.drop(columns="t_s"))
    with pytest.raises(InvalidParameterError, match="needs voltage"):
        rotation_direction()


def test_sample_capture_open_phase_stall_direction():
    # sample capture (simulated, invented): line B interrupted upstream of the logger at 3.5026 s, single-phased
    # running, stall from 9.2566 s, relay opens A and C at 12.0002 s (its truth file / sample_captures/README.md)
    from pathlib import Path

    from waveforms.io.registry import read_capture
    from waveforms.measure import measure

    path = Path(__file__).resolve().parent.parent / "sample_captures" / "open_phase_stall.h5"
    cyc = measure(read_capture(path)).cycles
    d = direction_from_cycles(cyc, open_point="upstream")
    t = d.t_s
    assert ((d.basis == "three_phase") & (d.rotation == "forward"))[t < 3.4].all()
    single = d[(t > 3.7) & (t < 6.5)]
    assert ((single.basis == "regenerated_voltage") & (single.rotation == "forward")).all()
    assert (d.rotation[(t > 9.5) & (t < 11.9)] == "").all()   # stalled single-phased: no direction
    assert (d.basis[t > 12.2] == "no_current").all()          # all lines dead
