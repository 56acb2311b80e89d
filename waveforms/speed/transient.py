"""Acceleration and slowdown times from the per-cycle RMS current envelope.

During a direct-on-line start the line current jumps to about the
locked-rotor value and stays high while the rotor accelerates, then falls to
the running value; during a slowdown into a stall it climbs from the running
value to the locked-rotor value.  The transient is bounded by the instants the
envelope leaves the first level and reaches the second, within
``settle_frac`` of the step (common practice, no source).  A coast-down after
disconnection carries no current and cannot be timed from the envelope.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..errors import InvalidParameterError


@dataclasses.dataclass(frozen=True)
class Transient:
    """One speed transient seen in the current envelope.

    Attributes
    ----------
    kind : {"acceleration", "slowdown"}
    start_s, end_s, duration_s : float
        [s] from the capture start.
    i_before_a, i_peak_a, i_after_a : float
        Envelope before, at its extreme, after [A] (``i_before_a`` NaN when unseen).
    start_censored : bool
        The envelope was already high in the first cycle of the record: the
        transient began at or before ``start_s``, so ``duration_s`` is a lower bound.
    """

    kind: str
    start_s: float
    end_s: float
    duration_s: float
    i_before_a: float
    i_peak_a: float
    i_after_a: float
    start_censored: bool = False


def _check(t_s, i_rms_a) -> tuple[np.ndarray, np.ndarray]:
    t = np.asarray(t_s, dtype=float)
    i = np.asarray(i_rms_a, dtype=float)
    if t.ndim != 1 or t.shape != i.shape or t.size < 4:
        raise InvalidParameterError(f"t_s and i_rms_a must be 1-D of equal length >= 4, got {t.shape} and {i.shape}")
    if np.any(np.diff(t) <= 0):
        raise InvalidParameterError("t_s must increase strictly")
    return t, i


def _level(t: np.ndarray, i: np.ndarray, lo: float, hi: float) -> float:
    sel = (t >= lo) & (t <= hi) & np.isfinite(i)
    return float(np.median(i[sel])) if sel.any() else float("nan")


def acceleration_interval(
    t_s, i_rms_a, *, settle_frac: float = 0.1, settle_s: float = 1.0, min_ratio: float = 2.0,
    off_frac: float = 0.1,
) -> Transient | None:
    """Start (energisation) and end (current settled) of a direct-on-line start.

    Parameters
    ----------
    t_s : array_like
        Cycle times [s] (e.g. ``cycles.t_s``).
    i_rms_a : array_like
        Per-cycle RMS line current (e.g. the largest of ``Ia_rms Ib_rms Ic_rms``) [A].
    settle_frac : float
        The start ends when the envelope is within this fraction of the step
        (peak minus running current) above the running current.
    settle_s : float
        Length of the end of the record whose median is the running current [s].
    min_ratio : float
        Least peak / running ratio for a start (inrush) to be recognised.
    off_frac : float
        Before energisation the current is below this fraction of the peak.

    Returns
    -------
    Transient or None
        None when the record shows no start (no inrush well above the running
        current, or a current that was already flowing before the rise).  When
        the record opens with the inrush, ``start_censored`` is set.

    Examples
    --------
    An envelope at rest for 0.2 s, an inrush of 60 A decaying to a running
    current of 10 A:

    >>> import numpy as np
    >>> t = np.arange(0.0, 5.0, 0.02)
    >>> i = np.where(t < 0.2, 0.0, 10 + 50 * np.exp(-np.clip(t - 0.2, 0, None) / 0.5))
    >>> tr = acceleration_interval(t, i)
    >>> print(tr.kind, f"{tr.start_s:.2f} {tr.end_s:.2f} {tr.i_after_a:.1f}")
    acceleration 0.20 1.36 10.0

    The end is where the envelope is within 10 % of the step above the running
    current: 0.2 + 0.5 ln(10) = 1.35 s, the next cycle time at 1.36 s.
    """
    t, i = _check(t_s, i_rms_a)
    k_pk = int(np.nanargmax(i))
    i_pk = float(i[k_pk])
    i_after = _level(t, i, t[-1] - settle_s, t[-1])
    if not (i_pk > 0 and np.isfinite(i_after) and i_pk >= min_ratio * i_after):
        return None
    on = np.flatnonzero(i[: k_pk + 1] >= 0.5 * i_pk)
    k0 = int(on[0])
    i_before = float(np.median(i[:k0])) if k0 > 0 else float("nan")
    if k0 > 0 and not (i_before < off_frac * i_pk):
        return None  # the rise did not start from rest
    target = i_after + settle_frac * (i_pk - i_after)
    below = np.flatnonzero(i[k_pk:] <= target)
    if below.size == 0:
        return None
    k1 = k_pk + int(below[0])
    return Transient("acceleration", float(t[k0]), float(t[k1]), float(t[k1] - t[k0]), i_before, i_pk, i_after,
                     start_censored=k0 == 0)


def slowdown_interval(
    t_s, i_rms_a, *, settle_frac: float = 0.1, settle_s: float = 1.0, min_ratio: float = 1.5,
) -> Transient | None:
    """Start and end of a rise of the current from a running level to a higher (stall) level.

    The running level is the median of the first ``settle_s``, the final level
    the median of the last ``settle_s``; the slowdown starts at the last cycle
    within ``settle_frac`` of the step above the running level before the
    envelope first reaches within ``settle_frac`` of the final level, where it ends.

    Returns
    -------
    Transient or None
        None when the final level is not at least ``min_ratio`` x the running level.

    Examples
    --------
    A motor running at 10 A stalls: the current rises to 60 A between 1.0 and 1.5 s:

    >>> import numpy as np
    >>> t = np.arange(0.0, 4.0, 0.02)
    >>> i = np.interp(t, [0.0, 1.0, 1.5, 4.0], [10.0, 10.0, 60.0, 60.0])
    >>> tr = slowdown_interval(t, i)
    >>> print(tr.kind, f"{tr.start_s:.2f} {tr.end_s:.2f} {tr.i_after_a:.0f}")
    slowdown 1.04 1.46 60

    It starts at the last cycle within 10 % of the 50 A step above 10 A (15 A
    is reached at 1.05 s) and ends at the first within 10 % of 60 A (55 A at 1.45 s).
    """
    t, i = _check(t_s, i_rms_a)
    i0 = _level(t, i, t[0], t[0] + settle_s)
    i1 = _level(t, i, t[-1] - settle_s, t[-1])
    if not (np.isfinite(i0) and np.isfinite(i1) and i0 > 0 and i1 >= min_ratio * i0):
        return None
    step = i1 - i0
    up = np.flatnonzero(i >= i1 - settle_frac * step)
    k1 = int(up[0])
    low = np.flatnonzero(i[: k1 + 1] <= i0 + settle_frac * step)
    if low.size == 0:
        return None
    k0 = int(low[-1])
    return Transient("slowdown", float(t[k0]), float(t[k1]), float(t[k1] - t[k0]), i0, float(np.nanmax(i)), i1)
