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
    """
    ang = np.mod(2.0 * np.pi * f_nom_hz * np.asarray(centre_s), 2.0 * np.pi)
    return phasor * np.exp(-1j * ang)[..., None] if phasor.ndim == 2 else phasor * np.exp(-1j * ang)


def total_vector_error(estimate: np.ndarray, reference: np.ndarray) -> np.ndarray:
    """TVE = |X_est - X_ref| / |X_ref| (a fraction; 0.01 = 1 %).

    References
    ----------
    .. [1] IEEE Std C37.118.1-2011, clause 4.3, eq. (4).
    """
    return np.abs(np.asarray(estimate) - np.asarray(reference)) / np.abs(reference)
