"""Symmetrical components (Fortescue) of three phasors, and the phase sequence.

Labels follow the standard matrix: ``X1`` is the A-B-C (positive) rotation,
``X2`` the A-C-B (negative) rotation, whatever the supply actually does.  A
supply wired A-C-B therefore shows a large ``V2`` and a small ``V1``, and
`phase_sequence` reports ``"ACB"``: the labels and the detected sequence
always agree.

References
----------
.. [1] C. L. Fortescue, "Method of Symmetrical Co-ordinates Applied to the
       Solution of Polyphase Networks", *Trans. AIEE* 37, 1918, pp. 1027-1140.
.. [2] T. Gonen, *Electric Power Transmission System Engineering*, 2nd ed.,
       CRC Press, 2009, section 9.2 (matrix form with a = 1 at 120 deg).
"""

from __future__ import annotations

import numpy as np

A = np.exp(2j * np.pi / 3.0)  # the operator a = 1 at 120 deg [1]


def sequence_components(xa: np.ndarray, xb: np.ndarray, xc: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Zero, positive and negative sequence phasors of three phase phasors (any shape, complex).

    References
    ----------
    .. [1] Fortescue 1918; Gonen (2009) eq. (9.12)-(9.14).

    Examples
    --------
    A balanced A-B-C set of 230 V phasors is all positive sequence:

    >>> import numpy as np
    >>> a = np.exp(2j * np.pi / 3)
    >>> v0, v1, v2 = sequence_components(230 + 0j, 230 * a**2, 230 * a)
    >>> print(f"{abs(v0):.1f} {abs(v1):.1f} {abs(v2):.1f}")
    0.0 230.0 0.0

    With line A open and the other two currents equal and opposite (single
    phasing, the open line as reference), ``I1 = -I2``:

    >>> i0, i1, i2 = sequence_components(0j, -10 + 0j, 10 + 0j)
    >>> print(f"|I1| = {abs(i1):.3f}, |I2| = {abs(i2):.3f}, |I1 + I2| = {abs(i1 + i2):.3f}")
    |I1| = 5.774, |I2| = 5.774, |I1 + I2| = 0.000
    """
    x0 = (xa + xb + xc) / 3.0              # Fortescue 1918: X0 = (Xa + Xb + Xc)/3
    x1 = (xa + A * xb + A * A * xc) / 3.0  # X1 = (Xa + a Xb + a^2 Xc)/3
    x2 = (xa + A * A * xb + A * xc) / 3.0  # X2 = (Xa + a^2 Xb + a Xc)/3
    return x0, x1, x2


def sequence_from_line_to_line(xab: np.ndarray, xbc: np.ndarray, xca: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Positive and negative sequence, as line-to-neutral equivalents, from line-to-line phasors.

    The line-to-line set has no zero sequence; its positive sequence is
    ``sqrt(3) at +30 deg`` times the line-to-neutral one and its negative
    sequence ``sqrt(3) at -30 deg`` times (common practice, no source; follows
    from Vab = Va - Vb and the definitions of [1]).  The zero sequence of the
    line-to-neutral voltages cannot be recovered and is not returned.

    Examples
    --------
    Line-to-line phasors of a balanced 400 V A-B-C system give a 230.9 V
    positive sequence (400 / sqrt(3)) and no negative sequence:

    >>> import numpy as np
    >>> a = np.exp(2j * np.pi / 3)
    >>> vab = 400 * np.exp(1j * np.pi / 6)
    >>> v1, v2 = sequence_from_line_to_line(vab, vab * a**2, vab * a)
    >>> print(f"{abs(v1):.1f} {abs(v2):.1f}")
    230.9 0.0
    """
    _, y1, y2 = sequence_components(xab, xbc, xca)
    k1 = np.sqrt(3.0) * np.exp(1j * np.pi / 6.0)   # Vab1 = sqrt3 e^{+j30} Va1
    k2 = np.sqrt(3.0) * np.exp(-1j * np.pi / 6.0)  # Vab2 = sqrt3 e^{-j30} Va2
    return y1 / k1, y2 / k2


def phase_sequence(x1: np.ndarray, x2: np.ndarray, margin: float = 2.0, min_magnitude: float = 0.0) -> np.ndarray:
    """``"ABC"`` where |X1| > margin |X2|, ``"ACB"`` where |X2| > margin |X1|, else ``""``.

    A factor of 2 (default) keeps a heavily unbalanced or single-phased set from
    being given a sequence it does not clearly have, and ``min_magnitude`` (the
    engine uses 10 % of the capture's typical voltage) keeps noise on a dead
    supply from being given one (common practice, no source).

    Examples
    --------
    >>> import numpy as np
    >>> phase_sequence(np.array([230.0, 5.0, 100.0]), np.array([2.0, 229.0, 80.0])).tolist()
    ['ABC', 'ACB', '']
    """
    m1, m2 = np.abs(x1), np.abs(x2)
    out = np.full(np.shape(m1), "", dtype=object)
    alive = np.maximum(m1, m2) >= min_magnitude
    out[alive & (m1 > margin * m2)] = "ABC"
    out[alive & (m2 > margin * m1)] = "ACB"
    return out
