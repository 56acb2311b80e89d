"""Time base of long captures (10^7 - 10^8 stamps): no integer overflow, residuals right to well under 1 us.

Stamps are made in blocks and passed as arrays (no files).  References: the known generating
period, grid and stamp errors of the synthetic stamps, and `scipy.stats.linregress` for the
least-squares line (period and start).  Tolerances come from the standard errors of a
least-squares line: slope sigma / sqrt(sum((i - mean(i))**2)) (about sigma * sqrt(12 / n**3)),
intercept at the first point about 2 * sigma / sqrt(n) (Draper & Smith, Applied Regression
Analysis, ch. 1; from memory).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.stats

from waveforms import timebase

BLOCK = 1 << 20


def _make(n, period_s, *, jitter_s=0.0, round_s=None, gap_rows=(), gap_len=(), seed=0, keep_err=True):
    """Stamps [s, first near 0] made block by block, and their known errors ``e = t - g * period``.

    ``g`` is the true grid index.  Returns ``t, e`` (``e`` a full array when `keep_err`, else
    ``(min(e), max(e), mean(e))`` to save memory).
    """
    rng = np.random.default_rng(seed)
    rows = np.asarray(gap_rows, dtype=np.int64)
    cum = np.concatenate(([0], np.cumsum(np.asarray(gap_len, dtype=np.int64))))
    t = np.empty(n)
    err = np.empty(n) if keep_err else None
    lo, hi, tot = np.inf, -np.inf, 0.0
    for a in range(0, n, BLOCK):
        b = min(n, a + BLOCK)
        g = np.arange(a, b, dtype=np.int64)
        g += cum[np.searchsorted(rows, g, side="right")]
        x = g * period_s
        if jitter_s:
            x += rng.uniform(-jitter_s, jitter_s, b - a)
        if round_s:
            x = np.round(x / round_s) * round_s
        t[a:b] = x
        e = x - g * period_s
        if keep_err:
            err[a:b] = e
        lo, hi, tot = min(lo, e.min()), max(hi, e.max()), tot + e.sum()
    return t, (err if keep_err else (lo, hi, tot / n))


def _true_grid(n, gap_rows, gap_len):
    rows = np.asarray(gap_rows, dtype=np.int64)
    cum = np.concatenate(([0], np.cumsum(np.asarray(gap_len, dtype=np.int64))))
    g = np.arange(n, dtype=np.int64)
    g += cum[np.searchsorted(rows, g, side="right")]
    return g


def test_six_million_iso_stamps_at_100_us_are_regular():
    # the reported case: 6 M ISO stamps 100 us apart (int64 ns since the epoch, converted as the CSV importer does);
    # integer sum(i**2) wrapped negative here.  Reference: the known generating period (100 us).
    n = 6_000_000
    ns = 1_709_280_000_000_000_000 + np.arange(n, dtype=np.int64) * 100_000
    t = (ns - ns[0]).astype(np.float64) * 1e-9
    rep = timebase.analyse_stamps(t)
    assert rep.sample_rate_hz == 10000.0
    assert not rep.irregular and rep.gaps == () and rep.n_grid == n
    assert rep.jitter_max_s < 1e-9


CASES_10M = {
    "regular": dict(),
    "rounded_1us": dict(round_s=1e-6),
    "jitter_5us": dict(jitter_s=5e-6),
    "gaps": dict(jitter_s=1e-6, gap_rows=(1000, 4_000_000, 9_999_000), gap_len=(3, 1, 250)),
}


@pytest.mark.parametrize("case", list(CASES_10M), ids=list(CASES_10M))
def test_ten_million_stamps(case):
    kw = CASES_10M[case]
    n, period = 10_000_000, 1.024e-4  # 9765.625 Hz: not a whole number of Hz, so the fitted rate is not snapped
    t, err = _make(n, period, **kw)
    rep = timebase.analyse_stamps(t)
    g = _true_grid(n, kw.get("gap_rows", ()), kw.get("gap_len", ()))
    assert np.array_equal(rep.grid_index, g)
    expect_gaps = tuple((int(g[r - 1] + 1), int(g[r])) for r in kw.get("gap_rows", ()))
    assert rep.gaps == expect_gaps
    # reference: scipy.stats.linregress, the least-squares line over the true grid
    gf = g.astype(np.float64)
    ref = scipy.stats.linregress(gf, t - t[0])
    assert 1.0 / rep.sample_rate_hz == pytest.approx(ref.slope, rel=1e-12)
    # linregress works on the raw sums (mean stamp ~500 s), so its intercept is itself only good to ~1e-11 s
    assert rep.start_offset_s == pytest.approx(ref.intercept, abs=1e-10)
    # reference: the generating period, within 10 standard errors of the slope (+ float64 rounding)
    sigma = max(kw.get("jitter_s", 0.0), kw.get("round_s", 0.0) or 0.0, 1e-12)
    se = sigma / np.sqrt(np.sum((gf - gf.mean()) ** 2))
    assert abs(1.0 / rep.sample_rate_hz - period) <= 10 * se + 1e-15 * period
    # reference: the known stamp errors less their least-squares line (scipy.stats.linregress):
    # the fitted residuals are right to far under 1 us
    line = scipy.stats.linregress(gf, err)
    resid = err - (line.intercept + line.slope * gf)
    assert rep.jitter_max_s == pytest.approx(np.max(np.abs(resid)), abs=1e-9)
    assert rep.jitter_rms_s == pytest.approx(np.sqrt(np.mean(resid**2)), abs=1e-9)
    assert not rep.irregular


def test_hundred_million_rounded_jittered_stamps_with_gaps():
    # 10^8 stamps, 102.4 us apart (2.8 h), +/-2 us jitter then rounded to 1 us, 1000 gaps.
    # References: the known generating period, grid and stamp errors.
    n, period = 100_000_000, 1.024e-4
    rng = np.random.default_rng(7)
    rows = np.sort(rng.choice(n - 1, 1000, replace=False)) + 1
    lens = rng.integers(1, 50, rows.size)
    t, (e_min, e_max, e_mean) = _make(n, period, jitter_s=2e-6, round_s=1e-6, gap_rows=rows, gap_len=lens, seed=3, keep_err=False)
    rep = timebase.analyse_stamps(t)
    cum = np.concatenate(([0], np.cumsum(lens)))
    assert rep.n_grid == n + int(cum[-1])
    assert rep.gaps == tuple((int(r - 1 + cum[k] + 1), int(r + cum[k + 1])) for k, r in enumerate(rows))
    for a in range(0, n, 1 << 24):  # grid index equals the true grid, block by block
        g = np.arange(a, min(n, a + (1 << 24)), dtype=np.int64)
        g += cum[np.searchsorted(rows, g, side="right")]
        assert np.array_equal(rep.grid_index[a : a + g.size], g)
    se = 2e-6 * np.sqrt(12.0 / float(n) ** 3)  # slope standard error, sum((i - mean)**2) ~ n**3 / 12
    assert abs(1.0 / rep.sample_rate_hz - period) <= 10 * se + 1e-15 * period
    # the residuals are the known errors less their mean, up to the fitted line's own error:
    # 10 standard errors of the intercept (2 sigma / sqrt(n)) plus of the slope over the whole grid
    tol = 10 * (2 * 2e-6 / np.sqrt(n) + rep.n_grid * se)
    assert rep.jitter_max_s == pytest.approx(max(e_max - e_mean, e_mean - e_min), abs=tol)
    assert tol < 2e-8 and not rep.irregular
