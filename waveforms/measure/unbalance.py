"""Unbalance of three magnitudes or of sequence components, in the definitions practitioners meet.

- ``vuf``: the true ratio |X2| / |X1| (IEC 61000-4-30 5.7, IEEE 1159 "imbalance").
- ``nema``: NEMA MG-1 line-voltage unbalance, maximum deviation from the average
  of the three line-to-line magnitudes over that average (Pillay's LVUR).
- ``pvur``: phase-voltage unbalance rate, the same on line-to-neutral values
  (Pillay & Manyage 2001; the "IEEE" definition of older texts).
- ``iec_ll``: the IEC 61000-4-30 formula from the three line-to-line magnitudes
  only; equal to |V2| / |V1| of the fundamental line-to-line set.

References
----------
.. [1] NEMA MG 1, *Motors and Generators*, Part 14, clause 14.36 (voltage
       unbalance definition and worked example; clause number varies by edition).
.. [2] P. Pillay, M. Manyage, "Definitions of Voltage Unbalance", *IEEE Power
       Engineering Review* 21(5), 2001, pp. 50-51.
.. [3] IEC 61000-4-30:2015, clause 5.7.1 (supply voltage unbalance; the
       line-to-line magnitude formula, recalled from memory).
"""

from __future__ import annotations

import numpy as np


def max_deviation_pct(xa: np.ndarray, xb: np.ndarray, xc: np.ndarray) -> np.ndarray:
    """100 x max |x - mean| / mean of three magnitudes (NEMA MG-1 [1] on line-to-line values, PVUR [2] on phase values).

    Examples
    --------
    The NEMA MG 1 worked example (line voltages 460, 467 and 450 V: average 459 V,
    largest deviation 9 V) gives 1.96 % (NEMA MG 1 Part 14, from memory):

    >>> print(f"{max_deviation_pct(460.0, 467.0, 450.0):.2f}")
    1.96
    """
    m = np.stack([xa, xb, xc])
    mean = m.mean(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return 100.0 * np.abs(m - mean).max(axis=0) / mean  # NEMA MG-1 14.36 [1]; Pillay 2001 [2]


def ratio_pct(minor: np.ndarray, major: np.ndarray) -> np.ndarray:
    """100 x |minor| / |major| (NaN where the major is zero).

    Examples
    --------
    >>> import numpy as np
    >>> ratio_pct(np.array([2.0, 1.0]), np.array([100.0, 0.0])).tolist()
    [2.0, nan]
    """
    major = np.abs(major)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(major > 0, 100.0 * np.abs(minor) / np.where(major > 0, major, 1.0), np.nan)


def vuf_pct(x1: np.ndarray, x2: np.ndarray) -> np.ndarray:
    """Rotation-independent true unbalance, 100 x smaller / larger of |X1|, |X2|.

    Equal to |X2|/|X1| for an A-B-C supply and |X1|/|X2| for an A-C-B one [3]_.

    Examples
    --------
    The same figure whichever way the supply rotates:

    >>> print(f"{vuf_pct(230.0, 4.6):.1f} {vuf_pct(4.6, 230.0):.1f}")
    2.0 2.0
    """
    m1, m2 = np.abs(x1), np.abs(x2)
    return ratio_pct(np.minimum(m1, m2), np.maximum(m1, m2))


def iec_line_to_line_pct(uab: np.ndarray, ubc: np.ndarray, uca: np.ndarray) -> np.ndarray:
    """IEC 61000-4-30 unbalance from line-to-line magnitudes.

    beta = (Uab^4 + Ubc^4 + Uca^4) / (Uab^2 + Ubc^2 + Uca^2)^2,
    u2 = sqrt((1 - sqrt(3 - 6 beta)) / (1 + sqrt(3 - 6 beta))) x 100 %.

    References
    ----------
    .. [3] IEC 61000-4-30:2015, 5.7.1 (from memory; the identity with |V2|/|V1|
           is checked in tests/test_measure_unbalance.py).

    Examples
    --------
    From the magnitudes alone it equals |V2| / |V1| of the line-to-line set:

    >>> import numpy as np
    >>> a = np.exp(2j * np.pi / 3)
    >>> u1, u2 = 400.0, 8.0
    >>> uab = u1 + u2
    >>> ubc = u1 * a**2 + u2 * a
    >>> uca = u1 * a + u2 * a**2
    >>> print(f"{iec_line_to_line_pct(abs(uab), abs(ubc), abs(uca)):.3f}")
    2.000
    """
    a2, b2, c2 = np.square(uab), np.square(ubc), np.square(uca)
    s2 = a2 + b2 + c2
    # 6 beta - 2 = 2 [(a2-b2)^2 + (b2-c2)^2 + (c2-a2)^2] / s2^2 (algebraically identical, no cancellation
    # near balance); then u2^2 = (1 - r)/(1 + r) = (6 beta - 2)/(1 + r)^2 with r = sqrt(3 - 6 beta).
    with np.errstate(invalid="ignore", divide="ignore"):
        e = 2.0 * (np.square(a2 - b2) + np.square(b2 - c2) + np.square(c2 - a2)) / np.square(s2)
        r = np.sqrt(np.clip(1.0 - e, 0.0, None))                        # sqrt(3 - 6 beta)
        return 100.0 * np.sqrt(np.clip(e, 0.0, None)) / (1.0 + r)     # IEC 61000-4-30 5.7.1
