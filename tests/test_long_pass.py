"""One pass over the samples, and the same results for any thread count (issue 10 items 2 and 3).

Pure consistency tests, no external source: the quality survey, the measurement engine and the
speed track's decimated current ride on one chunk stream; what they give equals what each gives
on its own pass, whatever the number of threads.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from waveforms.analysis import default_speed_window_s
from waveforms.capture import Capture
from waveforms.io import read_capture
from waveforms.measure import measure
from waveforms.motor.nameplate import load_nameplate
from waveforms.quality import quality_notes
from waveforms.recipe import default_recipe, run_recipe
from waveforms.speed import track_speed, window_detail
from waveforms.speed.estimator import _decimated, make_decimator

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"


class CountingSource:
    """Wraps a sample source and records every read ``(start, stop, channels)``."""

    def __init__(self, inner) -> None:
        self.inner = inner
        self.reads: list[tuple[int, int, tuple[int, ...]]] = []

    @property
    def n_samples(self) -> int:
        return self.inner.n_samples

    @property
    def n_channels(self) -> int:
        return self.inner.n_channels

    def read(self, start, stop, channel_indices):
        self.reads.append((int(start), int(stop), tuple(channel_indices)))
        return self.inner.read(start, stop, channel_indices)

    def coverage(self, channel: int) -> np.ndarray:
        """How many times each sample of ``channel`` was read."""
        d = np.zeros(self.n_samples + 1, dtype=np.int64)
        for a, b, ch in self.reads:
            if channel in ch:
                d[a] += 1
                d[b] -= 1
        return np.cumsum(d)[:-1]


def _long_capture(duration_s: float = 60.0, fs: float = 5000.0) -> Capture:
    """A running 60 Hz motor (pump2's nameplate), long enough for many measurement blocks."""
    from waveforms.capture import from_arrays, standard_channels
    from waveforms.speed.synthetic import synthetic_currents

    n = int(duration_s * fs)
    t = np.arange(n) / fs
    v = np.vstack([460.0 / np.sqrt(3.0) * np.sqrt(2.0) * np.cos(2 * np.pi * 60.0 * t - k * 2 * np.pi / 3) for k in range(3)])
    i = synthetic_currents(duration_s, fs, 0.025, f1_hz=60.0, pole_pairs=2, rotor_bars=28, amplitude_a=50.0 * np.sqrt(2.0))
    return from_arrays(np.vstack([v, i]), standard_channels(), fs, nominal_frequency_hz=60.0)


def _counted(cap: Capture) -> tuple[Capture, CountingSource]:
    src = CountingSource(cap.source)
    return cap.replace(source=src), src


def _recipe(chunk: int = 4096):
    return default_recipe().without("report").with_params("measure", {"chunk_samples": chunk})


def test_one_pass_over_the_samples():
    alone = _long_capture()
    cap, src = _counted(alone)
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    chunk = 1 << 16
    state = run_recipe(_recipe(chunk), cap, nameplate=plate)
    assert state.speed is not None and len(state.speed) > 0
    ia = cap.index_of("Ia")
    cov = src.coverage(ia)
    # every sample read once in the pass (overlaps of 30 cycles and the engine's 16 short survey blocks aside):
    # a second pass by any stage (quality survey, speed decimation) would make the median 2
    assert np.median(cov) == 1
    assert cov.min() >= 1
    n = cap.n_samples
    overlap = int(np.ceil(30 * cap.sample_rate_hz / 60.0))
    survey = 16 * int(round(0.2 * cap.sample_rate_hz))
    assert cov.sum() <= n + 2 * overlap * (n // chunk + 1) + survey + 0.02 * n  # (+ point-on-wave refinement reads)
    # and what rode on the pass equals each stage on its own pass over a fresh copy
    assert state.quality == quality_notes(alone)
    solo = track_speed(alone, nameplate=plate, supply_hz=state.cycles[["t_s", "frequency_hz"]],
                       window_s=default_speed_window_s(alone.duration_s))
    # the detect stage adds direction / direction_basis (issue 12); the track's own columns must be equal
    pd.testing.assert_frame_equal(state.speed[list(solo.columns)], solo, check_exact=True)


def test_speed_stage_reads_nothing_after_the_measure_pass():
    cap, src = _counted(read_capture(SAMPLES / "jam.h5"))
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    rec = _recipe()
    state = run_recipe(rec.without("speed", "detect", "thermal"), cap, nameplate=plate)
    n_measure = len(src.reads)
    assert state.measurements.decimated is None  # no speed stage follows: nothing decimated
    src.reads.clear()
    state = run_recipe(rec.without("detect", "thermal"), cap, nameplate=plate)
    assert state.measurements.decimated is not None
    assert len(src.reads) == n_measure  # the speed track added no read
    assert state.speed is not None


@pytest.mark.parametrize("threads", [2, 3])
def test_results_do_not_depend_on_threads(threads):
    cap = read_capture(SAMPLES / "open_phase_stall.h5")
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    one = run_recipe(_recipe(8192), cap, nameplate=plate, threads=1)
    many = run_recipe(_recipe(8192), cap, nameplate=plate, threads=threads)
    for attr in ("cycles", "half_cycles", "harmonics"):
        pd.testing.assert_frame_equal(getattr(one.measurements, attr), getattr(many.measurements, attr), check_exact=True)
    pd.testing.assert_frame_equal(one.speed, many.speed, check_exact=True)
    pd.testing.assert_frame_equal(one.events_frame(), many.events_frame(), check_exact=True)
    assert one.quality == many.quality
    assert one.verdict == many.verdict
    a = measure(cap, chunk_samples=5000, threads=1)
    b = measure(cap, chunk_samples=5000, threads=threads)
    pd.testing.assert_frame_equal(a.cycles, b.cycles, check_exact=True)
    pd.testing.assert_frame_equal(a.harmonics, b.harmonics, check_exact=True)


@pytest.mark.parametrize(("q", "sv"), [(1, True), (7, True), (25, False)])
def test_decimator_blocks_equal_one_decimation(q, sv):
    rng = np.random.default_rng(3)
    from waveforms.capture import from_arrays, standard_channels

    cap = from_arrays(rng.normal(size=(6, 200_003)), standard_channels(), 10_000.0)
    names = ["Ia", "Ib", "Ic"] if sv else ["Ia", "Ib"]
    dec = make_decimator(cap, names, q, sv)
    blocks = [dec.block(c.start_index, c.data, c.lead, c.trail) for c in cap.iter_chunks(8192, 6000)]
    np.testing.assert_array_equal(dec.assemble(blocks), _decimated(cap, names, q, sv, 0, cap.n_samples))


def test_window_detail_from_the_kept_current_equals_a_fresh_read():
    cap = read_capture(SAMPLES / "open_phase_stall.h5")
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    state = run_recipe(_recipe(), cap, nameplate=plate)
    kept = state.measurements.decimated
    assert kept is not None
    opts = {"window_s": default_speed_window_s(cap.duration_s)}
    for t in state.speed["t_start_s"].to_numpy()[[0, len(state.speed) // 2, -1]]:
        a = window_detail(cap, float(t), nameplate=plate, decimated=kept, **opts)
        b = window_detail(cap, float(t), nameplate=plate, **opts)
        assert a.status == b.status
        np.testing.assert_array_equal(a.spectrum.power, b.spectrum.power)


@pytest.mark.parametrize("workers", [1, 2, 3, 64])
def test_batch_threads_do_not_oversubscribe(workers):
    import os

    from waveforms.batch.executors import capture_threads

    cores = len(os.sched_getaffinity(0))
    t = capture_threads(workers)
    assert t >= 1
    assert t * workers <= max(cores, workers)  # never more threads than cores, unless the workers alone are


def test_without_the_harmonic_table_the_other_tables_are_the_same():
    cap = read_capture(SAMPLES / "open_phase_stall.h5")
    a = measure(cap, chunk_samples=8192)
    b = measure(cap, chunk_samples=8192, harmonics=False, threads=2)
    pd.testing.assert_frame_equal(a.cycles, b.cycles, check_exact=True)
    pd.testing.assert_frame_equal(a.half_cycles, b.half_cycles, check_exact=True)
    assert len(a.harmonics) > 0 and len(b.harmonics) == 0
