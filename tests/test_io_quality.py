"""Data-quality notes: statistics against numpy, chunk invariance, and each finding."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st

from waveforms import from_arrays, standard_channels
from waveforms.capture import Channel, Gap
from waveforms.quality import CLIP_MIN_RUN, channel_stats, quality_notes


def _cap(x, **kw):
    ch = standard_channels("LN", True)[: x.shape[0]]
    return from_arrays(x, ch, 5000.0, **kw)


def _sines(n=5000, amp=325.0):
    t = np.arange(n) / 5000.0
    return np.vstack([amp * np.sin(2 * np.pi * 50 * t - k * 2 * np.pi / 3) for k in range(3)])


def test_stats_match_numpy():
    rng = np.random.default_rng(3)
    x = _sines() + rng.normal(0, 1, (3, 5000)) + np.array([[0.0], [2.0], [-40.0]])
    x[1, 100:120] = np.nan
    st_ = channel_stats(_cap(x), chunk_samples=777)
    # reference: numpy nan-aware reductions over the whole array
    np.testing.assert_allclose(st_["mean"], np.nanmean(x, axis=1), rtol=1e-12, atol=1e-10)
    np.testing.assert_allclose(st_["rms"], np.sqrt(np.nanmean(x**2, axis=1)), rtol=1e-12)
    np.testing.assert_allclose(st_["ac_rms"], np.nanstd(x, axis=1), rtol=1e-10)
    np.testing.assert_array_equal(st_["min"], np.nanmin(x, axis=1))
    np.testing.assert_array_equal(st_["max"], np.nanmax(x, axis=1))
    np.testing.assert_array_equal(st_["n_nan"], [0, 20, 0])


@settings(max_examples=40, deadline=None)
@given(chunk=st.integers(1, 400), seed=st.integers(0, 2**31 - 1))
def test_stats_do_not_depend_on_chunking(chunk, seed):
    rng = np.random.default_rng(seed)
    x = np.clip(_sines(600) + rng.normal(0, 5, (3, 600)), -300, 300)  # clipped: runs at the extremes
    x[0, rng.integers(0, 600, 5)] = np.nan
    whole = channel_stats(_cap(x), chunk_samples=10_000)
    parts = channel_stats(_cap(x), chunk_samples=chunk)
    for col in ("n", "n_nan", "min", "max", "max_runs", "min_runs", "max_longest", "min_longest", "at_extremes"):
        np.testing.assert_array_equal(parts[col], whole[col], err_msg=col)
    np.testing.assert_allclose(parts["rms"], whole["rms"], rtol=1e-12)


def _checks(notes):
    return {(n["check"], n["channel"]) for n in notes}


def test_clean_capture_has_no_findings():
    assert quality_notes(_cap(_sines())) == []


def test_clipping_found():
    x = _sines()
    x[1] = np.clip(x[1], -300.0, 300.0)  # flat tops of ~2 x 40 samples per cycle
    notes = quality_notes(_cap(x))
    assert _checks(notes) == {("clipping", "Vb")}
    clip = notes[0]
    assert clip["runs"] == 50 * 2  # 1 s at 50 Hz = 50 cycles, one flat top and one flat bottom each
    assert "300" in clip["message"]


def test_run_counting_against_python_reference():
    # reference: plain Python run-length count of a short sequence
    x = np.array([[1, 5, 5, 5, 2, 5, 5, 0, 0, 0, 0, 3, 5, 5, 5, 5]], dtype=float)
    ch = (Channel("Va", "voltage", "A", "LN", "V"),)
    stt = channel_stats(from_arrays(x, ch, 1000.0), chunk_samples=3).iloc[0]
    runs, cur = [], 0
    for v in list(x[0]) + [None]:
        if v == 5:
            cur += 1
        else:
            if cur:
                runs.append(cur)
            cur = 0
    assert stt["max_runs"] == sum(r >= CLIP_MIN_RUN for r in runs) == 2
    assert stt["max_longest"] == max(runs) == 4
    assert stt["min_runs"] == 1 and stt["min_longest"] == 4


def test_flat_dead_offset_nan_gap():
    x = _sines()
    x[0] = 7.0  # flat
    x[1] *= 0.005  # dead: 0.5 % of the others
    x[2] += 40.0  # DC offset ~17 % of 230 V RMS
    x[:, 10:20] = np.nan
    x[2, 4000] = np.nan
    notes = quality_notes(_cap(x, gaps=(Gap(10, 20),)))
    assert _checks(notes) == {("gap", None), ("flat", "Va"), ("dead", "Vb"), ("offset", "Vc"), ("nan", "Vc")}
    off = next(n for n in notes if n["check"] == "offset")
    assert off["offset"] == pytest.approx(np.nanmean(x[2]), rel=1e-12)  # reference: numpy
    assert off["offset"] == pytest.approx(40.0, rel=1e-2)  # the NaNs leave the cycles slightly incomplete


def test_neutral_is_not_dead():
    t = np.arange(5000) / 5000.0
    x = np.vstack([10 * np.sin(2 * np.pi * 50 * t - k * 2.094) for k in range(3)] + [0.05 * np.sin(2 * np.pi * 150 * t)])
    cap = from_arrays(x, standard_channels(None, True, neutral_current=True), 5000.0)
    assert quality_notes(cap) == []
