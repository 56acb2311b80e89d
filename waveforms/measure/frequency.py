"""Frequency tracking: cycle boundaries and the fundamental frequency of each cycle.

The reference signal is the Clarke alpha component of the available phase
voltages, ``(2 x_a - x_b - x_c) / 3`` (for a balanced set it equals phase A;
with one phase dead it is still a clean sinusoid carried by the other two),
falling back to the line currents when the capture has no usable voltage.
It is low-pass filtered with zero phase (`scipy.signal.sosfiltfilt`, so
harmonics and noise cannot add zero crossings and the crossings are not
delayed), and each positive-going zero crossing with enough slope starts a
cycle.  Where the reference is dead (an interruption, a gap) no crossing
qualifies; cycles are then laid on a grid of nominal periods counted from the
capture start, so the table has no holes, and their frequency is NaN.

The frequency of a cycle is the median, over the cycle and two neighbours on
each side, of ``1 / period``: a phase step moves one zero crossing, and the
median keeps that one distorted period out of the phasor estimate.
"""

from __future__ import annotations

import numpy as np
from scipy import signal

#: Cycles whose length is outside this range of the nominal period are not
#: "tracked" (their frequency is NaN).  +/-30 % covers the +/-5 Hz off-nominal
#: range of IEC/IEEE 60255-118-1 M class at 50 and 60 Hz with margin.
PLAUSIBLE_PERIOD_RANGE = (0.7, 1.3)
#: Grid cycles are laid only where no tracked crossing lies within this
#: fraction of a nominal period (so a grid cycle next to a tracked one is 1 to 2 periods long,
#: never a stub).
GRID_CLEARANCE = 1.0
#: Neighbours on each side in the median of the cycle frequency.
MEDIAN_HALF_WIDTH = 2


def reference_coefficients(conductors: list[str]) -> np.ndarray:
    """Weights of the Clarke alpha component for the phases present (A, B, C order as given).

    Three phases: (2a - b - c)/3; two phases: the one of A (or the first) minus
    half the other, scaled; one phase: the phase itself.

    References
    ----------
    .. [1] E. Clarke, *Circuit Analysis of A-C Power Systems*, Vol. I, Wiley,
           1943 (alpha-beta-zero components).

    Examples
    --------
    >>> reference_coefficients(["A", "B", "C"]).round(3).tolist()
    [0.667, -0.333, -0.333]
    """
    n = len(conductors)
    if n == 3:
        order = {c: i for i, c in enumerate(conductors)}
        w = np.zeros(3)
        w[order["A"]], w[order["B"]], w[order["C"]] = 2.0 / 3.0, -1.0 / 3.0, -1.0 / 3.0  # Clarke alpha [1]
        return w
    if n == 2:
        return np.array([2.0 / 3.0, -1.0 / 3.0])
    return np.ones(n)


def nominal_from_measured(f_hz: float) -> float:
    """The nominal system frequency of a capture that declares none: 50 or 60 Hz, whichever is nearer ``f_hz``.

    The one rule of the package (issue 18): the declared frequency (capture
    metadata or the user's ``--nominal-frequency``), else this; never the
    motor nameplate's rated frequency, which is checked against it instead.

    Examples
    --------
    >>> nominal_from_measured(49.7), nominal_from_measured(59.2), nominal_from_measured(56.0)
    (50.0, 60.0, 60.0)
    """
    return 50.0 if abs(f_hz - 50.0) < abs(f_hz - 60.0) else 60.0


def tracked_band_hz(f_nom_hz: float) -> tuple[float, float]:
    """(lowest, highest) fundamental frequency whose cycles are tracked [Hz]: periods 0.7-1.3 x nominal.

    Examples
    --------
    >>> [round(x, 1) for x in tracked_band_hz(50.0)]
    [38.5, 71.4]
    """
    lo, hi = PLAUSIBLE_PERIOD_RANGE
    return f_nom_hz / hi, f_nom_hz / lo


def lowpass_sos(fs_hz: float, f_nom_hz: float) -> np.ndarray:
    """2nd-order Butterworth low-pass at twice the nominal frequency (little ringing after abrupt events).

    Examples
    --------
    >>> lowpass_sos(10_000.0, 50.0).shape  # one second-order section
    (1, 6)
    """
    cutoff = min(2.0 * f_nom_hz, 0.45 * fs_hz)
    return signal.butter(2, cutoff, btype="low", fs=fs_hz, output="sos")


def filtered_reference(ref: np.ndarray, sos: np.ndarray, pad_samples: int = 0) -> np.ndarray:
    """Zero-phase low-passed reference; NaN samples count as zero (no crossings there).

    ``pad_samples`` of odd (point-reflected) extension at each end, about two
    cycles, keep the start-up transient of the filter out of the first crossings.

    Examples
    --------
    The fundamental keeps its phase (zero-phase filtering), so the zero
    crossings stay where they were; its amplitude is that of a 2nd-order
    Butterworth applied twice, 1 / (1 + (f/fc)^4) = 0.941 at f/fc = 1/2
    (Butterworth magnitude response, common practice, no source):

    >>> import numpy as np
    >>> fs = 10_000.0
    >>> t = np.arange(5000) / fs
    >>> x = np.sin(2 * np.pi * 50 * t)
    >>> y = filtered_reference(x, lowpass_sos(fs, 50.0), pad_samples=400)
    >>> print(f"{y[1000:4000].max():.3f}", rising_crossings(y[1000:4000], fs, 1.0).round(2).tolist()[:3])
    0.941 [0.0, 200.0, 400.0]
    """
    ref = np.where(np.isfinite(ref), ref, 0.0)
    if ref.size <= 3 * (2 * sos.shape[0] + 1):
        return ref
    padlen = int(min(max(pad_samples, 3 * (2 * sos.shape[0] + 1)), ref.size - 1))
    return signal.sosfiltfilt(sos, ref, padtype="odd", padlen=padlen)


def rising_crossings(ref: np.ndarray, fs_hz: float, min_slope_per_s: float) -> np.ndarray:
    """Fractional sample positions of positive-going zero crossings with slope >= ``min_slope_per_s``.

    The position is interpolated linearly between the two samples that bracket
    the crossing (common practice, no source).

    Examples
    --------
    A 50 Hz sine sampled at 1 kS/s, starting 1 ms after a zero crossing, crosses
    upwards 19 samples later, then every 20 samples:

    >>> import numpy as np
    >>> x = np.sin(2 * np.pi * 50 * (np.arange(100) + 1) / 1000.0)
    >>> rising_crossings(x, 1000.0, min_slope_per_s=10.0).round(6).tolist()
    [19.0, 39.0, 59.0, 79.0]
    """
    i = np.flatnonzero((ref[:-1] < 0.0) & (ref[1:] >= 0.0))
    d = ref[i + 1] - ref[i]
    keep = d * fs_hz >= min_slope_per_s
    i, d = i[keep], d[keep]
    return i + (-ref[i] / d)


def cycle_boundaries(
    crossings: np.ndarray, n_samples: int, start_index: int, fs_hz: float, f_nom_hz: float
) -> tuple[np.ndarray, np.ndarray]:
    """Sorted cycle boundaries (local fractional positions) and whether each is a tracked crossing.

    Grid boundaries sit at ``m * fs / f_nom`` samples from the capture start
    (``start_index`` is the block's first absolute sample), only where no
    crossing lies within `GRID_CLEARANCE` nominal periods.

    Examples
    --------
    Tracked crossings in the first half of a block, none in the second (a dead
    reference): grid boundaries at the nominal period fill the rest:

    >>> import numpy as np
    >>> b, tracked = cycle_boundaries(np.array([19.0, 39.0, 59.0]), 200, 0, 1000.0, 50.0)
    >>> b.tolist()
    [19.0, 39.0, 59.0, 80.0, 100.0, 120.0, 140.0, 160.0, 180.0]
    >>> tracked.tolist()
    [True, True, True, False, False, False, False, False, False]
    """
    period = fs_hz / f_nom_hz
    m0 = int(np.ceil(start_index / period))
    m1 = int(np.floor((start_index + n_samples - 1) / period))
    grid = np.arange(m0, m1 + 1, dtype=np.float64) * period - start_index
    if crossings.size:
        j = np.searchsorted(crossings, grid)
        left = np.abs(grid - crossings[np.clip(j - 1, 0, crossings.size - 1)])
        right = np.abs(crossings[np.clip(j, 0, crossings.size - 1)] - grid)
        grid = grid[np.minimum(left, right) > GRID_CLEARANCE * period]
    b = np.concatenate([crossings, grid])
    tracked = np.concatenate([np.ones(crossings.size, bool), np.zeros(grid.size, bool)])
    order = np.argsort(b, kind="stable")
    return b[order], tracked[order]


def _nan_median_windows(x: np.ndarray, half: int) -> np.ndarray:
    """Median of ``x[k-half : k+half+1]`` ignoring NaN (NaN when all are NaN); no warnings."""
    pad = np.concatenate([np.full(half, np.nan), x, np.full(half, np.nan)])
    win = np.sort(np.lib.stride_tricks.sliding_window_view(pad, 2 * half + 1), axis=1)  # NaN last
    n_ok = np.isfinite(win).sum(axis=1)
    lo = np.clip((n_ok - 1) // 2, 0, None)
    hi = np.clip(n_ok // 2, 0, None)
    med = 0.5 * (np.take_along_axis(win, lo[:, None], 1)[:, 0] + np.take_along_axis(win, hi[:, None], 1)[:, 0])
    return np.where(n_ok > 0, med, np.nan)


def cycle_frequency(boundaries: np.ndarray, tracked: np.ndarray, fs_hz: float, f_nom_hz: float) -> np.ndarray:
    """Frequency [Hz] of each cycle ``boundaries[k] -> boundaries[k+1]``; NaN where not tracked.

    Returns one value per cycle (``len(boundaries) - 1``).

    Examples
    --------
    Cycles of 200 samples at 10 kS/s are 50 Hz; a cycle between grid boundaries is not tracked:

    >>> import numpy as np
    >>> b = np.array([0.0, 200.0, 400.0, 600.0, 800.0])
    >>> cycle_frequency(b, np.array([True, True, True, True, False]), 10_000.0, 50.0).tolist()
    [50.0, 50.0, 50.0, nan]
    """
    length = np.diff(boundaries)
    nominal = fs_hz / f_nom_hz
    ok = (
        tracked[:-1] & tracked[1:]
        & (length >= PLAUSIBLE_PERIOD_RANGE[0] * nominal)
        & (length <= PLAUSIBLE_PERIOD_RANGE[1] * nominal)
    )
    raw = np.where(ok, fs_hz / np.where(length > 0, length, 1.0), np.nan)
    med = _nan_median_windows(raw, MEDIAN_HALF_WIDTH)
    return np.where(ok, med, np.nan)
