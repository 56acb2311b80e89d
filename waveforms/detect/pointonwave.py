"""Point-on-wave refinement: the sample at which the waveforms stop repeating themselves.

In steady state a line current repeats every cycle, so ``d[n] = x[n] - x[n - N]``
(``N`` samples per cycle, fractional ``N`` by linear interpolation) is noise.
A switching event -- a line opening, a line returning, an energisation -- makes
``d`` leave the noise at the first sample that differs.  The onset is found as
the first sample where ``max_lines |d| / A`` exceeds a threshold, walked back to
the last sample still within the noise (common practice, no source).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from ..errors import InvalidParameterError


def cycle_deviation(x: np.ndarray, samples_per_cycle: float) -> np.ndarray:
    """``x[n] - x[n - N]`` for each row of ``x``; NaN for the first ``ceil(N)`` samples.

    Parameters
    ----------
    x : ndarray, shape (n_channels, n)
    samples_per_cycle : float
        ``N = fs / f`` (may be fractional) [samples].

    Examples
    --------
    A steady 50 Hz sine at 1 kS/s repeats every 20 samples; a step to half its
    amplitude at sample 60 shows in the deviation from there on:

    >>> import numpy as np
    >>> x = np.sin(2 * np.pi * np.arange(100) / 20)
    >>> x[60:] *= 0.5
    >>> d = cycle_deviation(x, 20.0)[0]
    >>> int(np.isnan(d).sum()), bool(np.abs(d[20:60]).max() < 1e-9), bool(np.abs(d[60:80]).max() > 0.4)
    (20, True, True)
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    if not samples_per_cycle > 1:
        raise InvalidParameterError(f"{samples_per_cycle=} must be above 1")
    n = x.shape[1]
    idx = np.arange(n, dtype=float)
    lag = idx - samples_per_cycle
    out = np.full_like(x, np.nan)
    ok = lag >= 0
    for row in range(x.shape[0]):  # per channel (3 rows), vectorised over samples
        out[row, ok] = x[row, ok] - np.interp(lag[ok], idx, x[row])
    return out


def departure_index(
    r: np.ndarray, search_from: int, baseline: slice, rel_threshold: float = 0.05, noise_factor: float = 4.0
) -> int | None:
    """First sample (>= ``search_from``) of a departure of ``r`` from its baseline noise.

    Parameters
    ----------
    r : ndarray
        Normalised deviation (non-negative), one value per sample.
    search_from : int
        First sample that may be the onset.
    baseline : slice
        Samples that are known to be before the event (noise reference).
    rel_threshold : float
        Smallest deviation that counts, in units of ``r`` (fraction of the amplitude).
    noise_factor : float
        Threshold as a multiple of the baseline's 99th percentile.

    Examples
    --------
    A deviation that leaves the noise (0.001) at sample 50 and grows from there:

    >>> import numpy as np
    >>> r = np.r_[np.full(50, 0.001), np.linspace(0.01, 0.5, 20)]
    >>> departure_index(r, search_from=30, baseline=slice(0, 30))
    50
    """
    base = r[baseline]
    base = base[np.isfinite(base)]
    noise = float(np.percentile(base, 99)) if base.size else 0.0
    thr = max(rel_threshold, noise_factor * noise)
    seg = r[search_from:]
    hit = np.flatnonzero(np.isfinite(seg) & (seg > thr))
    if hit.size == 0:
        return None
    k = search_from + int(hit[0])
    quiet = np.flatnonzero(~(r[search_from:k] > max(noise, 1e-12) * 1.5))
    return search_from + int(quiet[-1]) + 1 if quiet.size else search_from


def refine_onset_s(
    capture,
    channels: Sequence[str],
    window_s: tuple[float, float],
    frequency_hz: float,
    amplitude: float,
) -> float | None:
    """Sample-accurate onset [s from capture start] of a change inside ``window_s``.

    The cycle before the window is the noise baseline; one more cycle before
    that is read to form the one-cycle-earlier reference.  Returns None when
    the window lies too near the capture start or nothing departs.

    Parameters
    ----------
    capture : Capture
    channels : sequence of str
        Current (or voltage) channels to watch.
    window_s : (float, float)
        Where the onset may lie [s].
    frequency_hz : float
        Fundamental frequency there [Hz].
    amplitude : float
        Peak amplitude that normalises the deviation [A or V].

    Examples
    --------
    The sample at which line A's current of a 50 Hz, 5 kS/s capture drops to
    zero (at 1.0002 s, between cycle boundaries):

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> fs = 5000.0
    >>> t = np.arange(10_000) / fs
    >>> i = 10 * np.sqrt(2) * np.cos(2 * np.pi * 50 * t[None] - np.array([0, 2, 4])[:, None] * np.pi / 3)
    >>> i[0, 5001:] = 0.0
    >>> cap = from_arrays(i, standard_channels(voltages=None), fs)
    >>> print(f"{refine_onset_s(cap, ['Ia', 'Ib', 'Ic'], (0.98, 1.04), 50.0, 14.14):.4f}")
    1.0002
    """
    fs = capture.sample_rate_hz
    n_cyc = fs / frequency_hz
    a = int(math.floor(window_s[0] * fs))
    b = int(math.ceil(window_s[1] * fs))
    lo = a - int(math.ceil(2 * n_cyc)) - 2
    if lo < 0 or not amplitude > 0:
        return None
    b = min(b, capture.n_samples)
    if b <= a:
        return None
    x = capture.read(lo, b, list(channels))
    x = np.where(np.isfinite(x), x, 0.0)
    d = cycle_deviation(x, n_cyc)
    r = np.fmax.reduce(np.abs(d), axis=0) / amplitude  # NaN-aware, no warning
    base = slice(a - lo - int(math.ceil(n_cyc)), a - lo)
    k = departure_index(r, a - lo, base)
    if k is None:
        return None
    return (lo + k) / fs
