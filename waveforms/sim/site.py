"""The site around the motor: capacitor banks, a second motor, an upstream transformer.

A *site* turns the simulator's single motor on a source into a small
three-wire network (solved by `waveforms.sim.network`)::

    source EMF --[transformer, optional]--[source + leakage impedance]--> bus S
        bus S: capacitor banks "at the bus", the second motor, transformer magnetising branch
        bus S --[motor switch, one per line]--[cable]--> motor terminals T
        terminals T: capacitor banks "at the motor", the motor

The logger sits at one of four points (`Site.logger_at`):

* ``"feeder"``: voltage of bus S, currents of the whole feeder (everything on the bus);
* ``"branch"``: voltage of bus S, currents of the motor's branch on the supply side of its switch;
* ``"motor"``: voltage at the motor terminals, the motor's own line currents (downstream of a
  bank at the terminals);
* ``"second_motor"``: voltage of bus S, the second motor's line currents.

The motor's switch (``[switches]`` of the scenario) is on the branch between bus S and the
motor terminals, so it is downstream of the logger for ``feeder`` and ``branch``, upstream of it for
``motor``, and on the other branch for ``second_motor``.  A transformer adds switches on its primary
lines (a blown medium-voltage fuse).

What is modelled and what is neglected:

* capacitor banks: ideal capacitors, star (neutral floating) or delta, lossless, no series reactor,
  no discharge resistor, no switching of the bank; a floating star bank and a delta bank of one third
  of the star capacitance draw the same line currents (star-delta transformation of a balanced load,
  any circuits textbook);
* second motor: a full induction-machine model of its own (parameters, inertia, load), always
  connected, running steadily at t = 0; no signature side-bands of its own beyond the same
  modulation settings driven by its own rotor angle;
* source grounding (`waveforms.sim.grounding`): solid, resistance or ungrounded, with ground faults
  on another feeder; it moves the line-to-ground voltages only (the logger's line-to-neutral inputs
  are then referred to ground);
* cable: series resistance and inductance per line between the motor switch and the motor terminals
  (no capacitance);
* transformer: ideal ratio with the vector group's winding connection (Dyn11 or Dyn1), the
  leakage impedance referred to the secondary and lumped with the source impedance (the source
  impedance is on the primary lines), and a linear, balanced magnetising inductance moved to the
  secondary terminals (the approximate equivalent circuit of any transformer textbook).  Neglected:
  core loss, saturation and inrush, zero-sequence magnetising paths, the winding capacitances.  The
  secondary neutral is the reference of the line-to-neutral voltages (no ground path on the secondary:
  every load is three-wire, so no zero-sequence current flows anywhere).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from ..errors import InvalidParameterError
from .dynamics import SwitchOp
from .grounding import Grounding
from .loads import Load
from .machine import MachineParameters
from .topology import CLARKE, DELTA_D

LOGGER_POINTS = ("feeder", "branch", "motor", "second_motor")
BANK_POINTS = ("bus", "motor")
VECTOR_GROUPS = ("Dyn11", "Dyn1")


@dataclasses.dataclass(frozen=True)
class CapacitorBank:
    """A three-phase power-factor capacitor bank.

    Parameters
    ----------
    at : {"bus", "motor"}
        ``bus``: on bus S (upstream of the motor switch); ``motor``: at the motor terminals.
    connection : {"delta", "star"}
        Delta, or star with the neutral floating.
    capacitance_f : float
        Capacitance of one capacitor unit (one delta leg or one star leg) [F].
    """

    at: str
    connection: str
    capacitance_f: float

    def __post_init__(self) -> None:
        if self.at not in BANK_POINTS:
            raise InvalidParameterError(f"capacitor at={self.at!r} must be one of {BANK_POINTS}")
        if self.connection not in ("delta", "star"):
            raise InvalidParameterError(f"capacitor connection={self.connection!r} must be 'delta' or 'star'")
        if not (math.isfinite(self.capacitance_f) and self.capacitance_f > 0):
            raise InvalidParameterError(f"capacitor capacitance={self.capacitance_f!r} F must be positive")

    @property
    def star_equivalent_f(self) -> float:
        """Capacitance per phase of the equivalent star [F]: ``C_Y = 3 C_delta`` for a delta bank."""
        return self.capacitance_f * (3.0 if self.connection == "delta" else 1.0)


def bank_capacitance_f(connection: str, voltage_ll_v: float, frequency_hz: float, kvar: float | None = None,
                       line_current_a: float | None = None) -> float:
    """Capacitance of one unit of a bank given its rating [F].

    ``Q = 3 V_ph^2 w C_Y = V_LL^2 w C_Y`` and the line current ``I = V_ph w C_Y`` of the equivalent
    star; a delta unit is ``C_Y / 3`` (balanced star-delta transformation).

    References
    ----------
    Any circuits textbook: capacitive reactance ``X_C = 1 / (w C)``, three-phase reactive power
    ``Q = sqrt(3) V_LL I``, and the balanced star-delta transformation ``Z_Y = Z_delta / 3``.
    """
    w = 2.0 * math.pi * frequency_hz
    if (kvar is None) == (line_current_a is None):
        raise InvalidParameterError("give exactly one of the bank's kvar and its line current")
    if kvar is not None:
        if not kvar > 0:
            raise InvalidParameterError(f"capacitor kvar={kvar!r} must be positive")
        c_y = kvar * 1e3 / (w * voltage_ll_v**2)
    else:
        assert line_current_a is not None
        if not line_current_a > 0:
            raise InvalidParameterError(f"capacitor line current {line_current_a!r} A must be positive")
        c_y = line_current_a / (w * voltage_ll_v / math.sqrt(3.0))
    return c_y / 3.0 if connection == "delta" else c_y


@dataclasses.dataclass(frozen=True)
class SecondMotor:
    """Another induction machine on bus S with its own shaft load (always connected, steady at t = 0)."""

    machine: MachineParameters
    load: Load = dataclasses.field(default_factory=Load)
    name: str = "second motor"


@dataclasses.dataclass(frozen=True)
class Transformer:
    """A delta-wye (Dyn) transformer between the source and bus S.

    Parameters
    ----------
    kva : float
        Rating [kVA].
    primary_voltage_ll_v, secondary_voltage_ll_v : float
        Rated line-to-line voltages [V]; the scenario's ``[supply]`` is the primary source.
    vector_group : {"Dyn11", "Dyn1"}
        Dyn11: secondary winding ``a`` on the primary winding A-B (the secondary leads by 30 deg);
        Dyn1: on A-C (lags by 30 deg) (IEC 60076-1 clock-hour notation, from memory).
    impedance_pct : float
        Short-circuit impedance [% on the rating].
    x_over_r : float
        Reactance-to-resistance ratio of the leakage impedance.
    magnetising_pct : float
        Magnetising current at rated voltage [% of rated current].
    closed_at_start : tuple of 3 bools
        Primary line switches at t = 0.
    ops : tuple of SwitchOp
        Primary line switch operations (an opening interrupts at current zero).
    """

    kva: float
    primary_voltage_ll_v: float
    secondary_voltage_ll_v: float
    vector_group: str = "Dyn11"
    impedance_pct: float = 5.0
    x_over_r: float = 5.0
    magnetising_pct: float = 1.0
    closed_at_start: tuple[bool, bool, bool] = (True, True, True)
    ops: tuple[SwitchOp, ...] = ()

    def __post_init__(self) -> None:
        for key in ("kva", "primary_voltage_ll_v", "secondary_voltage_ll_v", "impedance_pct", "x_over_r", "magnetising_pct"):
            v = getattr(self, key)
            if not (math.isfinite(v) and v > 0):
                raise InvalidParameterError(f"transformer {key}={v!r} must be a positive number")
        if self.vector_group not in VECTOR_GROUPS:
            raise InvalidParameterError(f"transformer vector_group={self.vector_group!r} must be one of {VECTOR_GROUPS}")
        if self.impedance_pct > 30 or self.magnetising_pct > 20:
            raise InvalidParameterError("transformer impedance_pct must be <= 30 and magnetising_pct <= 20")

    @property
    def base_ohm(self) -> float:
        """Secondary base impedance ``V_LL^2 / S`` [ohm]."""
        return self.secondary_voltage_ll_v**2 / (self.kva * 1e3)

    @property
    def leakage_r_ohm(self) -> float:
        """Leakage resistance referred to the secondary, per phase [ohm]."""
        return self.impedance_pct / 100.0 * self.base_ohm / math.hypot(1.0, self.x_over_r)

    @property
    def leakage_x_ohm(self) -> float:
        return self.leakage_r_ohm * self.x_over_r

    @property
    def magnetising_x_ohm(self) -> float:
        """Magnetising reactance per phase at the secondary [ohm]."""
        return self.base_ohm / (self.magnetising_pct / 100.0)

    @property
    def turns_ratio(self) -> float:
        """Primary winding : secondary winding turns, ``V_LL,prim / V_ph,sec``."""
        return self.primary_voltage_ll_v / (self.secondary_voltage_ll_v / math.sqrt(3.0))

    def winding_permutation(self) -> np.ndarray:
        """``P`` with secondary phase voltages ``u_abc = P w / n`` of the primary winding voltages ``w = (V_AB, V_BC, V_CA)``."""
        if self.vector_group == "Dyn11":
            return np.eye(3)
        return -np.array([[0.0, 0.0, 1.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0]])  # a on A-C, b on B-A, c on C-B

    def line_map(self) -> np.ndarray:
        """``N`` (3x2): primary line currents from the secondary line-current space vector.

        Ampere-turn balance of the ideal transformer: primary winding currents ``i_w = P^T i_sec / n``,
        line currents ``i_line = D i_w`` (delta incidence).  The secondary EMF vector is ``N^T e``.
        """
        return DELTA_D @ self.winding_permutation().T @ CLARKE.T / self.turns_ratio


@dataclasses.dataclass(frozen=True)
class Site:
    """Everything around the motor; see the module docstring."""

    logger_at: str = "motor"
    banks: tuple[CapacitorBank, ...] = ()
    second_motor: SecondMotor | None = None
    transformer: Transformer | None = None
    cable_r_ohm: float = 0.0
    cable_x_ohm: float = 0.0
    grounding: Grounding | None = None

    def __post_init__(self) -> None:
        if self.logger_at not in LOGGER_POINTS:
            raise InvalidParameterError(f"site logger_at={self.logger_at!r} must be one of {LOGGER_POINTS}")
        if self.logger_at == "second_motor" and self.second_motor is None:
            raise InvalidParameterError("site logger_at='second_motor' needs a [site.second_motor]")
        if self.cable_r_ohm < 0 or self.cable_x_ohm < 0:
            raise InvalidParameterError("site cable_r_ohm and cable_x_ohm must be >= 0")
        if any(b.at == "motor" for b in self.banks) and not self.cable_x_ohm > 0:
            raise InvalidParameterError("a capacitor bank at the motor terminals needs site cable_x_ohm > 0 "
                                        "(the cable's inductance separates it from the bus)")

    @property
    def open_point(self) -> str:
        """Where the motor switch is, seen from the logger: upstream, downstream or other_branch."""
        return {"motor": "upstream", "second_motor": "other_branch"}.get(self.logger_at, "downstream")

    def logger_sees(self) -> str:
        """Plain words: which currents the logger's current inputs carry."""
        parts = {"feeder": "the whole feeder at bus S: the motor's branch"
                           + "".join([" + the capacitor bank(s) at the bus" if any(b.at == "bus" for b in self.banks) else "",
                                      " + the second motor" if self.second_motor else "",
                                      " + the transformer's magnetising current" if self.transformer else ""]),
                 "branch": "the motor's branch on the supply side of its switch"
                           + (" (motor + the bank at its terminals)" if any(b.at == "motor" for b in self.banks) else ""),
                 "motor": "the motor's own line currents"
                          + (" (downstream of the bank at its terminals)" if any(b.at == "motor" for b in self.banks) else ""),
                 "second_motor": "the second motor's line currents"}
        return parts[self.logger_at]
