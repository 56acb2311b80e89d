"""Frequency-adaptive phasor estimation, one phasor per cycle window.

Within each window (one period of the tracked frequency, fractional ends) the
samples are fitted, by weighted least squares, with

    x(t) = d + b cos(w (t - t_c)) + c sin(w (t - t_c)),

``w = 2 pi f`` the cycle's tracked frequency and ``t_c`` the window centre.
The phasor at ``t_c`` is ``X = (b - j c) / sqrt(2)`` (RMS magnitude, angle =
phase of the cosine at ``t_c``).  `to_nominal_frame` rotates it into the
synchrophasor convention of IEEE C37.118.1, where the angle is measured
against a cosine at the nominal frequency that starts at time zero.

The weights are those of `waveforms.measure.windows` (an exact integral over
the window), so over exactly one period the fit is orthogonal to every
harmonic of the tracked frequency; with an exactly synchronised signal it
reproduces the integer-cycle DFT bin 1.

References
----------
.. [1] IEEE Std C37.118.1-2011, *IEEE Standard for Synchrophasor Measurements
       for Power Systems*, clause 4.2 (phasor definition) and 4.3 / 5.3 (total
       vector error).
.. [2] IEC/IEEE 60255-118-1:2018, *Measuring relays and protection equipment -
       Part 118-1: Synchrophasor for power systems - Measurements*.
"""

from __future__ import annotations

import numpy as np

SQRT2 = np.sqrt(2.0)


def basis(first: np.ndarray, width: int, centre: np.ndarray, omega_rad_s: np.ndarray, fs_hz: float) -> np.ndarray:
    """Regressors ``[1, cos w tau, sin w tau]`` for every window sample, shape ``(n_win, 3, width)``.

    ``tau`` [s] is the sample time minus the window centre (both in samples / fs).

    Examples
    --------
    >>> import numpy as np
    >>> r = basis(np.array([0]), 5, np.array([2.0]), np.array([2 * np.pi * 50.0]), 1000.0)
    >>> r.shape
    (1, 3, 5)
    """
    tau = (first[:, None] + np.arange(width)[None, :] - centre[:, None]) / fs_hz
    arg = omega_rad_s[:, None] * tau
    out = np.empty((tau.shape[0], 3, tau.shape[1]))
    out[:, 0, :] = 1.0
    np.cos(arg, out=out[:, 1, :])
    np.sin(arg, out=out[:, 2, :])
    return out


def fit_phasors(x: np.ndarray, weights: np.ndarray, regressors: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Weighted least-squares phasors of every channel in every window.

    Parameters
    ----------
    x : ndarray, shape (n_win, n_ch, width)
        Window samples (zero where the weight is zero).
    weights : ndarray, shape (n_win, width)
    regressors : ndarray, shape (n_win, 3, width)
        From `basis`.

    Returns
    -------
    phasor : ndarray of complex, shape (n_win, n_ch)
        RMS phasor at the window centre, angle of the cosine at the centre [rad].
    offset : ndarray, shape (n_win, n_ch)
        Fitted DC offset [V or A].

    Examples
    --------
    One window of exactly one 50 Hz period at 10 kS/s of a 325.27 V peak cosine
    at +30 degrees (230 V RMS), centred on the window's middle:

    >>> import numpy as np
    >>> from waveforms.measure.windows import gather, window_weights
    >>> fs, f = 10_000.0, 50.0
    >>> t = np.arange(400) / fs
    >>> x = 230 * np.sqrt(2) * np.cos(2 * np.pi * f * t + np.pi / 6)
    >>> first, w = window_weights(np.array([100.0]), np.array([300.0]))
    >>> xs = gather(x[None, :], first, w.shape[1])
    >>> reg = basis(first, w.shape[1], np.array([200.0]), np.array([2 * np.pi * f]), fs)
    >>> ph, dc = fit_phasors(xs, w, reg)
    >>> ph_t0 = to_nominal_frame(ph, np.array([200.0 / fs]), f)  # angle against cos(2 pi f t)
    >>> print(f"{abs(ph_t0[0, 0]):.2f} V at {np.degrees(np.angle(ph_t0[0, 0])):.2f} deg")
    230.00 V at 30.00 deg
    """
    wr = regressors * weights[:, None, :]                    # (n_win, 3, width)
    gram = np.einsum("kil,kjl->kij", wr, regressors)         # normal matrix (n_win, 3, 3)
    rhs = np.einsum("kcl,kil->kci", x, wr)                   # (n_win, n_ch, 3)
    coef = np.matmul(rhs, np.linalg.inv(gram))               # gram is symmetric: coef = rhs @ inv(gram)
    phasor = (coef[..., 1] - 1j * coef[..., 2]) / SQRT2       # b cos + c sin = Re{(b - jc) e^{jw tau}}
    return phasor, coef[..., 0]


def to_nominal_frame(phasor: np.ndarray, centre_s: np.ndarray, f_nom_hz: float) -> np.ndarray:
    """Rotate centre-instant phasors into the C37.118.1 frame (reference cos(2 pi f0 t), t = 0 at capture start).

    References
    ----------
    .. [1] IEEE Std C37.118.1-2011, clause 4.2, eq. (2)-(3): X = (Xm / sqrt 2)
           exp(j((w - w0) t + phi)).

    Examples
    --------
    A phasor of angle 0 at a window centred 5 ms into a 50 Hz capture is, in
    the frame of a cosine starting at t = 0, a quarter period (90 degrees) behind:

    >>> import numpy as np
    >>> print(f"{np.degrees(np.angle(to_nominal_frame(np.array(1 + 0j), 0.005, 50.0))):.1f}")
    -90.0
    """
    ang = np.mod(2.0 * np.pi * f_nom_hz * np.asarray(centre_s), 2.0 * np.pi)
    return phasor * np.exp(-1j * ang)[..., None] if phasor.ndim == 2 else phasor * np.exp(-1j * ang)


def total_vector_error(estimate: np.ndarray, reference: np.ndarray) -> np.ndarray:
    """TVE = |X_est - X_ref| / |X_ref| (a fraction; 0.01 = 1 %).

    References
    ----------
    .. [1] IEEE Std C37.118.1-2011, clause 4.3, eq. (4).

    Examples
    --------
    A 1 % magnitude error alone, and a 0.573 degree angle error alone, each give
    a TVE of about 1 % (IEEE C37.118.1-2011, 4.3):

    >>> import numpy as np
    >>> print(f"{total_vector_error(1.01, 1.0):.4f} {total_vector_error(np.exp(1j * np.radians(0.573)), 1.0):.4f}")
    0.0100 0.0100
    """
    return np.abs(np.asarray(estimate) - np.asarray(reference)) / np.abs(reference)
