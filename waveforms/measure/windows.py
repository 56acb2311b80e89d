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
    """Integral of the unit hat function (1 - |x|, |x| < 1) from -1 to ``u``: 1/2 + u - u|u|/2 on [-1, 1]."""
    u = np.clip(u, -1.0, 1.0)
    return 0.5 + u - 0.5 * u * np.abs(u)


def window_grid(start: np.ndarray, stop: np.ndarray) -> tuple[np.ndarray, int]:
    """First sample index of each window ``[start, stop]`` and a common row width covering all of them.

    Examples
    --------
    >>> import numpy as np
    >>> first, width = window_grid(np.array([0.5, 10.25]), np.array([8.5, 18.75]))
    >>> print(first.tolist(), width)
    [0, 10] 10
    """
    first = np.floor(np.asarray(start, dtype=np.float64)).astype(np.int64)
    last = np.ceil(np.asarray(stop, dtype=np.float64)).astype(np.int64)
    width = int((last - first).max()) + 1 if first.size else 1
    return first, width


def weights_on_grid(first: np.ndarray, width: int, start: np.ndarray, stop: np.ndarray) -> np.ndarray:
    """Weights, shape ``(n, width)``, of sample ``first + j`` for the windows ``[start, stop]``.

    Weight of sample i = integral over [start, stop] of the hat function
    centred on i (exact integral of the linear interpolation between samples;
    common practice, no source).  The weights sum to ``stop - start``; they
    are 1 inside, 0 outside, and only the two samples next to each end need
    the integral.  ``start >= first`` is required.

    Examples
    --------
    The weights sum to the window's length in samples, whatever its fractional ends:

    >>> import numpy as np
    >>> w = weights_on_grid(np.array([10]), 10, np.array([10.25]), np.array([18.75]))
    >>> print(f"{w.sum():.2f}")
    8.50
    """
    start = np.asarray(start, dtype=np.float64)
    stop = np.asarray(stop, dtype=np.float64)
    j = np.arange(width)[None, :]
    lo = np.floor(start).astype(np.int64) - first          # first touched column (hat of sample floor(start))
    hi = np.ceil(stop).astype(np.int64) - first            # last touched column
    w = ((j >= lo[:, None] + 2) & (j <= hi[:, None] - 2)).astype(np.float64)
    rows = np.arange(first.size)[:, None]
    cols = np.concatenate([lo[:, None] + np.arange(2)[None, :], hi[:, None] - np.arange(2)[None, :]], axis=1)
    cols = np.clip(cols, 0, width - 1)
    rel = (cols + first[:, None]).astype(np.float64)
    edge = _hat_integral(stop[:, None] - rel) - _hat_integral(start[:, None] - rel)
    w[rows, cols] = np.maximum(edge, 0.0)
    return w


def window_weights(start: np.ndarray, stop: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """First sample index and weights of windows ``[start, stop]`` (fractional sample positions).

    Returns
    -------
    first : ndarray of int, shape (n,)
    weights : ndarray, shape (n, width)
        Weight of sample ``first + j``; see `weights_on_grid`.

    Examples
    --------
    A window that is exactly one period of a sampled sine reproduces its RMS
    whatever its fractional start (period 20.5 samples here):

    >>> import numpy as np
    >>> x = np.sin(2 * np.pi * np.arange(100) / 20.5)
    >>> first, w = window_weights(np.array([3.3]), np.array([3.3 + 20.5]))
    >>> rms = np.sqrt((w[0] * x[first[0]:first[0] + w.shape[1]] ** 2).sum() / w.sum())
    >>> print(f"{rms:.3f}")
    0.707
    """
    first, width = window_grid(start, stop)
    return first, weights_on_grid(first, width, start, stop)


def gather(data: np.ndarray, first: np.ndarray, width: int, has_nan: bool | None = None,
           weights: np.ndarray | None = None) -> np.ndarray:
    """Samples of every window, shape ``(n_windows, n_channels, width)`` (a contiguous copy).

    ``data`` is ``(n_channels, n_samples)``; rows that would run past the end
    read zeros there (their weights must be zero).  When the block holds NaN samples and ``weights`` is given, samples of
    zero weight are set to 0 (so a NaN just outside a window cannot reach it),
    while a NaN inside a window stays NaN.

    Examples
    --------
    >>> import numpy as np
    >>> data = np.arange(20.0).reshape(2, 10)
    >>> gather(data, np.array([0, 6]), 4)[1].tolist()
    [[6.0, 7.0, 8.0, 9.0], [16.0, 17.0, 18.0, 19.0]]
    """
    if first.size and int(first.max()) + width > data.shape[1]:  # rows near the end: pad (zero weight there)
        data = np.concatenate([data, np.zeros((data.shape[0], width))], axis=1)
    view = np.lib.stride_tricks.sliding_window_view(data, width, axis=1)  # (n_ch, n - width + 1, width)
    x = np.ascontiguousarray(np.swapaxes(view, 0, 1)[first])             # (n_win, n_ch, width)
    if has_nan is None:
        has_nan = bool(np.isnan(x).any())
    if has_nan and weights is not None:
        x = np.where(weights[:, None, :] > 0.0, x, 0.0)
    return x
