"""Rotor-speed signatures in the stator current: where they sit for a given slip.

Every component used here has a frequency that is an affine function of the
per-unit speed ``1 - s``::

    f = f1 * (a * (1 - s) / p + b)                                  (1)

with ``p`` pole pairs and ``f1`` the supply frequency.

* mixed-eccentricity sidebands, ``a = +/-m``, ``b = 1``:
  ``f_ecc = f1 (1 +/- m (1 - s) / p)``  (Thomson & Fenger [1]_; Benbouzid [2]_);
* rotor-slot harmonics with static eccentricity order ``n_d = 0``,
  ``a = k R``, ``b = nu`` (odd, signed):
  ``f_sh = f1 (k R (1 - s) / p +/- nu)``  (Hurst & Habetler [3]_).

Because (1) is affine in ``1 - s`` it is inverted exactly:
``1 - s = p (f / f1 - b) / a``.

The simulator states the eccentricity and principal slot-harmonic
frequencies a second time, on purpose independently of this module
(`waveforms.sim.signatures.expected_lines_hz`, written into every truth
file), so that the simulated ground truth is an independent check of these
formulas rather than a copy of them.

References
----------
.. [1] W. T. Thomson and M. Fenger, "Current signature analysis to detect
   induction motor faults", IEEE Industry Applications Magazine 7(4), 2001
   (eccentricity sideband formula; cited from memory).
.. [2] M. E. H. Benbouzid, "A review of induction motors signature analysis as
   a medium for faults detection", IEEE Trans. Industrial Electronics 47(5),
   2000 (cited from memory).
.. [3] K. D. Hurst and T. G. Habetler, "Sensorless speed measurement using
   current harmonic spectral estimation in induction machine drives", IEEE
   Trans. Power Electronics 11(1), 1996 (slot-harmonic formula; cited from
   memory).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..errors import InvalidParameterError

COMPONENT_SLOT = "slot"
COMPONENT_ECCENTRICITY = "eccentricity"


@dataclasses.dataclass(frozen=True)
class Signature:
    """One speed-dependent current component, ``f = f1 (a (1 - s) / p + b)``.

    Parameters
    ----------
    family : {"slot", "eccentricity"}
    label : str
        Short name, e.g. ``"f1-fr"`` or ``"R-1"``.
    a : float
        Coefficient of the per-unit rotor frequency ``(1 - s) / p`` [-].
    b : float
        Offset in multiples of the supply frequency [-].
    """

    family: str
    label: str
    a: float
    b: float


def eccentricity_signatures(orders: tuple[int, ...] = (1,)) -> tuple[Signature, ...]:
    """Lower and upper mixed-eccentricity sidebands ``f1 (1 -/+ m (1 - s)/p)`` for each order ``m``.

    References
    ----------
    Thomson & Fenger, IEEE Industry Applications Magazine 7(4), 2001.

    Examples
    --------
    >>> [s.label for s in eccentricity_signatures((1, 2))]
    ['f1-1fr', 'f1+1fr', 'f1-2fr', 'f1+2fr']
    """
    out = []
    for m in orders:
        if m < 1:
            raise InvalidParameterError(f"eccentricity order {m=} must be >= 1")
        # Thomson & Fenger 2001: f_ecc = f1 [1 +/- m (1 - s)/p]
        out.append(Signature(COMPONENT_ECCENTRICITY, f"f1-{m}fr", -float(m), 1.0))
        out.append(Signature(COMPONENT_ECCENTRICITY, f"f1+{m}fr", float(m), 1.0))
    return tuple(out)


def slot_signatures(rotor_bars: int, nus: tuple[int, ...] = (-3, -1, 1, 3), k: int = 1) -> tuple[Signature, ...]:
    """Principal rotor-slot harmonics ``f1 (k R (1 - s)/p + nu)`` for the given signed odd ``nu``.

    References
    ----------
    Hurst & Habetler, IEEE Trans. Power Electronics 11(1), 1996 (with ``n_d = 0``).

    Examples
    --------
    >>> [(s.label, s.a, s.b) for s in slot_signatures(28, nus=(-1, 1))]
    [('1R-1', 28.0, -1.0), ('1R+1', 28.0, 1.0)]
    """
    if rotor_bars < 4:
        raise InvalidParameterError(f"{rotor_bars=} must be >= 4")
    out = []
    for nu in nus:
        if nu % 2 == 0:
            raise InvalidParameterError(f"slot harmonic order {nu=} must be odd")
        # Hurst & Habetler 1996: f_sh = f1 [(k R +/- n_d)(1 - s)/p +/- nu], n_d = 0
        out.append(Signature(COMPONENT_SLOT, f"{k}R{nu:+d}", float(k * rotor_bars), float(nu)))
    return tuple(out)


def component_frequency_hz(sig: Signature, slip, f1_hz, pole_pairs: int) -> np.ndarray:
    """Signed frequency [Hz] of a signature at slip ``s``: ``f1 (a (1 - s)/p + b)``.

    A negative value means the component sits at ``|f|`` in a one-sided
    spectrum (it rotates against the fundamental in the space-vector spectrum).

    References
    ----------
    Eq. (1) of this module; Thomson & Fenger 2001; Hurst & Habetler 1996.

    Examples
    --------
    A four-pole (p = 2) 60 Hz motor at 3 % slip turns at fr = 29.1 Hz; its
    first eccentricity sidebands sit at f1 -/+ fr, its 28-bar slot harmonics at
    60 (28 x 0.97 / 2 -/+ 1) Hz:

    >>> lo, hi = eccentricity_signatures()
    >>> print(f"{component_frequency_hz(lo, 0.03, 60.0, 2):.1f} {component_frequency_hz(hi, 0.03, 60.0, 2):.1f}")
    30.9 89.1
    >>> print([round(float(component_frequency_hz(s, 0.03, 60.0, 2)), 1) for s in slot_signatures(28, nus=(-1, 1))])
    [754.8, 874.8]
    """
    s = np.asarray(slip, dtype=float)
    f1 = np.asarray(f1_hz, dtype=float)
    return f1 * (sig.a * (1.0 - s) / pole_pairs + sig.b)  # eq. (1)


def slip_from_frequency(sig: Signature, f_hz, f1_hz, pole_pairs: int) -> np.ndarray:
    """Invert eq. (1): ``s = 1 - p (f / f1 - b) / a`` for a signed component frequency ``f`` [Hz].

    Examples
    --------
    The inverse of `component_frequency_hz`:

    >>> sig = slot_signatures(28, nus=(1,))[0]
    >>> print(f"{slip_from_frequency(sig, 874.8, 60.0, 2):.4f}")
    0.0300
    """
    f = np.asarray(f_hz, dtype=float)
    f1 = np.asarray(f1_hz, dtype=float)
    return 1.0 - pole_pairs * (f / f1 - sig.b) / sig.a  # eq. (1) solved for s


def rotor_frequency_hz(slip, f1_hz, pole_pairs: int) -> np.ndarray:
    """Mechanical rotation frequency ``fr = f1 (1 - s) / p`` [Hz] (common practice, no source).

    Examples
    --------
    >>> print(f"{rotor_frequency_hz(0.03, 60.0, 2):.2f}")
    29.10
    """
    return np.asarray(f1_hz, dtype=float) * (1.0 - np.asarray(slip, dtype=float)) / pole_pairs


def speed_rpm(slip, f1_hz, pole_pairs: int) -> np.ndarray:
    """Shaft speed ``n = 60 f1 (1 - s) / p`` [rpm] (common practice, no source).

    Examples
    --------
    >>> print(f"{speed_rpm(0.03, 60.0, 2):.0f}")
    1746
    """
    return 60.0 * rotor_frequency_hz(slip, f1_hz, pole_pairs)


def slip_from_speed(speed_rpm_, f1_hz, pole_pairs: int) -> np.ndarray:
    """Slip ``s = (n_s - n) / n_s`` with ``n_s = 60 f1 / p`` (common practice, no source).

    Examples
    --------
    A 50 Hz four-pole motor at 1470 rpm (synchronous speed 1500 rpm):

    >>> print(f"{slip_from_speed(1470.0, 50.0, 2):.3f}")
    0.020
    """
    ns = 60.0 * np.asarray(f1_hz, dtype=float) / pole_pairs
    return (ns - np.asarray(speed_rpm_, dtype=float)) / ns


def signature_band_hz(sig: Signature, slip_min: float, slip_max: float, f1_hz: float, pole_pairs: int) -> tuple[float, float, int]:
    """One-sided search band ``(lo, hi)`` [Hz] of a signature for slips in ``[slip_min, slip_max]``, and its sign.

    The sign is +1 when the signed frequency stays positive over the band, -1
    when it stays negative, 0 when it crosses zero (the band is then unusable).

    Examples
    --------
    The band of the lower eccentricity sideband of a 50 Hz four-pole motor for
    slips of 0 to 5 %, 25 to 26.25 Hz, positive throughout:

    >>> lo, _ = eccentricity_signatures()
    >>> f_lo, f_hi, sign = signature_band_hz(lo, 0.0, 0.05, 50.0, 2)
    >>> print(f"{f_lo:.2f} {f_hi:.2f} {sign}")
    25.00 26.25 1
    """
    f = component_frequency_hz(sig, np.array([slip_min, slip_max]), f1_hz, pole_pairs)
    tiny = 1e-9 * abs(f1_hz)  # an end exactly at 0 Hz (e.g. p = 1 at s = 0) does not cross zero
    if np.all(f > -tiny) and np.any(f > tiny):
        sign = 1
    elif np.all(f < tiny) and np.any(f < -tiny):
        sign = -1
    else:
        sign = 0
    af = np.abs(f)
    return float(af.min()), float(af.max()), sign
