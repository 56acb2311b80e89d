"""Time base of an imported capture: from time stamps to a uniform sample grid.

Loggers write a time column that is rarely perfect: rounding jitter, missing
rows (gaps), repeated or backward stamps after a clock adjustment.  This module
measures those irregularities on the stamps (vectorised), places the samples on
a uniform grid with NaN where samples are missing, and resamples only when
asked.  It also infers the nominal system frequency (50 or 60 Hz) from the
samples when none is declared.
"""

from __future__ import annotations

import dataclasses
from typing import Any

import numpy as np

from .capture import Gap
from .errors import InvalidParameterError

#: Stamps further than this fraction of a sample period from the grid are "irregular".
IRREGULAR_FRACTION = 0.25
#: When resampling irregular stamps, steps longer than this many target periods are gaps
#: (irregular stamps legitimately step by more than 1.5 periods now and then).
RESAMPLE_GAP_PERIODS = 2.5


@dataclasses.dataclass(frozen=True)
class TimebaseReport:
    """What the time stamps of a file look like.

    Attributes
    ----------
    sample_rate_hz : float
        Rate fitted to the stamps [Hz].
    n_stamps : int
        Number of stamps (rows).
    n_grid : int
        Length of the uniform grid from the first to the last stamp.
    jitter_max_s : float
        Largest distance of a stamp from its grid point [s].
    jitter_rms_s : float
        RMS distance of stamps from their grid points [s].
    gaps : tuple of (int, int)
        Missing grid stretches ``[start, stop)``.
    first_duplicate : int or None
        Row index of the first stamp equal to (or on the same grid point as) the one before.
    first_backwards : int or None
        Row index of the first stamp earlier than the one before.
    first_collision : int or None
        Row index of the first stamp that lands on the same grid point as the one
        before although the stamps differ (heavy jitter: the stamps are irregular).
    grid_index : ndarray of int64 or None
        Grid position of every stamp (None when the stamps cannot be placed).
    """

    sample_rate_hz: float
    n_stamps: int
    n_grid: int
    jitter_max_s: float
    jitter_rms_s: float
    gaps: tuple[tuple[int, int], ...]
    first_duplicate: int | None
    first_backwards: int | None
    first_collision: int | None = None
    grid_index: np.ndarray | None = dataclasses.field(repr=False, default=None)

    @property
    def period_s(self) -> float:
        return 1.0 / self.sample_rate_hz

    @property
    def jitter_fraction(self) -> float:
        """Largest stamp jitter as a fraction of the sample period."""
        return self.jitter_max_s * self.sample_rate_hz

    @property
    def irregular(self) -> bool:
        return self.first_collision is not None or self.jitter_fraction > IRREGULAR_FRACTION

    def to_dict(self) -> dict[str, Any]:
        return {
            "sample_rate_hz": self.sample_rate_hz, "n_stamps": self.n_stamps, "n_grid": self.n_grid,
            "jitter_max_s": self.jitter_max_s, "jitter_rms_s": self.jitter_rms_s,
            "gaps": [list(g) for g in self.gaps],
            "first_duplicate": self.first_duplicate, "first_backwards": self.first_backwards,
        }


def _nice_rate(rate_hz: float) -> float:
    """Snap a fitted rate to an integer number of Hz when it is within 1 ppm of one."""
    r = round(rate_hz)
    return float(r) if r > 0 and abs(rate_hz - r) <= 1e-6 * rate_hz else float(rate_hz)


def analyse_stamps(t_s: np.ndarray) -> TimebaseReport:
    """Measure the regularity of time stamps.

    Parameters
    ----------
    t_s : ndarray
        Time stamps [s], one per row, in file order (any origin).

    Returns
    -------
    TimebaseReport

    Notes
    -----
    The rate is first taken from the median step (robust to gaps), each stamp
    is put on its nearest grid point, and the period is then refined by least
    squares over (grid index, stamp); common practice, no source.
    """
    t = np.asarray(t_s, dtype=np.float64)
    n = t.size
    if n < 2:
        raise InvalidParameterError(f"need at least two time stamps to find a sample rate, got {n}")
    if not np.all(np.isfinite(t)):
        raise InvalidParameterError("time stamps contain NaN or infinite values")
    d = np.diff(t)
    back = np.flatnonzero(d < 0)
    dup = np.flatnonzero(d == 0)
    first_back = int(back[0] + 1) if back.size else None
    first_dup = int(dup[0] + 1) if dup.size else None
    pos = d[d > 0]
    if pos.size == 0:
        return TimebaseReport(float("nan"), n, 0, float("nan"), float("nan"), (), first_dup, first_back, None)
    dt = float(np.median(pos))
    if first_back is not None:
        return TimebaseReport(1.0 / dt, n, 0, float("nan"), float("nan"), (), first_dup, first_back, None)
    rel = t - t[0]
    # Least-squares period through the origin over (grid index, stamp), fitted on
    # prefixes growing 8-fold, so that the error of the median step (stamps rounded
    # to 1 us at 3 kS/s are 333 or 334 us apart) never builds up to a whole sample.
    k = min(n, 64)
    while True:
        idx_k = np.rint(rel[:k] / dt).astype(np.int64)
        if idx_k[-1] > 0:
            dt = float(np.dot(idx_k, rel[:k]) / np.dot(idx_k, idx_k))
        if k == n:
            break
        k = min(n, 8 * k)
    # refit until the grid indices and the period agree (usually at once, at most a few rounds)
    idx = np.rint(rel / dt).astype(np.int64)
    for _ in range(5):
        if idx[-1] <= 0:
            break
        dt = float(np.dot(idx, rel) / np.dot(idx, idx))
        new_idx = np.rint(rel / dt).astype(np.int64)
        if np.array_equal(new_idx, idx):
            break
        idx = new_idx
    resid = rel - idx * dt
    same = np.flatnonzero((np.diff(idx) == 0) & (d != 0))
    first_coll = int(same[0] + 1) if same.size else None
    steps = np.diff(idx)
    gi = np.flatnonzero(steps > 1)
    gaps = tuple((int(idx[i] + 1), int(idx[i + 1])) for i in gi)
    rate = _nice_rate(1.0 / dt)
    return TimebaseReport(
        sample_rate_hz=rate, n_stamps=n, n_grid=int(idx[-1]) + 1,
        jitter_max_s=float(np.max(np.abs(resid))), jitter_rms_s=float(np.sqrt(np.mean(resid**2))),
        gaps=gaps, first_duplicate=first_dup, first_backwards=first_back, first_collision=first_coll,
        grid_index=idx,
    )


def place_on_grid(values: np.ndarray, report: TimebaseReport) -> tuple[np.ndarray, tuple[Gap, ...]]:
    """Put rows on the uniform grid; missing grid points are NaN and listed as `Gap`.

    Parameters
    ----------
    values : ndarray, shape (n_channels, n_stamps)
    report : TimebaseReport
        From `analyse_stamps` on the same rows (no duplicates, no backward steps).
    """
    if report.grid_index is None or report.first_duplicate is not None or report.first_backwards is not None or report.irregular:
        raise InvalidParameterError("irregular stamps (duplicates, backward steps, heavy jitter) cannot be placed on a grid")
    values = np.asarray(values, dtype=np.float64)
    if not report.gaps:
        return values, ()
    out = np.full((values.shape[0], report.n_grid), np.nan)
    out[:, report.grid_index] = values
    period = report.period_s
    gaps = tuple(
        Gap(a, b, f"no rows in the file for {b - a} samples ({(b - a) * period:.6g} s) from t = {a * period:.6f} s")
        for a, b in report.gaps
    )
    return out, gaps


def resample_uniform(t_s: np.ndarray, values: np.ndarray, rate_hz: float) -> tuple[np.ndarray, tuple[Gap, ...]]:
    """Linear interpolation of irregular rows onto a uniform grid starting at ``t_s[0]``.

    Only used when the user asks for resampling (``--resample``); the capture's
    history says so.  Grid points inside a step longer than `RESAMPLE_GAP_PERIODS`
    sample periods are not interpolated: they stay NaN and are listed as gaps.

    Parameters
    ----------
    t_s : ndarray, shape (n,)
        Stamps [s], strictly increasing.
    values : ndarray, shape (n_channels, n)
    rate_hz : float
        Target rate [Hz].

    Returns
    -------
    samples : ndarray, shape (n_channels, n_grid)
    gaps : tuple of Gap
    """
    t = np.asarray(t_s, dtype=np.float64)
    if t.size < 2 or np.any(np.diff(t) <= 0):
        raise InvalidParameterError("resampling needs at least two strictly increasing time stamps")
    period = 1.0 / rate_hz
    n = int(np.floor((t[-1] - t[0]) * rate_hz + 1e-9)) + 1
    grid = t[0] + np.arange(n) * period
    vals = np.asarray(values, dtype=np.float64)
    out = np.vstack([np.interp(grid, t, row) for row in vals]) if vals.shape[0] else np.empty((0, n))
    j = np.clip(np.searchsorted(t, grid, side="right") - 1, 0, t.size - 2)
    in_gap = (t[j + 1] - t[j]) > RESAMPLE_GAP_PERIODS * period
    in_gap &= ~np.isclose(grid, t[j], rtol=0, atol=1e-3 * period) & ~np.isclose(grid, t[j + 1], rtol=0, atol=1e-3 * period)
    out[:, in_gap] = np.nan
    edges = np.diff(np.concatenate(([0], in_gap.astype(np.int8), [0])))
    starts, stops = np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)
    gaps = tuple(
        Gap(int(a), int(b), f"no rows in the file for {b - a} samples ({(b - a) * period:.6g} s) from t = {a * period:.6f} s")
        for a, b in zip(starts, stops, strict=True)
    )
    return out, gaps


def infer_nominal_frequency(x: np.ndarray, sample_rate_hz: float, max_s: float = 2.0) -> tuple[float | None, float | None]:
    """Nominal system frequency (50 or 60 Hz) from the dominant component of a signal.

    Parameters
    ----------
    x : ndarray
        One channel's samples (a voltage preferably), NaN allowed.
    sample_rate_hz : float
        [Hz].
    max_s : float
        Use at most this much of the signal [s].

    Returns
    -------
    nominal_hz : 50.0, 60.0 or None
        None when the dominant component between 40 and 70 Hz is not within
        3 Hz of 50 or 60, or when there is too little data (under 5 cycles).
    peak_hz : float or None
        The frequency of the dominant component [Hz].

    Notes
    -----
    Welch periodogram (`scipy.signal.welch`), peak refined by parabolic
    interpolation of the log spectrum; common practice, no source.
    """
    import scipy.signal  # here, not at module level: importing it costs ~1 s at CLI start-up

    x = np.asarray(x, dtype=np.float64)[: int(max_s * sample_rate_hz)]
    x = x[np.isfinite(x)]
    if x.size < 5 * sample_rate_hz / 40.0 or sample_rate_hz < 200:
        return None, None
    x = x - x.mean()
    if not np.any(x):
        return None, None
    nper = min(x.size, int(sample_rate_hz))  # 1 Hz bins, or coarser on short captures
    f, p = scipy.signal.welch(x, fs=sample_rate_hz, nperseg=nper, window="hann")
    band = (f >= 40.0) & (f <= 70.0)
    if not np.any(band) or not np.any(p[band] > 0):
        return None, None
    k = int(np.flatnonzero(band)[np.argmax(p[band])])
    peak = float(f[k])
    if 0 < k < len(p) - 1 and np.all(p[k - 1 : k + 2] > 0):
        a, b, c = np.log(p[k - 1 : k + 2])
        denom = a - 2 * b + c
        if denom != 0:
            peak = float(f[k] + 0.5 * (a - c) / denom * (f[1] - f[0]))
    if abs(peak - 50.0) <= 3.0:
        return 50.0, peak
    if abs(peak - 60.0) <= 3.0:
        return 60.0, peak
    return None, peak
