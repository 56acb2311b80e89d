"""Power per cycle (IEEE 1459-2010 definitions)."""

from __future__ import annotations

import numpy as np
import pytest

from _measure_support import capture_of, three_phase
from waveforms.measure import measure

FS = 10_000.0


def interior(cyc):
    return cyc.iloc[3:-3]


def test_balanced_sinusoidal_load():
    # Sinusoidal balanced set, current lagging 30 deg: P = 3 V I cos(phi), Q = 3 V I sin(phi), S = 3 V I,
    # PF = DPF = cos(phi) (IEEE 1459-2010, sinusoidal definitions; textbook, common practice).
    t = np.arange(int(FS * 0.5)) / FS
    v = three_phase(t, 230.0, 50.0, 0.2)
    i = three_phase(t, 10.0, 50.0, 0.2 - np.radians(30.0))
    cyc = interior(measure(capture_of(v, i, FS)).cycles)
    phi = np.radians(30.0)
    np.testing.assert_allclose(cyc["P_w"], 3 * 230 * 10 * np.cos(phi), rtol=1e-8)
    np.testing.assert_allclose(cyc["Q_var"], 3 * 230 * 10 * np.sin(phi), rtol=1e-8)
    np.testing.assert_allclose(cyc["S_va"], 3 * 230 * 10, rtol=1e-8)
    np.testing.assert_allclose(cyc["PF"], np.cos(phi), rtol=1e-8)
    np.testing.assert_allclose(cyc["DPF"], np.cos(phi), rtol=1e-8)
    np.testing.assert_allclose(cyc["P1_w"], cyc["P_w"], rtol=1e-8)
    np.testing.assert_allclose(cyc["Pa_w"], 230 * 10 * np.cos(phi), rtol=1e-8)
    np.testing.assert_allclose(cyc["Qb_var"], 230 * 10 * np.sin(phi), rtol=1e-8)


def test_distorted_current_lowers_pf_but_not_dpf():
    # Sinusoidal voltage, current with a 20 % 5th harmonic: the harmonic carries no active power, so
    # P = 3 V I1 cos(phi1), S = 3 V I1 sqrt(1 + 0.2^2) and PF = DPF / sqrt(1 + THD_I^2)
    # (IEEE 1459-2010 with sinusoidal voltage; textbook relation, common practice).
    t = np.arange(int(FS * 0.5)) / FS
    v = three_phase(t, 230.0, 50.0, 0.0)
    i = three_phase(t, 10.0, 50.0, -np.radians(20.0), {5: (0.2, 0.4)})
    cyc = interior(measure(capture_of(v, i, FS)).cycles)
    dpf = np.cos(np.radians(20.0))
    np.testing.assert_allclose(cyc["DPF"], dpf, rtol=1e-8)
    np.testing.assert_allclose(cyc["PF"], dpf / np.sqrt(1 + 0.04), rtol=1e-7)
    np.testing.assert_allclose(cyc["P_w"], 3 * 230 * 10 * dpf, rtol=1e-7)


def test_line_to_line_voltages_give_the_same_total_power():
    # Blondel's theorem (1893): in a 3-wire system the total power is measurable from voltages to any
    # common point, here the zero-sum virtual neutral built from line-to-line voltages.  Reference:
    # numpy mean of va ia + vb ib + vc ic over each synchronised cycle.  Unbalanced load, 3-wire.
    t = np.arange(int(FS * 0.5)) / FS
    v = three_phase(t, 230.0, 50.0, -np.pi / 2)
    v["A"] = v["A"] * 1.05
    ia = np.sqrt(2) * 12.0 * np.cos(2 * np.pi * 50 * t - np.pi / 2 - 0.3)
    ib = np.sqrt(2) * 9.0 * np.cos(2 * np.pi * 50 * t - np.pi / 2 - 2 * np.pi / 3 - 0.5)
    i = {"A": ia, "B": ib, "C": -(ia + ib)}
    vll = {"A": v["A"] - v["B"], "B": v["B"] - v["C"], "C": v["C"] - v["A"]}
    cyc = interior(measure(capture_of(vll, i, FS, voltages="LL", wiring="3-wire")).cycles)
    s0 = np.rint(cyc["t_start_s"].to_numpy() * FS).astype(int)
    idx = s0[:, None] + np.arange(200)
    p_ref = np.mean(v["A"][idx] * ia[idx] + v["B"][idx] * ib[idx] + v["C"][idx] * i["C"][idx], axis=1)
    assert len(cyc) > 10
    np.testing.assert_allclose(cyc["P_w"], p_ref, rtol=1e-4)  # windows start within ~0.01 sample of s0
    assert "Pa_w" not in cyc.columns  # no per-phase power without line-to-neutral voltages


def test_positive_sequence_power_under_unbalance():
    # IEEE 1459-2010: S1+ = 3 V1+ I1+*, P1+ = Re, Q1+ = Im; with unbalanced phasors P1+ differs from P.
    # Reference: the positive-sequence components of the known test phasors from the Fortescue matrix
    # written out here, A = 1/3 [[1,1,1],[1,a,a^2],[1,a^2,a]], a = 1/120 deg (Fortescue, AIEE 1918).
    t = np.arange(int(FS * 0.5)) / FS
    mags_v, angs_v = np.array([240.0, 225.0, 230.0]), np.radians([0.0, -118.0, 121.0])
    mags_i, angs_i = np.array([11.0, 8.0, 10.0]), np.radians([-25.0, -150.0, 95.0])
    v = {c: np.sqrt(2) * m * np.cos(2 * np.pi * 50 * t + a) for c, m, a in zip("ABC", mags_v, angs_v, strict=True)}
    i = {c: np.sqrt(2) * m * np.cos(2 * np.pi * 50 * t + a) for c, m, a in zip("ABC", mags_i, angs_i, strict=True)}
    cyc = interior(measure(capture_of(v, i, FS)).cycles)
    a = np.exp(1j * np.radians(120.0))
    fortescue = np.array([[1, 1, 1], [1, a, a * a], [1, a * a, a]]) / 3.0
    v1 = (fortescue @ (mags_v * np.exp(1j * angs_v)))[1]
    i1 = (fortescue @ (mags_i * np.exp(1j * angs_i)))[1]
    s1 = 3 * v1 * np.conj(i1)
    np.testing.assert_allclose(cyc["P1_w"], s1.real, rtol=1e-7)
    np.testing.assert_allclose(cyc["Q1_var"], s1.imag, rtol=1e-7)
    p_total = float(np.sum(mags_v * mags_i * np.cos(angs_v - angs_i)))
    np.testing.assert_allclose(cyc["P_w"], p_total, rtol=1e-7)
    assert abs(p_total - s1.real) > 1.0  # the test case really is unbalanced
    assert cyc["DPF"].iloc[0] == pytest.approx(s1.real / abs(s1), rel=1e-7)
