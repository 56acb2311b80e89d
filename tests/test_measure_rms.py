"""RMS per cycle and Urms(1/2) (IEC 61000-4-30 one-cycle RMS refreshed every half cycle)."""

from __future__ import annotations

import numpy as np
import pytest

from _measure_support import capture_of, three_phase
from waveforms.measure import measure

FS = 10_000.0
T = 0.02


def test_cycle_rms_of_distorted_wave_is_parseval_sum():
    # True RMS of a sum of harmonics = sqrt(sum of the squared component RMS values) (Parseval; common
    # practice, no source), and equal to numpy's RMS over each whole synchronised cycle.
    t = np.arange(int(FS * 0.5)) / FS
    h = {3: (0.2, 0.1), 5: (0.1, 1.0), 11: (0.05, 2.0)}
    v = three_phase(t, 100.0, 50.0, -np.pi / 2, h)
    cyc = measure(capture_of(v, None, FS)).cycles.iloc[3:-3]
    expected = 100.0 * np.sqrt(1 + 0.2**2 + 0.1**2 + 0.05**2)
    np.testing.assert_allclose(cyc["Va_rms"], expected, rtol=1e-9)
    s0 = np.rint(cyc["t_start_s"].to_numpy() * FS).astype(int)
    direct = np.sqrt(np.mean(np.square(v["A"][s0[:, None] + np.arange(200)]), axis=1))
    np.testing.assert_allclose(cyc["Va_rms"], direct, rtol=1e-9)
    # fundamental magnitude excludes the harmonics
    np.testing.assert_allclose(cyc["Va_mag"], 100.0, rtol=1e-9)


def test_urms_half_refresh_and_known_dip_start():
    # Va = 230 V sine whose rising zero crossings fall on multiples of 20 ms; at t_d = 0.3 s (a zero
    # crossing) all phases dip to 50 %.  IEC 61000-4-30 (5.4.1 Urms(1/2), 5.4.2 dip detection with the
    # 90 % threshold; from memory): one-cycle windows refreshed every half cycle, so the window ending at
    # t_d is still 230 V, the one ending at t_d + T/2 covers half a cycle at each level,
    # sqrt((230^2 + 115^2) / 2) = 181.8 V (RMS of half-sine segments: common practice, no source), and is
    # the first below 0.9 x 230 V; the window ending at t_d + T is at 115 V.
    t = np.arange(int(FS * 0.8)) / FS
    td = 0.3
    v = three_phase(t, 230.0, 50.0, -np.pi / 2)
    v = {c: np.where(t >= td, 0.5 * x, x) for c, x in v.items()}
    half = measure(capture_of(v, None, FS)).half_cycles
    ts = half["t_s"].to_numpy()
    assert np.allclose(np.diff(ts)[5:-5], T / 2, atol=1.5e-3)        # refreshed every half cycle
    va = half["Va_rms_half"].to_numpy()
    first_low = ts[np.flatnonzero(va < 0.9 * 230.0)[0]]
    assert first_low == pytest.approx(td + T / 2, abs=1.5e-3)         # filter ringing moves edges < 1.5 ms
    at = lambda tq: va[np.argmin(np.abs(ts - tq))]                     # noqa: E731
    assert at(td - T / 2) == pytest.approx(230.0, rel=1e-3)
    assert at(td + T / 2) == pytest.approx(np.sqrt((230.0**2 + 115.0**2) / 2), rel=0.02)
    assert at(td + 3 * T) == pytest.approx(115.0, rel=1e-4)


def test_every_channel_has_a_half_cycle_column():
    t = np.arange(int(FS * 0.3)) / FS
    v = three_phase(t, 230.0, 50.0)
    i = three_phase(t, 5.0, 50.0, -0.4)
    half = measure(capture_of(v, i, FS)).half_cycles
    assert [c for c in half.columns if c.endswith("_rms_half")] == [
        "Va_rms_half", "Vb_rms_half", "Vc_rms_half", "Ia_rms_half", "Ib_rms_half", "Ic_rms_half"]
    assert np.all(np.diff(half["t_s"]) > 0)
