"""The three-phase supply: source EMFs behind a series impedance, with dips.

The source is three EMFs ``e_a, e_b, e_c`` against the source neutral, each
a sum of sinusoids (fundamental plus low-order harmonics) with per-phase
magnitude and angle offsets (steady unbalance), a frequency offset from
nominal, and rectangular dips / swells (per-phase residual magnitude between
two instants).  Each line has the same series resistance and inductance
(source impedance) and a switch (see `waveforms.sim.scenario.SwitchEvent`).

Everything here is plain bookkeeping of sinusoids; there is no published
formula beyond ``e(t) = sqrt(2) Re(E exp(j h w t))`` (common practice, no source).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from ..errors import InvalidParameterError

PHASE_INDEX = {"A": 0, "B": 1, "C": 2}


@dataclasses.dataclass(frozen=True)
class Harmonic:
    """One voltage harmonic of the source.

    Parameters
    ----------
    order : int
        Harmonic order h (>= 2).
    percent : float
        Magnitude in percent of the fundamental [%].
    angle_deg : float
        Extra angle of the harmonic (added to ``h`` x the phase angle) [deg].
    """

    order: int
    percent: float
    angle_deg: float = 0.0


@dataclasses.dataclass(frozen=True)
class Dip:
    """A rectangular dip (or swell) of the source EMF on some phases.

    Parameters
    ----------
    start_s, end_s : float
        Start and end instants [s from capture start].
    phases : str
        Affected phases, e.g. ``"A"`` or ``"ABC"``.
    residual_pu : float
        Remaining EMF magnitude during the event [pu of the pre-event magnitude];
        above 1 for a swell.
    """

    start_s: float
    end_s: float
    phases: str
    residual_pu: float


@dataclasses.dataclass(frozen=True)
class Supply:
    """Source EMFs and series impedance.

    Parameters
    ----------
    voltage_ll_v : float
        Line-to-line RMS voltage of the balanced fundamental [V].
    frequency_hz : float
        Nominal frequency [Hz] (50 or 60).
    frequency_offset_hz : float
        Actual minus nominal frequency, constant over the capture [Hz].
    magnitude_pu : tuple of 3 floats
        Per-phase fundamental magnitude [pu] (steady magnitude unbalance).
    angle_offset_deg : tuple of 3 floats
        Per-phase angle added to 0, -120, +120 deg [deg] (steady angle unbalance).
    sequence : {"ABC", "ACB"}
        Phase rotation of the source.
    harmonics : tuple of Harmonic
    dips : tuple of Dip
    source_r_ohm : float
        Series resistance per line [ohm].
    source_x_ohm : float
        Series reactance per line at the actual fundamental frequency [ohm].
    """

    voltage_ll_v: float
    frequency_hz: float = 60.0
    frequency_offset_hz: float = 0.0
    magnitude_pu: tuple[float, float, float] = (1.0, 1.0, 1.0)
    angle_offset_deg: tuple[float, float, float] = (0.0, 0.0, 0.0)
    sequence: str = "ABC"
    harmonics: tuple[Harmonic, ...] = ()
    dips: tuple[Dip, ...] = ()
    source_r_ohm: float = 0.0
    source_x_ohm: float = 0.0

    def __post_init__(self) -> None:
        if not (self.voltage_ll_v > 0 and math.isfinite(self.voltage_ll_v)):
            raise InvalidParameterError(f"supply voltage_ll_v={self.voltage_ll_v!r} must be positive")
        if self.frequency_hz not in (50.0, 60.0):
            raise InvalidParameterError(f"supply frequency_hz={self.frequency_hz!r} must be 50 or 60")
        if abs(self.frequency_offset_hz) > 5.0:
            raise InvalidParameterError(f"supply frequency_offset_hz={self.frequency_offset_hz!r} is beyond +/-5 Hz")
        if len(self.magnitude_pu) != 3 or len(self.angle_offset_deg) != 3:
            raise InvalidParameterError("supply magnitude_pu and angle_offset_deg need three values (A, B, C)")
        if any(not (m >= 0) for m in self.magnitude_pu):
            raise InvalidParameterError(f"supply magnitude_pu={self.magnitude_pu!r} must be >= 0")
        if self.sequence not in ("ABC", "ACB"):
            raise InvalidParameterError(f"supply sequence={self.sequence!r} must be 'ABC' or 'ACB'")
        if self.source_r_ohm < 0 or self.source_x_ohm < 0:
            raise InvalidParameterError("supply source_r_ohm and source_x_ohm must be >= 0")
        for h in self.harmonics:
            if not isinstance(h.order, int) or h.order < 2 or h.order > 50:
                raise InvalidParameterError(f"supply harmonic order={h.order!r} must be a whole number 2..50")
            if not (0 <= h.percent <= 30):
                raise InvalidParameterError(f"supply harmonic {h.order}: percent={h.percent!r} must be 0..30")
        for d in self.dips:
            if not (0 <= d.start_s < d.end_s):
                raise InvalidParameterError(f"supply dip {d.start_s}-{d.end_s} s: need 0 <= start_s < end_s")
            if not d.phases or any(p not in PHASE_INDEX for p in d.phases):
                raise InvalidParameterError(f"supply dip phases={d.phases!r} must be letters from 'ABC'")
            if not (0 <= d.residual_pu <= 2):
                raise InvalidParameterError(f"supply dip residual_pu={d.residual_pu!r} must be 0..2")

    # -- derived ------------------------------------------------------------------
    @property
    def f_hz(self) -> float:
        """Actual fundamental frequency [Hz]."""
        return self.frequency_hz + self.frequency_offset_hz

    @property
    def omega_rad_s(self) -> float:
        return 2.0 * math.pi * self.f_hz

    @property
    def source_l_h(self) -> float:
        """Series inductance per line [H]."""
        return self.source_x_ohm / self.omega_rad_s

    @property
    def orders(self) -> tuple[int, ...]:
        return (1,) + tuple(h.order for h in self.harmonics)

    def change_times_s(self) -> list[float]:
        """Instants where the EMF changes (dip edges) [s]."""
        out: list[float] = []
        for d in self.dips:
            out += [d.start_s, d.end_s]
        return sorted(set(out))

    def dip_multipliers(self, t_s: float) -> np.ndarray:
        """Per-phase magnitude multiplier in force just after ``t_s`` [pu]."""
        mult = np.ones(3)
        for d in self.dips:
            if d.start_s <= t_s < d.end_s:
                for p in d.phases:
                    mult[PHASE_INDEX[p]] *= d.residual_pu
        return mult

    def phasors(self, t_s: float = 0.0) -> np.ndarray:
        """Complex RMS phasors ``E[phase, k]`` of each order in `orders`, in force at ``t_s`` [V].

        The phasor of order ``h`` multiplies ``exp(j h w t)``.
        """
        vph = self.voltage_ll_v / math.sqrt(3.0)
        step = -120.0 if self.sequence == "ABC" else 120.0
        base_deg = np.array([0.0, step, -step]) + np.asarray(self.angle_offset_deg, dtype=float)
        mag = np.asarray(self.magnitude_pu, dtype=float) * self.dip_multipliers(t_s) * vph
        cols = [mag * np.exp(1j * np.deg2rad(base_deg))]
        for h in self.harmonics:
            cols.append(mag * h.percent / 100.0 * np.exp(1j * np.deg2rad(h.order * base_deg + h.angle_deg)))
        return np.stack(cols, axis=1)

    def emf_coefficients(self, t_s: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
        """``(c, s)`` with ``e_x(t) = sum_k c[x,k] cos(h_k w t) + s[x,k] sin(h_k w t)`` [V]."""
        e = self.phasors(t_s)
        return math.sqrt(2.0) * e.real, -math.sqrt(2.0) * e.imag


def emf_abc(c: np.ndarray, s: np.ndarray, orders: tuple[int, ...], omega_rad_s: float, t_s: np.ndarray) -> np.ndarray:
    """Source EMFs ``(3, n)`` [V] at times ``t_s`` from coefficients of `Supply.emf_coefficients`."""
    t = np.asarray(t_s, dtype=float)
    out = np.zeros((3, t.size))
    for k, h in enumerate(orders):
        arg = h * omega_rad_s * t
        out += c[:, k : k + 1] * np.cos(arg) + s[:, k : k + 1] * np.sin(arg)
    return out
