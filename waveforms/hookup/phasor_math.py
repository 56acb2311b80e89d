"""Small phasor helpers of the hook-up checks: sequence balance, wrapped angles, linear terms.

Sequence components are Fortescue's (`waveforms.measure.sequence`).

References
----------
.. [1] C. L. Fortescue, "Method of Symmetrical Co-ordinates Applied to the
       Solution of Polyphase Networks", Trans. AIEE 37, 1918.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..measure.sequence import sequence_components

Terms = dict[str, float]
LINES = ("A", "B", "C")


def combine(terms: Mapping[str, float], phasors: Mapping[str, np.ndarray]) -> np.ndarray:
    """Sum of ``coef * phasors[name]`` (per window)."""
    out = None
    for n, c in terms.items():
        x = c * phasors[n]
        out = x if out is None else out + x
    return out


def scaled(terms: Mapping[str, float], k: float) -> Terms:
    return {n: k * c for n, c in terms.items()}


def added(*terms: Mapping[str, float]) -> Terms:
    out: Terms = {}
    for t in terms:
        for n, c in t.items():
            out[n] = out.get(n, 0.0) + c
    return {n: c for n, c in out.items() if c != 0.0}


def wrap_deg(x: np.ndarray) -> np.ndarray:
    """Angles wrapped to (-180, 180] [deg]."""
    return -((-np.asarray(x, dtype=float) + 180.0) % 360.0 - 180.0)


def lag_deg(v: np.ndarray, i: np.ndarray) -> np.ndarray:
    """How far the current lags its voltage [deg], wrapped to (-180, 180]."""
    with np.errstate(all="ignore"):
        return wrap_deg(np.degrees(np.angle(v / i)))


def sequences(xa: np.ndarray, xb: np.ndarray, xc: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """|X0|, |X1|, |X2| per window (Fortescue 1918)."""
    x0, x1, x2 = sequence_components(xa, xb, xc)  # Fortescue 1918
    return np.abs(x0), np.abs(x1), np.abs(x2)


def unbalance(xa: np.ndarray, xb: np.ndarray, xc: np.ndarray) -> np.ndarray:
    """Smaller over larger of |X1|, |X2| per window (rotation-independent) [-]."""
    _, m1, m2 = sequences(xa, xb, xc)
    with np.errstate(all="ignore"):
        return np.minimum(m1, m2) / np.maximum(m1, m2)


def polar(x: complex, ref: complex) -> list[float]:
    """[magnitude, angle deg relative to ``ref``] for the phasor diagram."""
    if not (np.isfinite(x) and np.isfinite(ref)) or ref == 0:
        return [float("nan"), float("nan")]
    return [float(abs(x)), float(wrap_deg(np.degrees(np.angle(x / ref))))]
