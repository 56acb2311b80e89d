"""Induction machine parameters and the steady-state (phasor) solution of the model.

The machine is the symmetrical three-phase induction machine of Krause,
Wasynczuk and Sudhoff, described by the per-phase T-equivalent-circuit
parameters (stator resistance, stator and rotor leakage reactance,
magnetising reactance, referred rotor resistance) at a base frequency, its
pole count and its inertia.

Parameters are those of one *winding*: for a star machine a winding is
connected line-to-neutral, for a delta machine line-to-line.  Seen from the
terminals a delta machine equals a star machine with every impedance divided
by three (common practice, no source; the delta-star transformation of a
balanced load).

Conventions used throughout `waveforms.sim`: space vectors use the
power-invariant Clarke transform ``x_ab = sqrt(2/3) (x_a + a x_b + a^2 x_c)``
(complex, alpha = real part, beta = imaginary part), so that per-phase
impedances carry over unchanged and the electromagnetic torque is
``T = (P/2) Im(conj(psi_s) i_s)``.

References
----------
.. [1] P. C. Krause, O. Wasynczuk, S. D. Sudhoff, *Analysis of Electric
   Machinery and Drive Systems*, 2nd ed., IEEE Press / Wiley, 2002, chapter 4
   ("Symmetrical induction machines"): voltage and flux-linkage equations in
   the arbitrary reference frame, torque and the steady-state equivalent
   circuit (section and equation numbers from memory).
"""

from __future__ import annotations

import dataclasses
import math
from os import PathLike
from typing import Any

import numpy as np

from ..errors import CaptureReadError, InvalidParameterError
from ..tomlfile import read_toml, table_or_top

CONNECTIONS = ("star", "delta")


@dataclasses.dataclass(frozen=True)
class MachineParameters:
    """Per-winding T-equivalent-circuit parameters of an induction machine.

    Parameters
    ----------
    rs_ohm : float
        Stator winding resistance [ohm].
    xls_ohm : float
        Stator leakage reactance at ``base_frequency_hz`` [ohm].
    xm_ohm : float
        Magnetising reactance at ``base_frequency_hz`` [ohm].
    xlr_ohm : float
        Rotor leakage reactance referred to the stator [ohm].
    rr_ohm : float
        Rotor resistance referred to the stator [ohm].
    base_frequency_hz : float
        Frequency at which the reactances are given [Hz].
    poles : int
        Number of poles (even).
    inertia_kg_m2 : float
        Inertia of rotor and coupled load [kg m^2].
    friction_n_m_s : float
        Viscous friction coefficient [N m s/rad].
    connection : {"star", "delta"}
        How the windings are connected to the three lines.
    rated_voltage_v : float
        Rated line-to-line voltage [V] (used for ratings and defaults).
    name : str
        Free label.
    """

    rs_ohm: float
    xls_ohm: float
    xm_ohm: float
    xlr_ohm: float
    rr_ohm: float
    base_frequency_hz: float
    poles: int
    inertia_kg_m2: float
    friction_n_m_s: float = 0.0
    connection: str = "star"
    rated_voltage_v: float = 460.0
    name: str = ""

    def __post_init__(self) -> None:
        for key in ("rs_ohm", "xls_ohm", "xm_ohm", "xlr_ohm", "rr_ohm", "base_frequency_hz", "inertia_kg_m2", "rated_voltage_v"):
            v = getattr(self, key)
            if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
                raise InvalidParameterError(f"machine {key}={v!r} must be a positive number")
        if not (isinstance(self.friction_n_m_s, (int, float)) and self.friction_n_m_s >= 0):
            raise InvalidParameterError(f"machine friction_n_m_s={self.friction_n_m_s!r} must be >= 0")
        if not isinstance(self.poles, int) or self.poles < 2 or self.poles % 2:
            raise InvalidParameterError(f"machine poles={self.poles!r} must be an even whole number >= 2")
        if self.connection not in CONNECTIONS:
            raise InvalidParameterError(f"machine connection={self.connection!r} must be one of {CONNECTIONS}")

    # -- derived ----------------------------------------------------------------
    @property
    def pole_pairs(self) -> int:
        return self.poles // 2

    @property
    def omega_base_rad_s(self) -> float:
        return 2.0 * math.pi * self.base_frequency_hz

    @property
    def lls_h(self) -> float:
        """Stator leakage inductance [H]."""
        return self.xls_ohm / self.omega_base_rad_s

    @property
    def llr_h(self) -> float:
        """Referred rotor leakage inductance [H]."""
        return self.xlr_ohm / self.omega_base_rad_s

    @property
    def lm_h(self) -> float:
        """Magnetising inductance [H]."""
        return self.xm_ohm / self.omega_base_rad_s

    @property
    def ls_h(self) -> float:
        return self.lls_h + self.lm_h

    @property
    def lr_h(self) -> float:
        return self.llr_h + self.lm_h

    @property
    def winding_to_line(self) -> float:
        """m in ``M^T M = m I``: 1 for star, 3 for delta (see `waveforms.sim.topology`)."""
        return 1.0 if self.connection == "star" else 3.0

    def synchronous_speed_rad_s(self, frequency_hz: float) -> float:
        """Mechanical synchronous speed 2 pi f / (P/2) [rad/s]."""
        return 2.0 * math.pi * frequency_hz / self.pole_pairs

    def to_dict(self) -> dict[str, Any]:
        return dataclasses.asdict(self)

    @classmethod
    def from_dict(cls, d: dict[str, Any], source: str = "<machine>") -> MachineParameters:
        known = {f.name for f in dataclasses.fields(cls)}
        unknown = sorted(set(d) - known)
        if unknown:
            raise CaptureReadError(source, f"key {unknown[0]}", f"unknown machine key; known keys: {sorted(known)}")
        missing = [f.name for f in dataclasses.fields(cls) if f.default is dataclasses.MISSING and f.name not in d]
        if missing:
            raise CaptureReadError(source, f"key {missing[0]}", f"missing; the machine needs {sorted(missing)}")
        try:
            return cls(**d)
        except InvalidParameterError as e:
            raise CaptureReadError(source, "", str(e)) from None


def load_machine(path: str | PathLike[str]) -> MachineParameters:
    """Read machine parameters from a TOML file (table ``[machine]`` or top-level keys)."""
    data, _ = read_toml(path, "machine file")
    return MachineParameters.from_dict(table_or_top(data, "machine", path), str(path))


#: Krause et al. [1] 50 hp, 460 V, 4-pole machine (reactances at 60 Hz); the values
#: agree across several independent public copies of the book's table (table number
#: from memory).
KRAUSE_50HP = MachineParameters(
    rs_ohm=0.087, xls_ohm=0.302, xm_ohm=13.08, xlr_ohm=0.302, rr_ohm=0.228,
    base_frequency_hz=60.0, poles=4, inertia_kg_m2=1.662, connection="star",
    rated_voltage_v=460.0, name="Krause et al. 50 hp, 460 V, 4-pole",
)

#: Krause et al. [1] 3 hp, 220 V, 4-pole machine (reactances at 60 Hz).
KRAUSE_3HP = MachineParameters(
    rs_ohm=0.435, xls_ohm=0.754, xm_ohm=26.13, xlr_ohm=0.754, rr_ohm=0.816,
    base_frequency_hz=60.0, poles=4, inertia_kg_m2=0.089, connection="star",
    rated_voltage_v=220.0, name="Krause et al. 3 hp, 220 V, 4-pole",
)


def steady_component(
    params: MachineParameters,
    e_vec: complex | np.ndarray,
    omega_e_rad_s: float | np.ndarray,
    omega_r_rad_s: float | np.ndarray,
    source_r_ohm: float = 0.0,
    source_l_h: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    """Steady-state response of the machine to one rotating space-vector component.

    The machine-side driving vector ``e_vec * exp(j omega_e t)`` (already mapped
    to winding coordinates, see `waveforms.sim.topology`) with the rotor
    turning at constant electrical speed ``omega_r_rad_s``.  ``omega_e_rad_s``
    may be negative (a backward-rotating, negative-sequence component).

    Returns
    -------
    i_s, psi_r : complex ndarray
        Complex amplitudes of the stator current [A] and rotor flux linkage
        [Wb] space vectors.

    References
    ----------
    Krause et al. (module reference [1]), chapter 4: stationary-frame voltage
    equations with ``d/dt -> j omega_e``; equivalent to the T circuit at slip
    ``(omega_e - omega_r) / omega_e`` (from memory).
    """
    m = params.winding_to_line
    w = np.asarray(omega_e_rad_s, dtype=float)
    wr = np.asarray(omega_r_rad_s, dtype=float)
    e = np.asarray(e_vec, dtype=complex)
    # Stator: (rs + m Rsrc + j w (Ls + m Lsrc)) Is + j w Lm Ir = E      (Krause ch. 4, stationary frame)
    a11 = params.rs_ohm + m * source_r_ohm + 1j * w * (params.ls_h + m * source_l_h)
    a12 = 1j * w * params.lm_h
    # Rotor:  0 = rr Ir + j (w - wr) (Lr Ir + Lm Is)                       (Krause ch. 4, rotor in stationary frame)
    a21 = 1j * (w - wr) * params.lm_h
    a22 = params.rr_ohm + 1j * (w - wr) * params.lr_h
    det = a11 * a22 - a12 * a21
    i_s = e * a22 / det
    i_r = -e * a21 / det
    psi_r = params.lr_h * i_r + params.lm_h * i_s
    return i_s, psi_r


def steady_torque_n_m(params: MachineParameters, i_s: np.ndarray, psi_r: np.ndarray) -> np.ndarray:
    """Mean electromagnetic torque of one steady component [N m].

    ``T = (P/2) (Lm/Lr) Im(conj(psi_r) i_s)`` for power-invariant space vectors
    (Krause et al. ch. 4 torque equation, rescaled from the 2/3 transform; from memory).
    """
    k = params.lm_h / params.lr_h
    return params.pole_pairs * k * np.imag(np.conj(psi_r) * i_s)
