"""Load torque on the motor shaft: constant, quadratic (fan / pump), steps, jam.

A load torque opposes motion.  Near standstill it is made smooth with
``tanh(w / w_eps)`` so that a resisting load holds the rotor at rest instead
of driving it backwards (a static-friction-like behaviour; common practice,
no source).  A jam is a resisting torque well beyond the motor's breakdown
torque from a given instant: the motor decelerates and stalls.

The load is piecewise: its parameters change only at `change_times_s`, and
the integrator starts a new segment there.
"""

from __future__ import annotations

import dataclasses
import math

from ..errors import InvalidParameterError

KINDS = ("constant", "quadratic")

#: Speed [rad/s] over which a resisting torque builds up from zero at standstill.
OMEGA_EPS_RAD_S = 0.5


@dataclasses.dataclass(frozen=True)
class LoadStep:
    """From ``time_s`` on, the load's reference torque becomes ``torque_n_m``."""

    time_s: float
    torque_n_m: float


@dataclasses.dataclass(frozen=True)
class Jam:
    """From ``time_s`` on, an extra resisting torque ``torque_n_m`` acts (a seized pump)."""

    time_s: float
    torque_n_m: float


@dataclasses.dataclass(frozen=True)
class Load:
    """Shaft load.

    Parameters
    ----------
    kind : {"constant", "quadratic"}
        ``constant``: ``T = T_ref`` at any speed (resisting).
        ``quadratic``: ``T = T_ref (w / w_ref)^2 + T_breakaway`` (fan, centrifugal pump).
    torque_n_m : float
        Reference torque T_ref [N m].
    reference_speed_rad_s : float
        Speed w_ref at which a quadratic load takes T_ref [rad/s, mechanical].
    breakaway_n_m : float
        Static torque of a quadratic load at standstill [N m].
    steps : tuple of LoadStep
    jam : Jam or None
    """

    kind: str = "constant"
    torque_n_m: float = 0.0
    reference_speed_rad_s: float = 1.0
    breakaway_n_m: float = 0.0
    steps: tuple[LoadStep, ...] = ()
    jam: Jam | None = None

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InvalidParameterError(f"load kind={self.kind!r} must be one of {KINDS}")
        if self.torque_n_m < 0 or self.breakaway_n_m < 0:
            raise InvalidParameterError("load torque_n_m and breakaway_n_m must be >= 0 (a load resists motion)")
        if not self.reference_speed_rad_s > 0:
            raise InvalidParameterError(f"load reference_speed_rad_s={self.reference_speed_rad_s!r} must be positive")
        for s in self.steps:
            if s.torque_n_m < 0 or s.time_s < 0:
                raise InvalidParameterError(f"load step at {s.time_s} s: time and torque must be >= 0")
        if self.jam is not None and (self.jam.torque_n_m <= 0 or self.jam.time_s < 0):
            raise InvalidParameterError("load jam needs time_s >= 0 and torque_n_m > 0")

    def change_times_s(self) -> list[float]:
        out = [s.time_s for s in self.steps]
        if self.jam is not None:
            out.append(self.jam.time_s)
        return sorted(set(out))

    def coefficients(self, t_s: float) -> tuple[float, float]:
        """``(k_quadratic, t_static)`` in force just after ``t_s``.

        The torque is ``T(w) = k_quadratic w |w| + t_static tanh(w / w_eps)`` [N m].
        """
        ref = self.torque_n_m
        for s in sorted(self.steps, key=lambda s: s.time_s):
            if s.time_s <= t_s:
                ref = s.torque_n_m
        jam = self.jam.torque_n_m if (self.jam is not None and self.jam.time_s <= t_s) else 0.0
        if self.kind == "constant":
            return 0.0, ref + jam
        return ref / self.reference_speed_rad_s**2, self.breakaway_n_m + jam


def load_torque_n_m(k_quadratic: float, t_static: float, omega_m_rad_s):  # noqa: ANN001, ANN201 - float or array
    """Resisting torque [N m] at mechanical speed ``omega_m_rad_s`` (scalar or array)."""
    w = omega_m_rad_s
    if isinstance(w, float):
        return k_quadratic * w * abs(w) + t_static * math.tanh(w / OMEGA_EPS_RAD_S)
    import numpy as np

    return k_quadratic * w * np.abs(w) + t_static * np.tanh(w / OMEGA_EPS_RAD_S)
