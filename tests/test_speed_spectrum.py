"""Spectral building blocks against numpy/scipy references and the window's known properties."""

from __future__ import annotations

import numpy as np
import pytest
import scipy.signal

from waveforms.errors import InvalidParameterError
from waveforms.speed import spectrum as sp


def test_space_vector_matches_clarke_alpha_beta():
    # Clarke 1943 (from memory): alpha = 2/3 (a - b/2 - c/2), beta = (b - c)/sqrt(3)
    rng = np.random.default_rng(1)
    a, b, c = rng.normal(size=(3, 50))
    z = sp.space_vector(a, b, c)
    np.testing.assert_allclose(z.real, 2 / 3 * (a - b / 2 - c / 2), atol=1e-12)
    np.testing.assert_allclose(z.imag, (b - c) / np.sqrt(3), atol=1e-12)


def test_space_vector_separates_sequences():
    # a balanced positive-sequence set of peak I gives I exp(+j w t); negative sequence exp(-j w t) (Clarke 1943, from memory)
    t = np.arange(1000) / 5000.0
    w = 2 * np.pi * 50
    pos = [np.cos(w * t - k * 2 * np.pi / 3) for k in range(3)]
    np.testing.assert_allclose(sp.space_vector(*pos), np.exp(1j * w * t), atol=1e-12)
    neg = [np.cos(w * t + k * 2 * np.pi / 3) for k in range(3)]
    np.testing.assert_allclose(sp.space_vector(*neg), np.exp(-1j * w * t), atol=1e-12)


def test_folded_power_of_a_sinusoid():
    # a real sinusoid of peak A on an exact bin carries A^2/2 (Parseval; common practice, no source)
    fs, n = 1000.0, 4000
    t = np.arange(n) / fs
    x = 3.0 * np.cos(2 * np.pi * 50.0 * t)
    s = sp.window_spectrum(x, fs, pad=4)
    k = np.argmin(np.abs(s.f_hz - 50.0))
    assert s.power[k] == pytest.approx(4.5, rel=1e-3)
    assert s.bin_hz == pytest.approx(0.25)


def test_folded_spectrum_equals_numpy_fft():
    # cross-check against numpy.fft directly on the same windowed block (numpy reference)
    rng = np.random.default_rng(2)
    x = rng.normal(size=(3, 512))
    s = sp.window_spectrum(x, 100.0, pad=1)
    w = scipy.signal.get_window("blackmanharris", 512, fftbins=False)
    z = np.fft.fft(x * w / w.sum(), axis=-1)
    p = np.sum(np.abs(z) ** 2, axis=0)
    ref = p[:257] + np.concatenate(([0.0], p[:0:-1][:256]))
    ref[0] = p[0]
    np.testing.assert_allclose(s.power, ref, rtol=1e-10)


@pytest.mark.parametrize("f0", [25.7312, 74.2491, 629.0113])
def test_refine_peak_recovers_tone_frequency(f0):
    # chirp-z zoom (Rabiner, Schafer & Rader 1969) + parabola: a clean tone to 1e-3 of a bin (common practice, no source)
    fs, n = 2000.0, 4000
    t = np.arange(n) / fs
    s = sp.window_spectrum(np.cos(2 * np.pi * f0 * t + 0.3), fs)
    k = np.argmax(s.power * (np.abs(s.f_hz - f0) < 2))
    f, p = sp.refine_peak(s, float(s.f_hz[k]))
    assert abs(f - f0) < 1e-3 * s.bin_hz
    assert p == pytest.approx(0.5, rel=2e-3)


def test_refine_peak_matches_scipy_zoom_fft():
    # the shift-and-cached-zoom equals scipy.signal.zoom_fft evaluated at the same frequencies (scipy reference)
    fs, n = 1000.0, 3000
    rng = np.random.default_rng(3)
    x = rng.normal(size=n) + np.cos(2 * np.pi * 123.4 * np.arange(n) / fs)
    s = sp.window_spectrum(x, fs)
    f, _ = sp.refine_peak(s, 123.4, span_bins=0.6, m=49)
    span = 0.6 * s.bin_hz
    zp = scipy.signal.zoom_fft(s.windowed[0], [123.4 - span, 123.4 + span], m=49, fs=fs, endpoint=True)
    zn = scipy.signal.zoom_fft(s.windowed[0], [-123.4 - span, -123.4 + span], m=49, fs=fs, endpoint=True)[::-1]
    grid = np.linspace(123.4 - span, 123.4 + span, 49)
    assert abs(f - grid[np.argmax(np.abs(zp) ** 2 + np.abs(zn) ** 2)]) <= grid[1] - grid[0]


@pytest.mark.parametrize("q", [2, 3, 8, 31])
def test_decimation_filter_pass_and_stop_band(q):
    # pass band flat to 0.25 fs/q, stop band >= 85 dB down beyond 0.62 fs/q (scipy.signal.freqz reference)
    h = sp.decimation_filter(q)
    w, r = scipy.signal.freqz(h, worN=16384, fs=1.0)
    mag_db = 20 * np.log10(np.abs(r) + 1e-300)
    assert np.all(np.abs(mag_db[w <= 0.25 / q]) < 0.01)
    assert np.all(mag_db[w >= 0.62 / q] < -85.0)


def test_decimation_aliases_stay_out_of_the_searched_range():
    # a strong tone at 0.7 fs/q folds to 0.3 fs/q... and must come out >= 85 dB down; the searched range
    # ends at 0.25 fs/q (sampling theorem; common practice, no source)
    fs, q = 10000.0, 10
    t = np.arange(200000) / fs
    y = sp.decimate(np.cos(2 * np.pi * 0.7 * fs / q * t), q)
    s = sp.window_spectrum(y[200:-200], fs / q)
    assert 10 * np.log10(s.power.max() / 0.5) < -85.0


def test_decimate_keeps_tone_and_timing():
    # output j is input j q (resample_poly removes the delay): a tone keeps phase and amplitude (scipy reference)
    fs, q = 10000.0, 10
    t = np.arange(20000) / fs
    x = np.cos(2 * np.pi * 50.0 * t + 0.4)
    y = sp.decimate(x, q)
    mid = slice(100, -100)
    np.testing.assert_allclose(y[mid], x[::q][mid], atol=1e-4)


def test_candidates_reject_sidelobes_and_guard_zones():
    # noise-free: only the fundamental (guarded) and its -92 dB Blackman-Harris sidelobes (Harris 1978, from memory)
    fs, n = 1000.0, 10000
    t = np.arange(n) / fs
    s = sp.window_spectrum(np.cos(2 * np.pi * 50.0 * t), fs)
    c = sp.find_candidates(s, 20.0, 80.0, 50.0)
    assert len(c) == 0
    # with a real -60 dB tone at 61.3 Hz it is found, with the right frequency
    s2 = sp.window_spectrum(np.cos(2 * np.pi * 50.0 * t) + 1e-3 * np.cos(2 * np.pi * 61.3 * t), fs)
    c2 = sp.find_candidates(s2, 20.0, 80.0, 50.0)
    assert len(c2) >= 1 and abs(c2.f_hz[0] - 61.3) < 1e-3
    assert c2.width_bins[0] > 1.5  # Blackman-Harris 3-dB bandwidth 1.90 bins (Harris 1978, from memory)


def test_bad_arguments():
    with pytest.raises(InvalidParameterError, match="too short"):
        sp.window_spectrum(np.ones(8), 100.0)
    with pytest.raises(InvalidParameterError, match="q=1 must be >= 2"):
        sp.decimation_filter(1)
    with pytest.raises(InvalidParameterError, match="f_max_hz=0"):
        sp.decimation_factor(1000.0, 0)


def test_alpha_beta_rows_equal_space_vector():
    # the two real rows are the real and imaginary parts of the Clarke space vector (Clarke 1943, from memory)
    rng = np.random.default_rng(4)
    a, b, c = rng.normal(size=(3, 40))
    ab = sp.alpha_beta(a, b, c)
    z = sp.space_vector(a, b, c)
    np.testing.assert_allclose(ab[0] + 1j * ab[1], z, atol=1e-12)


def test_decimate_complex_equals_real_and_imaginary_parts():
    # complex input is filtered as two real rows: same result as scipy.signal.resample_poly per part (scipy reference)
    rng = np.random.default_rng(5)
    z = rng.normal(size=3000) + 1j * rng.normal(size=3000)
    h = sp.decimation_filter(5)
    got = sp.decimate(z, 5, h)
    ref = scipy.signal.resample_poly(z.real, 1, 5, window=h) + 1j * scipy.signal.resample_poly(z.imag, 1, 5, window=h)
    np.testing.assert_allclose(got, ref, atol=1e-12)


def test_parabolic_peak_bias_below_5e5_bin():
    # the documented bias of the parabola on the 4x zero-padded Blackman-Harris grid, over a whole bin of offsets
    # (measured against the known tone frequency; common practice, no source)
    fs, n = 500.0, 5000
    worst = 0.0
    for f0 in np.linspace(25.0, 25.1, 21):
        s = sp.window_spectrum(np.cos(2 * np.pi * f0 * np.arange(n) / fs + 0.7), fs, pad=4)
        k = int(np.argmax(s.power * (np.abs(s.f_hz - f0) < 1)))
        f, _ = sp.parabolic_peak(s, k)
        worst = max(worst, abs(f - f0) / s.bin_hz)
    assert worst < 5e-5


def test_candidate_floor_is_the_numpy_median_of_the_neighbourhood():
    # the vectorised floor equals numpy.median over the same bins (numpy reference)
    rng = np.random.default_rng(6)
    fs, n = 500.0, 5000
    x = np.cos(2 * np.pi * 50 * np.arange(n) / fs) + 1e-4 * rng.normal(size=n)
    s = sp.window_spectrum(x, fs)
    c = sp.find_candidates(s, 20.0, 45.0, 50.0, refine="none", max_peaks=6)
    assert len(c) == 6
    step = s.f_hz[1]
    nh = int(np.ceil(25 * s.bin_hz / step))
    nl = int(np.ceil(sp.MAIN_LOBE_HALF_BINS * s.bin_hz / step))
    excl = sp.excluded_mask(s.f_hz, 50.0, 5 * s.bin_hz)
    for f, fl in zip(c.f_hz, c.floor_power, strict=True):
        i = int(np.argmin(np.abs(s.f_hz - f)))
        idx = np.arange(max(i - nh, 0), min(i + nh + 1, len(s.f_hz)))
        keep = (np.abs(idx - i) > nl) & ~excl[idx]
        assert fl == pytest.approx(np.median(s.power[idx[keep]]), rel=1e-12)
