"""Sample windows with fractional ends: weights and gathered sample matrices.

A measurement window runs from a fractional sample position ``a`` to ``b``
(cycle boundaries of the tracked frequency rarely fall on a sample).  Each
sample gets the weight that makes the weighted sum equal to the integral, over
``[a, b]``, of the straight-line interpolation between samples.  For a
periodic sequence and a window exactly one period long the weighted sum then
equals the plain sum over one period, so an integer-cycle DFT is reproduced
exactly; for a non-integer period the window still spans exactly one period.

All windows of a block are handled at once as a ``(n_windows, width)`` matrix
of sample indices and weights (zero weight outside the window), so the
computations over them are matrix products, not Python loops.
"""

from __future__ import annotations

import numpy as np


def _hat_integral(u: np.ndarray) -> np.ndarray:
    """Integral of the unit hat function (1 - |x|, |x| < 1) from -1 to ``u``."""
    u = np.clip(u, -1.0, 1.0)
    return np.where(u <= 0.0, 0.5 * (u + 1.0) ** 2, 0.5 + u - 0.5 * u * u)


def window_grid(start: np.ndarray, stop: np.ndarray) -> tuple[np.ndarray, int]:
    """First sample index of each window ``[start, stop]`` and a common row width covering all of them."""
    first = np.floor(np.asarray(start, dtype=np.float64)).astype(np.int64)
    last = np.ceil(np.asarray(stop, dtype=np.float64)).astype(np.int64)
    width = int((last - first).max()) + 1 if first.size else 1
    return first, width


def weights_on_grid(first: np.ndarray, width: int, start: np.ndarray, stop: np.ndarray) -> np.ndarray:
    """Weights, shape ``(n, width)``, of sample ``first + j`` for the windows ``[start, stop]``.

    Weight of sample i = integral over [start, stop] of the hat function
    centred on i (exact integral of the linear interpolation between samples;
    common practice, no source).  The weights sum to ``stop - start`` and are
    additive: the weights of ``[a, m]`` and ``[m, b]`` add up to those of
    ``[a, b]``.  Zero outside the window.
    """
    rel = (first[:, None] + np.arange(width)[None, :]).astype(np.float64)
    w = _hat_integral(np.asarray(stop)[:, None] - rel) - _hat_integral(np.asarray(start)[:, None] - rel)
    return np.maximum(w, 0.0)


def window_weights(start: np.ndarray, stop: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First sample index and weights of windows ``[start, stop]`` (fractional sample positions).

    Returns
    -------
    first : ndarray of int, shape (n,)
    weights : ndarray, shape (n, width)
        Weight of sample ``first + j``; see `weights_on_grid`.
    """
    first, width = window_grid(start, stop)
    return first, weights_on_grid(first, width, start, stop)


def gather(data: np.ndarray, first: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Samples of every window, shape ``(n_windows, n_channels, width)``; zero where the weight is zero.

    ``data`` is ``(n_channels, n_samples)``; indices past the end are clipped
    (their weight must be zero).  NaN samples inside a window stay NaN.
    """
    n = data.shape[1]
    idx = first[:, None] + np.arange(weights.shape[1])[None, :]
    np.clip(idx, 0, n - 1, out=idx)
    x = data[:, idx]  # (n_ch, n_win, width)
    x = np.moveaxis(x, 0, 1)
    return np.where(weights[:, None, :] > 0.0, x, 0.0)
