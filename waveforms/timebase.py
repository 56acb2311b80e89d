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
    start_offset_s : float
        Fitted time of grid point 0 minus the first stamp [s], within half a period
        (the first stamp's own jitter, with the sign reversed).
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
    start_offset_s: float = 0.0

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


#: Stamps are processed in blocks of this many rows, so that long captures (10^8 rows)
#: need no full-length temporaries besides the grid index.  64 KiB float64 blocks stay in
#: cache and under glibc's 128 KiB mmap threshold (larger temporaries are mapped and
#: unmapped on every operation): measured 4-10 times faster than 2 MiB blocks.
BLOCK_ROWS = 1 << 13
#: At most about this many positive steps (evenly spread over the file) give the median step.
MEDIAN_STEPS = 1 << 20


class DiskArray:
    """A 1-D array kept in a file and reached by slices, for `analyse_stamps` on stamps that do not fit in memory.

    Supports what `analyse_stamps` uses: ``size``, ``len``, integer and slice reads
    (``a[i]``, ``a[i:j]``, steps of 1) and slice writes.  Each access is one
    ``pread``/``pwrite``, so the process holds only the block it works on (the
    streamed CSV reader keeps an hour of stamps in a temporary file this way).
    """

    def __init__(self, path: str, dtype: Any, size: int = 0) -> None:
        import os

        self.path, self.dtype, self.size = str(path), np.dtype(dtype), int(size)
        self._fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o600)

    def __len__(self) -> int:
        return self.size

    @property
    def shape(self) -> tuple[int]:
        return (self.size,)

    def like(self, path: str, dtype: Any) -> DiskArray:
        """An uninitialised `DiskArray` of the same size in file ``path``."""
        return DiskArray(path, dtype, self.size)

    def append(self, values: np.ndarray) -> None:
        import os

        v = np.ascontiguousarray(values, dtype=self.dtype)
        os.pwrite(self._fd, v.tobytes(), self.size * self.dtype.itemsize)
        self.size += v.size

    def _range(self, key: slice) -> tuple[int, int]:
        a, b, step = key.indices(self.size)
        if step != 1:
            raise InvalidParameterError("DiskArray slices take a step of 1")
        return a, max(a, b)

    def __getitem__(self, key: int | slice) -> Any:
        import os

        if isinstance(key, slice):
            a, b = self._range(key)
        else:
            a = int(key) + (self.size if key < 0 else 0)
            if not 0 <= a < self.size:
                raise IndexError(key)
            b = a + 1
        k = self.dtype.itemsize
        out = np.frombuffer(os.pread(self._fd, (b - a) * k, a * k), dtype=self.dtype)
        return out if isinstance(key, slice) else out[0]

    def __setitem__(self, key: slice, values: np.ndarray) -> None:
        import os

        a, b = self._range(key)
        v = np.ascontiguousarray(np.broadcast_to(values, (b - a,)), dtype=self.dtype)
        os.pwrite(self._fd, v.tobytes(), a * self.dtype.itemsize)

    def close(self) -> None:
        import os

        if self._fd >= 0:
            os.close(self._fd)
            self._fd = -1

    def __del__(self) -> None:
        self.close()


def _blocks(n: int) -> range:
    return range(0, n, BLOCK_ROWS)


def _scan_steps(t: np.ndarray) -> tuple[int | None, int | None, np.ndarray]:
    """First backward step, first repeated stamp, and a spread sample of the positive steps.

    Raises `InvalidParameterError` on NaN or infinite stamps.  With no more than
    `MEDIAN_STEPS` steps every positive step is returned.
    """
    n = t.size
    stride = max(1, -(-(n - 1) // MEDIAN_STEPS))
    first_back = first_dup = None
    pos: list[np.ndarray] = []
    for a in _blocks(n - 1):
        b = min(n - 1, a + BLOCK_ROWS)
        if not np.all(np.isfinite(t[a : b + 1])):
            raise InvalidParameterError("time stamps contain NaN or infinite values")
        d = t[a + 1 : b + 1] - t[a:b]
        if first_back is None and (k := np.flatnonzero(d < 0)).size:
            first_back = a + int(k[0]) + 1
        if first_dup is None and (k := np.flatnonzero(d == 0)).size:
            first_dup = a + int(k[0]) + 1
        # steps a, a+stride, ... of the whole file (the same spread whatever the block size)
        p = d[(-a) % stride :: stride]
        pos.append(p[p > 0])
    return first_back, first_dup, np.concatenate(pos)


def _refine(t: np.ndarray, dt: float, offset: float, stop: int,
            idx_out: np.ndarray | None = None) -> tuple[float, float, bool]:
    """One least-squares step for the grid over rows ``[0, stop)``.

    Each stamp is put on its nearest grid point ``i`` of the grid ``t0 + offset + i * dt``
    (``i`` written to `idx_out` when given), and the straight line through
    (``i``, ``t - t0``) is fitted by least squares.  The sums are taken over the small
    residuals ``e = t - t0 - offset - i * dt`` in float64 (the line fitted to them
    corrects `offset` and `dt`), block by block: integer ``sum(i**2)`` overflows int64
    beyond about 3 million rows, and sums of raw stamps lose the microseconds to
    cancellation at 10^8 rows.  Returns the new period, the new offset (brought within
    half a period of the first stamp, whose grid index is then 0) and whether any index
    in `idx_out` changed.
    """
    t0 = t[0]
    s1 = si = se = sii = sie = 0.0
    changed = False
    for a in _blocks(stop):
        b = min(stop, a + BLOCK_ROWS)
        e = t[a:b] - t0
        e -= offset
        i = np.rint(e / dt)
        e -= i * dt
        s1 += b - a
        si += float(i.sum())
        se += float(e.sum())
        sii += float(np.dot(i, i))
        sie += float(np.dot(i, e))
        if idx_out is not None:
            ii = i.astype(np.int64)
            changed = changed or not np.array_equal(ii, idx_out[a:b])
            idx_out[a:b] = ii
    var = sii - si * si / s1
    if var > 0:
        slope = (sie - si * se / s1) / var
        dt += slope
        offset += (se - slope * si) / s1
    offset -= np.rint(offset / dt) * dt
    return dt, float(offset), changed


def analyse_stamps(t_s: np.ndarray) -> TimebaseReport:
    """Measure the regularity of time stamps.

    Parameters
    ----------
    t_s : ndarray or DiskArray
        Time stamps [s], one per row, in file order (any origin); a `DiskArray`
        for stamps kept on disk (the grid index is then a `DiskArray` too).  Pass stamps
        relative to a nearby origin (e.g. the first stamp), not epoch seconds or
        nanoseconds, or float64 rounding (0.24 us at 1.7e9 s) adds to the jitter.

    Returns
    -------
    TimebaseReport

    Notes
    -----
    The rate is first taken from the median step (robust to gaps), each stamp
    is put on its nearest grid point, and the period is then refined by least
    squares as a straight line over (grid index, stamp), slope and intercept, so
    that the first stamp's own jitter does not tilt the grid; common practice,
    no source.  The work is done in blocks of `BLOCK_ROWS` rows: besides the
    stamps and the returned grid index no full-length array is made.
    """
    t = t_s if isinstance(t_s, DiskArray) else np.asarray(t_s, dtype=np.float64)
    n = t.size
    if n < 2:
        raise InvalidParameterError(f"need at least two time stamps to find a sample rate, got {n}")
    first_back, first_dup, pos = _scan_steps(t)
    if pos.size == 0:
        return TimebaseReport(float("nan"), n, 0, float("nan"), float("nan"), (), first_dup, first_back, None)
    dt = float(np.median(pos))
    del pos
    if first_back is not None:
        return TimebaseReport(1.0 / dt, n, 0, float("nan"), float("nan"), (), first_dup, first_back, None)
    # Least-squares line over (grid index, stamp), fitted on
    # prefixes growing 8-fold, so that the error of the median step (stamps rounded
    # to 1 us at 3 kS/s are 333 or 334 us apart) never builds up to a whole sample.
    k = min(n, 64)
    offset = 0.0
    while k < n:
        dt, offset, _ = _refine(t, dt, offset, k)
        k = min(n, 8 * k)
    # then over all rows until the grid indices and the period agree (usually at once, at most a few rounds)
    idx = t.like(t.path + ".idx", np.int64) if isinstance(t, DiskArray) else np.empty(n, dtype=np.int64)
    for round_ in range(6):
        dt, offset, changed = _refine(t, dt, offset, n, idx)
        if (round_ > 0 and not changed) or idx[-1] <= 0:
            break
    t0 = t[0]
    jit_max = sq = 0.0
    first_coll = None
    gaps: list[tuple[int, int]] = []
    for a in _blocks(n):
        b = min(n, a + BLOCK_ROWS)
        resid = (t[a:b] - t0) - offset - idx[a:b] * dt
        jit_max = max(jit_max, float(np.max(np.abs(resid))))
        sq += float(np.dot(resid, resid))
        lo = max(a - 1, 0)  # steps into rows lo+1 .. b-1
        steps = np.diff(idx[lo:b])
        if first_coll is None and (c := np.flatnonzero((steps == 0) & (np.diff(t[lo:b]) != 0))).size:
            first_coll = lo + int(c[0]) + 1
        for j in np.flatnonzero(steps > 1):
            gaps.append((int(idx[lo + j] + 1), int(idx[lo + j + 1])))
    rate = _nice_rate(1.0 / dt)
    return TimebaseReport(
        sample_rate_hz=rate, n_stamps=n, n_grid=int(idx[-1]) + 1,
        jitter_max_s=jit_max, jitter_rms_s=float(np.sqrt(sq / n)),
        gaps=tuple(gaps), first_duplicate=first_dup, first_backwards=first_back, first_collision=first_coll,
        grid_index=idx, start_offset_s=offset,
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


def welch_hann(x: np.ndarray, sample_rate_hz: float, nperseg: int) -> tuple[np.ndarray, np.ndarray]:
    """Welch power spectral density, as ``scipy.signal.welch(x, fs, nperseg=nperseg, window="hann")`` computes it.

    Periodic Hann window, half-overlapping segments, each segment's mean removed,
    density scaling, one-sided, mean over segments [unit^2/Hz].  Written with
    numpy.fft so that reading a file (`infer_nominal_frequency`) does not import
    scipy.signal, which costs about a second at start-up.

    References
    ----------
    P. D. Welch, "The use of fast Fourier transform for the estimation of power
    spectra", IEEE Trans. Audio Electroacoustics 15(2), 1967 (method, from memory);
    the defaults are scipy.signal.welch's (tests/test_io_timebase.py compares the two).
    """
    x = np.asarray(x, dtype=np.float64)
    n = int(nperseg)
    step = n - n // 2
    w = 0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(n) / n)  # periodic Hann
    segs = np.lib.stride_tricks.sliding_window_view(x, n)[::step]
    segs = (segs - segs.mean(axis=-1, keepdims=True)) * w
    p = np.abs(np.fft.rfft(segs, axis=-1)) ** 2 / (sample_rate_hz * np.sum(w * w))
    if n % 2:
        p[:, 1:] *= 2.0
    else:
        p[:, 1:-1] *= 2.0
    return np.fft.rfftfreq(n, 1.0 / sample_rate_hz), p.mean(axis=0)


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
    Welch periodogram (`welch_hann`), peak refined by parabolic
    interpolation of the log spectrum; common practice, no source.
    """
    x = np.asarray(x, dtype=np.float64)[: int(max_s * sample_rate_hz)]
    x = x[np.isfinite(x)]
    if x.size < 5 * sample_rate_hz / 40.0 or sample_rate_hz < 200:
        return None, None
    x = x - x.mean()
    if not np.any(x):
        return None, None
    nper = min(x.size, int(sample_rate_hz))  # 1 Hz bins, or coarser on short captures
    f, p = welch_hann(x, sample_rate_hz, nper)
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
