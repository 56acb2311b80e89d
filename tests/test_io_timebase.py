"""Time base: stamp analysis, grid placement, resampling, nominal-frequency inference."""

from __future__ import annotations

import numpy as np
import pytest

from waveforms import timebase
from waveforms.errors import InvalidParameterError


def test_regular_stamps():
    t = 12.5 + np.arange(1000) / 3000.0
    rep = timebase.analyse_stamps(np.round(t, 6))  # rounded to 1 us as loggers write them
    assert rep.sample_rate_hz == 3000.0
    assert rep.gaps == () and rep.first_duplicate is None and rep.first_backwards is None
    assert rep.jitter_max_s <= 0.5e-6 + 1e-12  # the rounding, no more
    assert not rep.irregular


def test_gaps_found():
    t = np.delete(np.arange(100) / 100.0, np.r_[10:13, 50])
    rep = timebase.analyse_stamps(t)
    assert rep.gaps == ((10, 13), (50, 51))
    x, gaps = timebase.place_on_grid(np.arange(t.size, dtype=float)[None, :], rep)
    assert x.shape == (1, 100) and np.isnan(x).sum() == 4
    assert [(g.start_index, g.stop_index) for g in gaps] == [(10, 13), (50, 51)]


def test_duplicates_and_backwards():
    rep = timebase.analyse_stamps(np.array([0.0, 0.001, 0.001, 0.002]))
    assert rep.first_duplicate == 2
    rep = timebase.analyse_stamps(np.array([0.0, 0.001, 0.002, 0.0015, 0.003]))
    assert rep.first_backwards == 3


def test_place_refuses_irregular():
    rep = timebase.analyse_stamps(np.array([0.0, 0.001, 0.001, 0.002]))
    with pytest.raises(InvalidParameterError, match="cannot be placed on a grid"):
        timebase.place_on_grid(np.zeros((1, 4)), rep)


def test_resample_matches_numpy_and_keeps_gaps():
    rng = np.random.default_rng(0)
    t = np.cumsum(rng.uniform(0.5e-3, 1.5e-3, 500))
    t = np.concatenate([t[:200], t[200:] + 0.05])  # a 50 ms hole
    v = np.vstack([np.sin(2 * np.pi * 50 * t), np.cos(2 * np.pi * 50 * t)])
    out, gaps = timebase.resample_uniform(t, v, 1000.0)
    grid = t[0] + np.arange(out.shape[1]) / 1000.0
    ok = ~np.isnan(out[0])
    # reference: numpy.interp (linear) on the same points
    np.testing.assert_allclose(out[0, ok], np.interp(grid, t, v[0])[ok], rtol=0, atol=1e-12)
    assert len(gaps) == 1 and 45 <= gaps[0].n_samples <= 52
    assert np.isnan(out[:, gaps[0].start_index : gaps[0].stop_index]).all()


@pytest.mark.parametrize(("f_hz", "nominal"), [(50.0, 50.0), (49.7, 50.0), (60.0, 60.0), (60.4, 60.0), (55.0, None), (42.0, None)])
def test_infer_nominal_frequency(f_hz, nominal):
    # 50 and 60 Hz are the standard system frequencies (IEC 60196, from memory); +/-3 Hz acceptance is ours
    fs = 4000.0
    t = np.arange(int(fs)) / fs
    x = 325 * np.sin(2 * np.pi * f_hz * t) + 10 * np.sin(2 * np.pi * 5 * f_hz * t)
    got, peak = timebase.infer_nominal_frequency(x, fs)
    assert got == nominal
    # reference: numpy FFT peak of a long zero-padded transform
    spec = np.abs(np.fft.rfft(x * np.hanning(x.size), 64 * x.size))
    f = np.fft.rfftfreq(64 * x.size, 1 / fs)
    assert peak == pytest.approx(f[np.argmax(spec)], abs=0.1)


def test_infer_nominal_too_short_or_flat():
    assert timebase.infer_nominal_frequency(np.zeros(10000), 5000.0) == (None, None)
    assert timebase.infer_nominal_frequency(np.sin(np.arange(50)), 5000.0) == (None, None)


@pytest.mark.parametrize(("n", "nper"), [(20_000, 10_000), (15_001, 4_999), (1_000, 1_000)])
def test_welch_hann_matches_scipy(n, nper):
    # reference library: scipy.signal.welch (window "hann", its default overlap, detrend and density scaling)
    import scipy.signal

    from waveforms.timebase import welch_hann

    rng = np.random.default_rng(n)
    x = np.sin(2 * np.pi * 50.3 * np.arange(n) / 10_000.0) + 0.1 * rng.normal(size=n) + 0.2
    f_ref, p_ref = scipy.signal.welch(x, fs=10_000.0, nperseg=nper, window="hann")
    f, p = welch_hann(x, 10_000.0, nper)
    np.testing.assert_allclose(f, f_ref, rtol=1e-12)
    np.testing.assert_allclose(p, p_ref, rtol=1e-9, atol=1e-12 * p_ref.max())
