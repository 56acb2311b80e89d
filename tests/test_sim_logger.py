"""Logger artifacts: ADC quantisation and clipping, gain, offset, phase error, noise."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from waveforms.sim.logger import ChannelError, Logger, record

FS = 6000.0
T = np.arange(6000) / FS
X = 300.0 * np.cos(2 * np.pi * 60 * T)


def test_adc_rounds_to_the_lsb_and_clips_at_the_end_codes() -> None:
    # An N-bit ADC over +/-R has LSB = R / 2^(N-1); values round to the nearest code and
    # saturate at the end codes (common practice, no source).
    lg = Logger(sample_rate_hz=FS, adc_bits=12, voltage_range_v=256.0)
    out, clipped = record(lg, {"Va": X}, {"Va": "voltage"}, 60.0, seed=1)
    lsb = 256.0 / 2**11
    y = out["Va"]
    assert np.allclose(y / lsb, np.rint(y / lsb))
    assert y.max() == pytest.approx((2**11 - 1) * lsb) and y.min() == pytest.approx(-256.0)
    inside = np.abs(X) < 256.0 - lsb
    assert np.all(np.abs(y[inside] - X[inside]) <= lsb / 2 + 1e-12)
    codes = np.rint(X / lsb)
    assert clipped["Va"] == int(np.count_nonzero((codes >= 2**11 - 1) | (codes <= -(2**11))))
    assert clipped["Va"] > 0


def test_gain_offset_and_phase_error() -> None:
    lg = Logger(sample_rate_hz=FS, adc_bits=None, channel_errors={"Ia": ChannelError(gain=1.01, offset=0.5, phase_deg=2.0)})
    out, _ = record(lg, {"Ia": X}, {"Ia": "current"}, 60.0, seed=1)
    y = out["Ia"]
    # one-bin DFT over whole cycles (common practice, no source)
    ph = lambda s: np.sqrt(2) * np.mean(s * np.exp(-2j * np.pi * 60 * T))  # noqa: E731
    ratio = ph(y) / ph(X)
    assert abs(ratio) == pytest.approx(1.01, rel=1e-6)
    assert np.degrees(np.angle(ratio)) == pytest.approx(-2.0, abs=1e-4)  # a lag
    assert float(np.mean(y)) == pytest.approx(0.5, abs=1e-6)


def test_noise_has_the_stated_rms_and_is_reproducible() -> None:
    lg = Logger(sample_rate_hz=FS, adc_bits=None, noise_a=0.2)
    a, _ = record(lg, {"Ia": np.zeros(20000)}, {"Ia": "current"}, 60.0, seed=3)
    b, _ = record(lg, {"Ia": np.zeros(20000)}, {"Ia": "current"}, 60.0, seed=3)
    assert np.array_equal(a["Ia"], b["Ia"])
    assert float(np.std(a["Ia"])) == pytest.approx(0.2, rel=0.03)


def test_logger_rejects_naive_start_time() -> None:
    from waveforms.errors import InvalidParameterError

    with pytest.raises(InvalidParameterError, match="start_time=.*UTC offset"):
        Logger(start_time=dt.datetime(2026, 1, 1))
