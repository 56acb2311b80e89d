"""Phasor accuracy under IEEE C37.118.1 / IEC/IEEE 60255-118-1 style test signals.

Limits: the standards allow 1 % total vector error (TVE, C37.118.1-2011 clause 5.3 / Table 3); this
project's target is 0.2 %.  TVE is computed against the ideal phasor of the test signal in the
C37.118.1 frame (clause 4.2: X = Xm/sqrt2 exp(j((w - w0) t + phi)) at the window centre).
"""

from __future__ import annotations

import numpy as np
import pytest

from _measure_support import absolute_phasor, capture_of, three_phase
from waveforms.measure import measure
from waveforms.measure.phasor import basis, fit_phasors, total_vector_error
from waveforms.measure.windows import gather, window_weights

FS = 10_000.0
RMS = 230.0
PHI = 0.3
TVE_TARGET = 0.002  # 0.2 %, the project's target (C37.118.1 limit is 1 %)


def tve_c37118(estimate, reference):
    # IEEE C37.118.1-2011 clause 4.3 eq. (4), written out from the standard's formula (REFERENCES.md [pub]):
    # TVE = sqrt(((Xr^ - Xr)^2 + (Xi^ - Xi)^2) / (Xr^2 + Xi^2)).
    est, ref = np.asarray(estimate), np.asarray(reference)
    num = (est.real - ref.real) ** 2 + (est.imag - ref.imag) ** 2
    return np.sqrt(num / (ref.real ** 2 + ref.imag ** 2))


def run(f_hz, f0=50.0, harmonics=None, snr_db=None, duration_s=1.0, step=None, seed=0):
    t = np.arange(int(FS * duration_s)) / FS
    v = three_phase(t, RMS, f_hz, PHI, harmonics)
    amp, phi = RMS, PHI
    if step is not None:
        kind, ts = step
        amp2 = RMS * 1.1 if kind == "magnitude" else RMS
        phi2 = PHI + np.radians(10.0) if kind == "phase" else PHI
        v2 = three_phase(t, amp2, f_hz, phi2, harmonics)
        v = {c: np.where(t >= ts, v2[c], v[c]) for c in v}
    if snr_db is not None:
        rng = np.random.default_rng(seed)
        sigma = RMS * 10 ** (-snr_db / 20.0)  # SNR relative to the signal RMS
        v = {c: x + rng.normal(0.0, sigma, t.size) for c, x in v.items()}
    cyc = measure(capture_of(v, None, FS, nominal_frequency_hz=f0)).cycles
    tc = cyc["t_s"].to_numpy()
    a = np.full(tc.size, RMS)
    p = np.full(tc.size, PHI)
    if step is not None:
        kind, ts = step
        if kind == "magnitude":
            a[tc >= ts] = RMS * 1.1
        else:
            p[tc >= ts] += np.radians(10.0)
    truth = a * np.exp(1j * (2 * np.pi * (f_hz - f0) * tc + p))  # C37.118.1-2011 4.2
    assert len(cyc) > 10
    return cyc, tve_c37118(absolute_phasor(cyc, "Va"), truth)


def interior(x, n=2):
    # the first and last two cycles see the filter's edge; C37.118.1 tests are steady-state
    return np.asarray(x)[n:-n]


class TestTveDefinition:
    def test_phase_error_of_0_01_rad_alone_is_1_percent(self):
        # C37.118.1-2011: a 0.01 rad (0.57 deg) phase error with exact magnitude gives 1 % TVE
        # (REFERENCES.md [pub]); exactly 2 sin(0.005) = 0.0099999583.  Checks the test's helper and the
        # package's total_vector_error.
        ref = RMS * np.exp(1j * np.array([PHI, -2.0, 3.0]))
        est = ref * np.exp(1j * 0.01)
        np.testing.assert_allclose(tve_c37118(est, ref), 0.01, rtol=1e-4)
        np.testing.assert_allclose(total_vector_error(est, ref), 0.01, rtol=1e-4)

    def test_package_tve_agrees_with_the_formula_on_mixed_errors(self):
        # Magnitude and phase errors together: the package's total_vector_error against the C37.118.1
        # formula above (IEEE C37.118.1-2011 clause 4.3 eq. (4)).
        rng = np.random.default_rng(7)
        ref = rng.uniform(1.0, 300.0, 50) * np.exp(1j * rng.uniform(-np.pi, np.pi, 50))
        est = ref * rng.uniform(0.95, 1.05, 50) * np.exp(1j * rng.uniform(-0.05, 0.05, 50))
        expected = tve_c37118(est, ref)
        assert expected.max() > 0.01  # the errors are not negligible
        np.testing.assert_allclose(total_vector_error(est, ref), expected, rtol=1e-12)


class TestSteadyState:
    @pytest.mark.parametrize("f0, f_hz", [(50.0, 45.0), (50.0, 47.5), (50.0, 50.0), (50.0, 52.5), (50.0, 55.0),
                                          (60.0, 55.0), (60.0, 65.0)])
    def test_off_nominal_frequency(self, f0, f_hz):
        # C37.118.1-2011 Table 3 (amendment 2014) / 60255-118-1: M class, off-nominal +/-5 Hz, TVE <= 1 %;
        # frequency error <= 0.005 Hz steady state (REFERENCES.md [pub]).
        cyc, tve = run(f_hz, f0)
        assert interior(tve).max() <= TVE_TARGET
        assert np.abs(interior(cyc["frequency_hz"]) - f_hz).max() <= 0.005

    def test_harmonic_of_every_order_2_to_50(self):
        # C37.118.1-2011 Table 3: harmonic distortion test, 10 % of each order up to 50 (M class).
        worst = []
        for n in range(2, 51):
            _, tve = run(50.0, harmonics={n: (0.10, 0.7)}, duration_s=0.4)
            worst.append(interior(tve).max())
        assert len(worst) == 49
        assert max(worst) <= TVE_TARGET

    @pytest.mark.parametrize("n", [2, 3, 13, 49, 50])
    def test_harmonic_at_off_nominal_frequency(self, n):
        # Harmonics riding on a +5 Hz off-nominal fundamental (the orders follow the fundamental);
        # a harder case than C37.118.1 asks (it tests harmonics at nominal frequency).
        _, tve = run(55.0, harmonics={n: (0.10, 0.2)}, duration_s=0.4)
        assert interior(tve).max() <= TVE_TARGET

    def test_noise_60_db(self):
        # Project target: 60 dB SNR white noise (not a C37.118.1 test condition; common practice, no source).
        cyc, tve = run(50.0, snr_db=60.0)
        assert interior(tve).max() <= TVE_TARGET
        assert np.abs(interior(cyc["frequency_hz"]) - 50.0).max() <= 0.005

    def test_everything_at_once(self):
        # Off-nominal -5 Hz, 10 % 3rd harmonic and 60 dB noise together (project target, no source).
        _, tve = run(45.0, harmonics={3: (0.10, 0.2)}, snr_db=60.0, seed=4)
        assert interior(tve).max() <= TVE_TARGET


class TestSteps:
    @pytest.mark.parametrize("kind", ["magnitude", "phase"])
    def test_back_within_target_after_two_cycles(self, kind):
        # C37.118.1-2011 clause 5.5.8 step tests (+/-10 % magnitude, +/-10 deg phase); project target:
        # TVE <= 0.2 % for every phasor whose window centre is 2 cycles or more from the step.
        ts = 0.5123
        cyc, tve = run(50.0, step=(kind, ts))
        tc = cyc["t_s"].to_numpy()
        far = (np.abs(tc - ts) >= 2 * 0.02)
        far[:2] = far[-2:] = False
        assert far.sum() > 30
        assert tve[far].max() <= TVE_TARGET
        # the one cycle that straddles the step is the only one that may be off
        near = np.abs(tc - ts) < 2 * 0.02
        assert (tve[near] > TVE_TARGET).sum() <= 1


class TestAgainstIntegerCycleFFT:
    def test_synchronised_signal_matches_numpy_fft(self):
        # Independent reference: on an exactly synchronised signal (50 Hz at 10 kS/s, 200 samples a cycle)
        # the DFT bin 1 of an integer-cycle window is the phasor (common practice, no source; numpy.fft).
        t = np.arange(int(FS * 0.5)) / FS
        v = three_phase(t, RMS, 50.0, -np.pi / 2 + 0.4, {3: (0.05, 0.3), 5: (0.04, 1.0), 7: (0.03, 2.0)})
        cyc = measure(capture_of(v, None, FS)).cycles
        # (the first and last few cycles are skipped: the zero-phase filter's edge moves their crossings)
        est = absolute_phasor(cyc, "Va")[4:-4]
        start = cyc["t_start_s"].to_numpy()[4:-4] * FS
        s0 = np.floor(start).astype(int)
        idx = s0[:, None] + np.arange(200)[None, :]
        bins = np.fft.fft(v["A"][idx], axis=1)[:, 1] * np.sqrt(2.0) / 200.0  # peak phasor -> RMS phasor
        ref = bins * np.exp(-1j * 2 * np.pi * 50.0 * s0 / FS)  # phase of the cosine at s0 -> C37.118.1 frame
        assert len(est) > 15
        np.testing.assert_allclose(np.abs(est), np.abs(ref), rtol=1e-9)
        np.testing.assert_allclose(est, ref, atol=1e-7 * RMS)


class TestLeastSquaresCore:
    def test_pure_sinusoid_with_dc_offset_any_window(self):
        # A sinusoid plus DC is fitted exactly over any window at the right frequency (least squares
        # with the exact model; common practice, no source).
        f = 47.3
        n = np.arange(3000)
        x = 5.0 + np.sqrt(2) * 100.0 * np.cos(2 * np.pi * f * n / FS + 1.1)
        a = np.array([10.4, 700.9, 1234.25])
        b = a + np.array([150.0, 211.42, 333.3])
        first, w = window_weights(a, b)
        xw = gather(x[None, :], first, w.shape[1])
        centre = 0.5 * (a + b)
        reg = basis(first, w.shape[1], centre, np.full(3, 2 * np.pi * f), FS)
        ph, dc = fit_phasors(xw, w, reg)
        truth = 100.0 * np.exp(1j * (2 * np.pi * f * centre / FS + 1.1))
        np.testing.assert_allclose(ph[:, 0], truth, rtol=1e-10)
        np.testing.assert_allclose(dc[:, 0], 5.0, atol=1e-8)
