"""How the three lines reach the machine's windings, and what an open line does.

Machine quantities live in winding space-vector coordinates (power-invariant
Clarke transform of the winding currents and voltages).  The map from them to
the three *line* currents is a 3x2 matrix ``M``:

* star: ``i_line = C^T i_s`` with ``C`` the power-invariant Clarke matrix;
* delta: winding currents ``i_w = C^T i_s`` and the line currents
  ``i_line = D i_w`` with ``D = [[1, 0, -1], [-1, 1, 0], [0, -1, 1]]``
  (``i_a = i_ab - i_ca`` ...), so ``M = D C^T``.

Power balance gives the machine-side voltage ``v_s = M^T v_terminal``; the
columns of ``M`` sum to zero, so the common-mode (neutral) voltage drops out.
``M^T M = m I`` with ``m = 1`` (star) or ``3`` (delta).

An open line ``j`` is the constraint ``(M i_s)_j = 0``.  The stator current
is then confined to the null space of the open rows: with one line open a
single direction ``u`` (the two remaining lines carry equal and opposite
currents), with two or three open nothing.  Only the component of the stator
equation along the allowed directions is imposed by the supply; the
component across them is the floating terminal voltage, set by the machine's
own back-EMF.  `projector` returns the orthogonal projector onto the allowed
subspace.  This is an exact constraint, not an approximation (common
practice for constrained linear networks, no source).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InvalidParameterError

LINES = ("A", "B", "C")

#: Power-invariant Clarke matrix (2x3): x_alpha_beta = CLARKE @ x_abc.
CLARKE = math.sqrt(2.0 / 3.0) * np.array([[1.0, -0.5, -0.5], [0.0, math.sqrt(3.0) / 2.0, -math.sqrt(3.0) / 2.0]])

#: Delta incidence: line currents from winding currents (ab, bc, ca).
DELTA_D = np.array([[1.0, 0.0, -1.0], [-1.0, 1.0, 0.0], [0.0, -1.0, 1.0]])


def line_map(connection: str) -> np.ndarray:
    """``M`` (3x2): line currents [A] from the winding space vector."""
    if connection == "star":
        return CLARKE.T.copy()
    if connection == "delta":
        return DELTA_D @ CLARKE.T
    raise InvalidParameterError(f"connection={connection!r} must be 'star' or 'delta'")


def winding_map(connection: str) -> np.ndarray:
    """3x2 matrix: winding currents (star: a, b, c; delta: ab, bc, ca) from the winding space vector."""
    if connection not in ("star", "delta"):
        raise InvalidParameterError(f"connection={connection!r} must be 'star' or 'delta'")
    return CLARKE.T.copy()


def projector(connection: str, closed: tuple[bool, bool, bool]) -> np.ndarray:
    """Orthogonal projector (2x2) onto the stator-current directions allowed by the closed lines."""
    m_map = line_map(connection)
    open_rows = [m_map[j] for j in range(3) if not closed[j]]
    if not open_rows:
        return np.eye(2)
    a = np.vstack(open_rows)
    if np.linalg.matrix_rank(a) >= 2:
        return np.zeros((2, 2))
    n = np.array([-a[0, 1], a[0, 0]])
    n /= np.linalg.norm(n)
    return np.outer(n, n)
