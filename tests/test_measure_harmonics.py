"""Harmonic groups, subgroups and THD in IEC 61000-4-7 style (10/12-cycle windows)."""

from __future__ import annotations

import numpy as np
import pytest

from _measure_support import capture_of, three_phase
from waveforms.measure import measure
from waveforms.measure.harmonics import groups, line_spectra, subgroups

FS = 10_000.0


def test_synchronised_harmonics_and_thd():
    # IEC 61000-4-7 3.3 (THD from group values, H = 40; from memory): 5 %, 4 %, 3 % of orders 3, 5, 7
    # give THD = sqrt(5^2 + 4^2 + 3^2) = 7.071 %; exactly synchronised, each sits on its own line.
    t = np.arange(int(FS * 1.0)) / FS
    v = three_phase(t, 230.0, 50.0, 0.1, {3: (0.05, 0.2), 5: (0.04, 1.0), 7: (0.03, 2.0)})
    harm = measure(capture_of(v, None, FS)).harmonics
    assert len(harm) >= 4
    np.testing.assert_allclose(harm["Va_h1"], 230.0, rtol=1e-6)
    np.testing.assert_allclose(harm["Va_h3"], 0.05 * 230.0, rtol=1e-4)
    np.testing.assert_allclose(harm["Va_h5"], 0.04 * 230.0, rtol=1e-4)
    np.testing.assert_allclose(harm["Va_h7"], 0.03 * 230.0, rtol=1e-4)
    assert harm["Va_h2"].max() < 1e-3
    np.testing.assert_allclose(harm["Va_thd_pct"], np.sqrt(25 + 16 + 9), rtol=1e-4)
    # windows are 10 cycles (200 ms) at 50 Hz: IEC 61000-4-7 4.4.1 (from memory)
    np.testing.assert_allclose(harm["t_end_s"] - harm["t_start_s"], 0.2, atol=1e-6)


def test_interharmonic_between_orders_is_shared_by_both_groups():
    # IEC 61000-4-7 3.2 eq. (8): a harmonic group holds the lines within +/-4 of the centre fully and the
    # +/-5th lines at half power.  A tone at 125 Hz (line 25, midway between orders 2 and 3 in a 10-cycle
    # window) therefore counts half in G2 and half in G3: each sqrt(1/2) of its RMS; subgroups (+/-1 line,
    # eq. (9)) do not see it.
    t = np.arange(int(FS * 1.0)) / FS
    v = three_phase(t, 230.0, 50.0, 0.0)
    tone = np.sqrt(2) * 10.0 * np.cos(2 * np.pi * 125.0 * t)
    v = {c: x + tone for c, x in v.items()}
    harm = measure(capture_of(v, None, FS)).harmonics.iloc[1:-1]
    assert len(harm) >= 2
    np.testing.assert_allclose(harm["Va_h2"], 10.0 / np.sqrt(2), rtol=1e-3)
    np.testing.assert_allclose(harm["Va_h3"], 10.0 / np.sqrt(2), rtol=1e-3)
    assert harm["Va_hs2"].max() < 0.05 and harm["Va_hs3"].max() < 0.05


def test_sixty_hertz_uses_twelve_cycle_windows():
    # IEC 61000-4-7: 12 cycles at 60 Hz (5 Hz lines); 5th harmonic at 300 Hz on line 60.
    t = np.arange(int(FS * 1.0)) / FS
    v = three_phase(t, 120.0, 60.0, 0.0, {5: (0.06, 0.0)})
    m = measure(capture_of(v, None, FS, nominal_frequency_hz=60.0))
    assert m.info["harmonic_window_cycles"] == 12
    np.testing.assert_allclose(m.harmonics["Va_h5"], 0.06 * 120.0, rtol=2e-3)
    np.testing.assert_allclose(m.harmonics["t_end_s"] - m.harmonics["t_start_s"], 0.2, atol=2e-4)


class TestGroupArithmetic:
    def test_flat_spectrum_group_is_sqrt_n(self):
        # Group of a flat unit spectrum: (N - 1) full lines + 2 half lines = N (IEC 61000-4-7 eq. (8)).
        c = np.ones(2001)
        np.testing.assert_allclose(groups(c, 10, 50)[:50], np.sqrt(10.0))
        np.testing.assert_allclose(subgroups(c, 10, 50), np.sqrt(3.0))

    def test_line_spectra_match_scipy_periodogram(self):
        # Independent reference: scipy.signal.periodogram with a boxcar window and 'spectrum' scaling gives
        # the power of each DFT line (one-sided, RMS^2).
        from scipy.signal import periodogram

        rng = np.random.default_rng(5)
        x = rng.normal(size=(2, 2000))
        _, p = periodogram(x, fs=FS, window="boxcar", scaling="spectrum", detrend=False, axis=-1)
        c = line_spectra(x)
        np.testing.assert_allclose(np.square(c[:, 1:-1]), p[:, 1:-1], rtol=1e-10)
        assert c.shape == (2, 1001)
        assert float(np.square(c[0, 0])) == pytest.approx(float(p[0, 0]), rel=1e-10)
