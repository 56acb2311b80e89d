"""Power per cycle: active, fundamental reactive, apparent, power factors (IEEE 1459-2010).

Per phase (line-to-neutral voltages needed):
- ``P`` = mean of v i over the cycle (active power, IEEE 1459 3.1.2.x),
- ``Q`` = fundamental reactive power V1 I1 sin(theta1) = Im(V1 I1*) per phase,
- ``S`` = V_rms I_rms, ``PF`` = P / S.
Totals: ``P`` = sum of phases (or, with line-to-line voltages only, from the
zero-sum virtual neutral, exact when the line currents sum to zero);
``S`` is the effective apparent power 3 Ve Ie of IEEE 1459 (3-wire or 4-wire
Ve, Ie), ``PF`` = P / S; ``P1``, ``Q1`` are the positive-sequence powers
3 Re / Im (V1+ I1+*) and ``DPF`` = P1 / |S1+| = cos(theta1+).

References
----------
.. [1] IEEE Std 1459-2010, *IEEE Standard Definitions for the Measurement of
       Electric Power Quantities Under Sinusoidal, Nonsinusoidal, Balanced, or
       Unbalanced Conditions*: 3.2.2 (single phase: P, Q1, S, PF), 3.2.3 / 4.3
       (three phase: effective Ve, Ie, Se; positive-sequence P1+, Q1+, S1+,
       PF1+).  Clause numbers from memory.
"""

from __future__ import annotations

import numpy as np


def effective_voltage_4wire(vln_sq: np.ndarray, vll_sq: np.ndarray) -> np.ndarray:
    """Ve = sqrt((3 (Va^2 + Vb^2 + Vc^2) + Vab^2 + Vbc^2 + Vca^2) / 18), inputs are sums of squares over phases.

    References
    ----------
    .. [1] IEEE Std 1459-2010, eq. for Ve in four-wire systems (from memory).

    Examples
    --------
    A balanced 230/400 V system: Ve equals the phase voltage.

    >>> print(f"{effective_voltage_4wire(3 * 230.0**2, 3 * (230.0 * 3**0.5)**2):.1f}")
    230.0
    """
    return np.sqrt((3.0 * vln_sq + vll_sq) / 18.0)  # IEEE 1459-2010 Ve (4-wire)


def effective_voltage_3wire(vll_sq: np.ndarray) -> np.ndarray:
    """Ve = sqrt((Vab^2 + Vbc^2 + Vca^2) / 9) (IEEE 1459-2010, three-wire; from memory).

    Examples
    --------
    >>> print(f"{effective_voltage_3wire(3 * 400.0**2):.1f}")
    230.9
    """
    return np.sqrt(vll_sq / 9.0)  # IEEE 1459-2010 Ve (3-wire)


def effective_current(iline_sq: np.ndarray, in_sq: np.ndarray | None = None) -> np.ndarray:
    """Ie = sqrt((Ia^2 + Ib^2 + Ic^2 [+ In^2]) / 3) (IEEE 1459-2010; 3-wire without In; from memory).

    Examples
    --------
    One line open, 17.3 A on the other two: Ie = sqrt(2 x 17.3^2 / 3).

    >>> print(f"{effective_current(0.0 + 2 * 17.3**2):.2f}")
    14.13
    """
    total = iline_sq if in_sq is None else iline_sq + in_sq
    return np.sqrt(total / 3.0)  # IEEE 1459-2010 Ie


def fundamental_powers(v: np.ndarray, i: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """P1 and Q1 of one phasor pair (RMS phasors): Re and Im of V I* [W, var].

    Examples
    --------
    230 V and 10 A lagging by 30 degrees (a motor's current):

    >>> import numpy as np
    >>> p, q = fundamental_powers(230.0 + 0j, 10.0 * np.exp(-1j * np.pi / 6))
    >>> print(f"P = {p:.1f} W, Q = {q:.1f} var")
    P = 1991.9 W, Q = 1150.0 var
    """
    s = v * np.conj(i)
    return s.real, s.imag


def positive_sequence_powers(v1: np.ndarray, i1: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """P1+, Q1+ and DPF = P1+ / S1+ from positive-sequence phasors (line-to-neutral equivalent).

    References
    ----------
    .. [1] IEEE Std 1459-2010: S1+ = 3 V1+ I1+, P1+ = 3 V1+ I1+ cos(theta1+),
           PF1+ = P1+ / S1+ (from memory for the clause numbers).

    Examples
    --------
    >>> import numpy as np
    >>> p1, q1, dpf = positive_sequence_powers(230.0 + 0j, 10.0 * np.exp(-1j * np.pi / 6))
    >>> print(f"P1+ = {p1:.0f} W, Q1+ = {q1:.0f} var, DPF = {dpf:.3f}")
    P1+ = 5976 W, Q1+ = 3450 var, DPF = 0.866
    """
    s = 3.0 * v1 * np.conj(i1)  # IEEE 1459-2010 S1+ = 3 V1+ I1+*
    mag = np.abs(s)
    with np.errstate(invalid="ignore", divide="ignore"):
        dpf = np.where(mag > 0, s.real / np.where(mag > 0, mag, 1.0), np.nan)
    return s.real, s.imag, dpf


def ratio(num: np.ndarray, den: np.ndarray) -> np.ndarray:
    """num / den, NaN where den is zero (power factors).

    Examples
    --------
    >>> import numpy as np
    >>> ratio(np.array([80.0, 5.0]), np.array([100.0, 0.0])).tolist()
    [0.8, nan]
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)
