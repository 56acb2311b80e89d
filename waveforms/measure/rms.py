"""True RMS per cycle and Urms(1/2), the one-cycle RMS refreshed every half cycle.

References
----------
.. [1] IEC 61000-4-30:2015, *Testing and measurement techniques - Power
       quality measurement methods*, clause 5.4.1 / 3.x definitions:
       Urms(1/2) is the RMS value measured over one cycle, commencing at a
       fundamental zero crossing, and refreshed each half-cycle (from memory
       for the clause numbers).
"""

from __future__ import annotations

import numpy as np


def mean_products(x: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Window means of every product of two channels, shape ``(n_win, n_ch, n_ch)``.

    ``x`` is ``(n_win, n_ch, width)`` (from `waveforms.measure.windows.gather`).
    The diagonal is the mean square (RMS squared); the off-diagonal terms give
    active power (v x i) and line-to-line RMS from line-to-neutral channels.
    """
    wx = x * weights[:, None, :]
    return np.einsum("kcl,kdl->kcd", wx, x) / weights.sum(axis=1)[:, None, None]


def mean_square(x: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Weighted sum of squares and total weight: ``(sum w x^2 (n_win, n_ch), sum w (n_win,))``."""
    return np.einsum("kcl,kcl,kl->kc", x, x, weights), weights.sum(axis=1)
