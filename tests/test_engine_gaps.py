"""The measurement engine steps over a splitting time-stamp gap (issue 20): no block read, one row, memory bounded.

Behaviour and consistency checks of the package's own engine against itself (the walk over
the whole grid, or the recorded stretches measured as captures of their own): no external source.
"""

from __future__ import annotations

import tracemalloc

import numpy as np
import pytest

from waveforms.capture import Gap, from_arrays, standard_channels
from waveforms.measure.engine import measure
from waveforms.quality import StatsAccumulator
from waveforms.segments import GappedSource, NO_DATA, mark_no_data
from waveforms.speed.estimator import _decimated, make_decimator

FS = 5000.0


def _signal(t: np.ndarray, i_amp: np.ndarray) -> np.ndarray:
    """Balanced 230 V line-to-neutral, currents lagging by 0.5 rad, phases on the absolute time ``t``."""
    ph = 2 * np.pi * (50.0 * t - np.arange(3)[:, None] / 3)
    return np.vstack([230 * np.sqrt(2) * np.cos(ph), i_amp * np.sqrt(2) * np.cos(ph - 0.5)])


def _gapped(n1: int, gap: int, n2: int) -> tuple:
    """A capture of ``n1`` samples, a gap of ``gap`` grid points, ``n2`` samples: (capture, stretch 1, stretch 2)."""
    t1 = np.arange(n1) / FS
    t2 = (n1 + gap + np.arange(n2)) / FS
    a1 = _signal(t1, 10.0 + 5.0 * np.exp(-t1))        # a decaying current: rows that differ from cycle to cycle
    a2 = _signal(t2, 20.0 + 2.0 * np.sin(0.7 * (t2 - t2[0])))
    vals = np.hstack([a1, a2])
    idx = np.r_[np.arange(n1), n1 + gap + np.arange(n2)]
    cap = from_arrays(vals, standard_channels(), FS, nominal_frequency_hz=50.0)
    cap = cap.replace(source=GappedSource(vals, idx),
                      gaps=(Gap(n1, n1 + gap, f"no rows in the file for {gap} samples ({gap / FS:g} s)"),))
    return cap, a1, a2


def _alone(a: np.ndarray):
    return measure(from_arrays(a, standard_channels(), FS, nominal_frequency_hz=50.0)).cycles


def test_a_ten_hour_gap_owns_one_row_and_memory_stays_bounded():
    """10 s + 10 h gap + 10 s: O(recorded cycles) rows, one "no data" marker row, peak allocation bounded (no external source).

    The walk over the gap's NaN grid made one row per cycle of the gap (1.8 million here) and
    allocated its tables for the whole duration; bounded here means below 150 MB of traced
    allocations, independent of the gap's length.
    """
    n1 = n2 = int(10 * FS)
    gap = int(36_000 * FS)
    cap, _, _ = _gapped(n1, gap, n2)
    tracemalloc.start()
    try:
        m = measure(cap)
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    recorded_cycles = (n1 + n2) / FS * 50.0
    assert len(m.cycles) <= recorded_cycles + 4, len(m.cycles)
    assert len(m.half_cycles) <= 2 * recorded_cycles + 8
    assert peak < 150e6, peak
    g0, g1 = n1 / FS, (n1 + gap) / FS
    inside = m.cycles[(m.cycles.t_start_s >= g0) & (m.cycles.t_end_s <= g1)]
    assert len(inside) == 1 and inside.t_start_s.iloc[0] == g0 and inside.t_end_s.iloc[0] == g1
    assert not inside.tracked.iloc[0] and np.isnan(inside.Va_rms.iloc[0])
    assert m.cycles.cycle.is_monotonic_increasing and m.cycles.t_start_s.is_monotonic_increasing
    # the timeline's rule marks the marker row, and only rows touching the gap, "no data"
    st = mark_no_data(m.cycles[["t_start_s", "t_end_s"]].assign(state="three-phase"), [(g0, g1)])
    assert (st.state == NO_DATA).sum() <= 3 and NO_DATA in set(st.state[(st.t_start_s >= g0) & (st.t_end_s <= g1)])
    assert not (m.half_cycles.t_s.gt(g0 + 0.04) & m.half_cycles.t_s.lt(g1)).any()  # no half-cycle row inside the gap


@pytest.mark.parametrize("chunk", [1 << 18, 7000])
def test_recorded_stretches_equal_their_own_analyses(chunk: int):
    """Each stretch's rows equal those of the stretch measured as a capture of its own (no external source).

    Tolerances (ours): RMS and powers relative 1e-4, frequency 0.01 Hz, percentages 0.01 points,
    angles 0.01 degree; beyond the first and last two cycles of a stretch relative 1e-6.  The
    first cycles after a gap are found from a reference whose filter saw the gap as zeros (the
    engine's rule for NaN), where the stretch alone was padded by reflection: boundaries
    differ by about 2 microseconds there.  The gap lasts a whole number of nominal cycles, so
    the absolute angles (nominal frame) agree.
    """
    n1, gap, n2 = int(10 * FS), int(600 * FS), int(8 * FS)
    cap, a1, a2 = _gapped(n1, gap, n2)
    c = measure(cap, chunk_samples=chunk).cycles
    off = (n1 + gap) / FS
    for part, ref, shift in [(c[c.t_end_s <= n1 / FS + 1e-9], _alone(a1), 0.0), (c[c.t_start_s >= off], _alone(a2), off)]:
        part, ref = part.reset_index(drop=True), ref.reset_index(drop=True)
        assert len(part) == len(ref)
        np.testing.assert_allclose(part.t_start_s - shift, ref.t_start_s, atol=1e-5)
        for col, tol in [("Va_rms", 1e-4), ("Ia_rms", 1e-4), ("P_w", 1e-4), ("Q_var", 1e-4), ("I1", 1e-4)]:
            np.testing.assert_allclose(part[col], ref[col], rtol=tol, err_msg=col)
            np.testing.assert_allclose(part[col][2:-2], ref[col][2:-2], rtol=1e-6, err_msg=col)
        np.testing.assert_allclose(part.frequency_hz, ref.frequency_hz, atol=0.01)
        for col in ("V2_V1_pct", "I2_I1_pct"):
            np.testing.assert_allclose(part[col], ref[col], atol=0.01, err_msg=col)
        for col in ("Ia_ang_deg", "V1_ang_deg"):
            d = (part[col] - ref[col] + 180.0) % 360.0 - 180.0
            assert np.abs(d).max() < 0.01, col


def test_the_feeds_see_what_the_walk_over_the_grid_gave():
    """The data-quality survey and the speed track's decimated current equal the full-grid walk's (no external source).

    The gap is fed as NaN (the survey counts the gap's samples), and the decimated outputs inside
    the gap are NaN without reading; next to the gap the blocks read their overlap into it, so
    the outputs there are computed from the same samples.
    """
    n1, gap, n2 = 30_000, 12_345, 20_000
    cap, _, _ = _gapped(n1, gap, n2)
    names = ["Ia", "Ib", "Ic"]
    q = 25
    acc = StatsAccumulator(cap)
    dec = make_decimator(cap, names, q, True)
    m = measure(cap, chunk_samples=8192, feed=acc.feed, decimator=dec)
    whole = StatsAccumulator(cap)
    for ch in cap.iter_chunks(8192):  # the walk over every grid point
        whole.feed(ch.owned)
    got, want = acc.records(), whole.records()
    assert got.keys() == want.keys()
    for name in want:
        for key in ("n", "n_nan", "min", "max", "max_runs", "min_runs"):
            assert got[name][key] == want[name][key], (name, key)
        np.testing.assert_allclose(got[name]["rms"], want[name]["rms"], rtol=1e-12)
    assert want["Va"]["n_nan"] == gap
    ref = _decimated(cap, names, q, True, 0, cap.n_samples)
    assert m.decimated.shape == ref.shape
    np.testing.assert_array_equal(np.isnan(m.decimated), np.isnan(ref))
    ok = ~np.isnan(ref)
    np.testing.assert_allclose(m.decimated[ok], ref[ok], rtol=1e-9, atol=1e-9)



def test_the_thermal_model_cools_over_the_gap_s_whole_duration():
    """The gap's one row is one step of the gap's length, cooling at standstill (no external source for the rule).

    The first-order model's free response over ``D`` seconds at zero input is
    ``theta exp(-D / tau)`` (IEC 60255-149:2013, clause 5), with the standstill time constant
    ``cooling_ratio x tau`` (the module's assumption for a de-energised motor); the walk over
    the gap's NaN cycles reached the same value in one step per cycle.
    """
    from waveforms.motor.thermal import ThermalParams, assess_thermal, cooled_state

    n1, gap, n2 = int(10 * FS), int(600 * FS), int(5 * FS)
    cap, _, _ = _gapped(n1, gap, n2)
    cyc = measure(cap).cycles
    p = ThermalParams(motor_tau_s=300.0, hot_start=True)
    r = assess_thermal(cyc, fla_a=12.0, params=p, gap_spans_s=[(n1 / FS, (n1 + gap) / FS)])
    k = int(np.flatnonzero((cyc.t_end_s - cyc.t_start_s).to_numpy() > 100.0)[0])  # the gap's row
    theta = r.track["theta_motor_pct"].to_numpy() / 100.0
    want = cooled_state(theta[k - 1], float(cyc.t_end_s[k] - cyc.t_start_s[k]), 300.0 * p.standstill_cooling_ratio)
    assert theta[k] == pytest.approx(want, rel=1e-9)
    assert theta[k] < 0.6 * theta[k - 1]  # 600 s at 3 x 300 s: exp(-2/3) = 0.51 of the state before
    assert r.summary["deenergised_s"] >= 600.0
    assert any("time-stamp gap" in n for n in r.summary["notes"])
