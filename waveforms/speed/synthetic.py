"""Synthetic stator currents with a known slip, for unit tests and benchmarks.

Not a motor model (that is `waveforms.sim`): a sum of sinusoids placed at
the frequencies of `waveforms.speed.signatures` for a given slip, plus supply
harmonics and white noise at a chosen signal-to-noise ratio.  It lets the
estimator be checked against the formulas with a known answer.
"""

from __future__ import annotations

import numpy as np

from . import signatures as sg


def synthetic_currents(
    duration_s: float,
    sample_rate_hz: float,
    slip,
    *,
    f1_hz=50.0,
    pole_pairs: int = 2,
    rotor_bars: int | None = None,
    amplitude_a: float = 10.0 * np.sqrt(2.0),
    eccentricity_dbc: float | None = -50.0,
    slot_dbc: float | None = -50.0,
    harmonics_dbc: dict[int, float] | None = None,
    snr_db: float | None = 60.0,
    seed: int = 0,
    n_phases: int = 3,
) -> np.ndarray:
    """Line currents (n_phases, n) [A] with signature components for ``slip``.

    Parameters
    ----------
    duration_s, sample_rate_hz : float
        Length [s] and rate [Hz].
    slip : float or ndarray
        Slip, constant or one value per sample [-].
    f1_hz : float or ndarray
        Supply frequency, constant or per sample [Hz].
    pole_pairs, rotor_bars : int
    amplitude_a : float
        Peak of the fundamental [A].
    eccentricity_dbc, slot_dbc : float or None
        Level of each eccentricity sideband (m = 1) and each slot harmonic
        (nu = -1, +1) relative to the fundamental [dB]; None leaves them out.
    harmonics_dbc : dict
        Supply harmonic order -> level [dB re fundamental] (5th and 7th
        default -30/-35 dB; pass {} for none).  Orders 6k-1 are negative sequence.
    snr_db : float or None
        Fundamental power over white-noise power, per phase [dB]; None: no noise.
    seed : int
    n_phases : int
        1 to 3.

    Examples
    --------
    Ten seconds of a 50 Hz four-pole motor's currents at 2 % slip, without
    harmonics or noise: the three largest lines of the spectrum are the
    fundamental and the eccentricity sidebands f1 (1 -/+ (1 - s)/p) = 25.5 and 74.5 Hz:

    >>> import numpy as np
    >>> i = synthetic_currents(10.0, 2000.0, 0.02, harmonics_dbc={}, snr_db=None)
    >>> spec = np.abs(np.fft.rfft(i[0]))
    >>> f = np.fft.rfftfreq(i.shape[1], 1 / 2000.0)
    >>> print(i.shape, f[np.argsort(spec)[-3:]].round(1).tolist())
    (3, 20000) [74.5, 25.5, 50.0]
    """
    n = int(round(duration_s * sample_rate_hz))
    t = np.arange(n) / sample_rate_hz
    s = np.broadcast_to(np.asarray(slip, dtype=float), (n,))
    f1 = np.broadcast_to(np.asarray(f1_hz, dtype=float), (n,))
    harmonics_dbc = {5: -30.0, 7: -35.0} if harmonics_dbc is None else harmonics_dbc
    comps: list[tuple[np.ndarray, float, int]] = [(f1, 0.0, 1)]
    if eccentricity_dbc is not None:
        for sig in sg.eccentricity_signatures((1,)):
            comps.append((sg.component_frequency_hz(sig, s, f1, pole_pairs), eccentricity_dbc, 1))
    if slot_dbc is not None and rotor_bars is not None:
        for sig in sg.slot_signatures(rotor_bars, (-1, 1)):
            comps.append((sg.component_frequency_hz(sig, s, f1, pole_pairs), slot_dbc, 1))
    for h, lvl in harmonics_dbc.items():
        comps.append((h * f1, lvl, -1 if h % 6 == 5 else 1))
    rng = np.random.default_rng(seed)
    out = np.zeros((n_phases, n))
    for k, (f, lvl, seq) in enumerate(comps):
        ph = 2.0 * np.pi * np.cumsum(f) / sample_rate_hz + rng.uniform(0, 2 * np.pi) * (k > 0)
        amp = amplitude_a * 10.0 ** (lvl / 20.0)
        for j in range(n_phases):  # per phase, not per sample
            out[j] += amp * np.cos(ph - seq * j * 2.0 * np.pi / 3.0)
    if snr_db is not None:
        sigma = np.sqrt(amplitude_a**2 / 2.0 * 10.0 ** (-snr_db / 10.0))
        out += rng.normal(0.0, sigma, out.shape)
    return out
