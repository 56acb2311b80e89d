"""Speed signatures in the stator current, driven by the simulated rotor angle.

Two families of spectral lines that a current-based slip estimator looks for
are added to the simulated currents as an amplitude modulation of the stator
current space vector by the mechanical rotor angle ``theta_m``::

    i'(t) = i(t) [1 + 2 m_e cos(k theta_m + phi_e) + 2 m_s cos(R theta_m + phi_s)]

which puts, around every line of ``i`` at ``f1``, lines of relative
amplitude ``m_e`` at ``f1 +/- k f_r`` and ``m_s`` at ``f1 +/- R f_r``
(``f_r`` the rotor's rotation frequency).  With ``f_r = f1 (1 - s) / p``
these are the mixed-eccentricity sidebands ``f1 (1 +/- k (1 - s)/p)`` and
the principal rotor-slot harmonics ``f1 (R (1 - s)/p +/- 1)`` (nu = 1) of
the literature, so the true slip behind them is known at every instant.

This is a signal model laid over the simulated currents, not a consequence of
the machine equations (which describe a smooth air gap): it gives the right
frequencies at the right instants and configurable levels, not the physics of
their amplitudes.

`expected_lines_hz` writes the line frequencies out again, on purpose
independently of `waveforms.speed.signatures` (which the slip estimator
uses): the truth files and the tests that compare the estimator with them
then check the estimator's formulas against a second, separate statement of
the same literature formulas instead of against themselves.

References
----------
.. [1] W. T. Thomson, M. Fenger, "Current signature analysis to detect
   induction motor faults", IEEE Industry Applications Magazine 7(4), 2001
   (eccentricity sideband formula; from memory).
.. [2] K. D. Hurst, T. G. Habetler, "Sensorless speed measurement using
   current harmonic spectral estimation in induction machine drives", IEEE
   Trans. Power Electronics 11(1), 1996 (rotor slot harmonic formula; from memory).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..errors import InvalidParameterError


@dataclasses.dataclass(frozen=True)
class Signatures:
    """Levels of the speed-dependent current lines.

    Parameters
    ----------
    eccentricity_db : float or None
        Level of each eccentricity sideband relative to the fundamental [dB]; None for none.
    eccentricity_order : int
        k in ``f1 +/- k f_r``.
    slot_db : float or None
        Level of each principal slot harmonic relative to the fundamental [dB]; None for none.
    rotor_bars : int or None
        Number of rotor bars R (needed when ``slot_db`` is given).
    eccentricity_phase_deg, slot_phase_deg : float
        Angles phi_e, phi_s of the modulation [deg].
    """

    eccentricity_db: float | None = None
    eccentricity_order: int = 1
    slot_db: float | None = None
    rotor_bars: int | None = None
    eccentricity_phase_deg: float = 0.0
    slot_phase_deg: float = 0.0

    def __post_init__(self) -> None:
        for key in ("eccentricity_db", "slot_db"):
            v = getattr(self, key)
            if v is not None and not (-120.0 <= v <= -10.0):
                raise InvalidParameterError(f"signatures {key}={v!r} must be between -120 and -10 dB")
        if self.slot_db is not None and (not isinstance(self.rotor_bars, int) or self.rotor_bars < 4):
            raise InvalidParameterError(f"signatures slot_db given: rotor_bars={self.rotor_bars!r} must be a whole number >= 4")
        if not isinstance(self.eccentricity_order, int) or self.eccentricity_order < 1:
            raise InvalidParameterError(f"signatures eccentricity_order={self.eccentricity_order!r} must be >= 1")


def modulation(sig: Signatures, theta_m_rad: np.ndarray) -> np.ndarray:
    """The factor ``1 + 2 m_e cos(k theta_m + phi_e) + 2 m_s cos(R theta_m + phi_s)`` per sample."""
    out = np.ones_like(np.asarray(theta_m_rad, dtype=float))
    if sig.eccentricity_db is not None:
        m_e = 10.0 ** (sig.eccentricity_db / 20.0)
        # Thomson & Fenger 2001: f1 (1 +/- k (1-s)/p)  <=>  f1 +/- k f_r
        out += 2.0 * m_e * np.cos(sig.eccentricity_order * theta_m_rad + np.deg2rad(sig.eccentricity_phase_deg))
    if sig.slot_db is not None:
        m_s = 10.0 ** (sig.slot_db / 20.0)
        # Hurst & Habetler 1996: f1 (R (1-s)/p +/- 1)  <=>  R f_r +/- f1
        out += 2.0 * m_s * np.cos(sig.rotor_bars * theta_m_rad + np.deg2rad(sig.slot_phase_deg))  # type: ignore[operator]
    return out


def expected_lines_hz(sig: Signatures, f1_hz: float, slip: float, pole_pairs: int) -> dict[str, float]:
    """Frequencies [Hz] of the lines `modulation` creates around a fundamental ``f1_hz`` at slip ``slip``."""
    out: dict[str, float] = {}
    if sig.eccentricity_db is not None:
        k = sig.eccentricity_order
        out["ecc_lower_hz"] = f1_hz * (1.0 - k * (1.0 - slip) / pole_pairs)
        out["ecc_upper_hz"] = f1_hz * (1.0 + k * (1.0 - slip) / pole_pairs)
    if sig.slot_db is not None:
        r = sig.rotor_bars
        out["slot_lower_hz"] = f1_hz * (r * (1.0 - slip) / pole_pairs - 1.0)  # type: ignore[operator]
        out["slot_upper_hz"] = f1_hz * (r * (1.0 - slip) / pole_pairs + 1.0)  # type: ignore[operator]
    return out
