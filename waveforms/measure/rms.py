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

    Examples
    --------
    One window of a 1 V sine and a 2 A sine 60 degrees behind it, over one full
    period of 64 samples (uniform weights): the diagonal holds the mean squares,
    the off-diagonal term the mean product (P = V I cos 60 deg):

    >>> import numpy as np
    >>> n = np.arange(64)
    >>> v = np.sqrt(2) * np.sin(2 * np.pi * n / 64)
    >>> i = 2 * np.sqrt(2) * np.sin(2 * np.pi * n / 64 - np.pi / 3)
    >>> m = mean_products(np.stack([v, i])[None], np.ones((1, 64)))
    >>> print(np.round(m[0], 3))
    [[1. 1.]
     [1. 4.]]
    """
    wx = x * weights[:, None, :]
    return np.einsum("kcl,kdl->kcd", wx, x) / weights.sum(axis=1)[:, None, None]


def mean_square(x: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Weighted sum of squares and total weight: ``(sum w x^2 (n_win, n_ch), sum w (n_win,))``.

    Examples
    --------
    >>> import numpy as np
    >>> n = np.arange(64)
    >>> x = np.sqrt(2) * 230 * np.sin(2 * np.pi * n / 64)
    >>> s, w = mean_square(x[None, None, :], np.ones((1, 64)))
    >>> print(f"{np.sqrt(s[0, 0] / w[0]):.1f} V RMS")
    230.0 V RMS
    """
    return np.einsum("kcl,kcl,kl->kc", x, x, weights), weights.sum(axis=1)
