"""The source neutral's grounding and ground faults elsewhere: the neutral-to-ground voltage.

The motor circuit is three-wire, so no zero-sequence current flows in it and the network of
`waveforms.sim.network` gives line-to-neutral voltages only.  How the source neutral sits against
ground is a separate, single-node zero-sequence circuit: the neutral is tied to ground solidly,
through a resistor, or not at all; every line has the system's charging capacitance ``C0`` to
ground; a ground fault on another feeder joins one line ``k`` to ground through ``R_f``.  Kirchhoff's
current law at ground, with the line-to-ground voltages ``e_j + v_N``::

    C0 sum_j d(e_j + v_N)/dt + v_N / R_n + g_f(t) (e_k + v_N) = 0,     g_f = 1/R_f during the fault

so, with ``e0`` the EMFs' zero-sequence part, ``3 C0 dv_N/dt = -a' v_N - g_f e_k - 3 C0 de0/dt`` and
``a = (1/R_n + g_f) / (3 C0)``.  Between changes the coefficients are constant and the EMFs are sums of
sinusoids, so the solution is exact: the steady phasor of each order plus a decaying exponential
carrying the value across the change (an ungrounded system keeps a trapped offset after a fault
clears: ``a = 0``).  Line-to-ground voltage = line-to-neutral voltage + ``v_N``; line-to-line
voltages are unchanged.  A bolted fault on an ungrounded system gives ``v_N = -e_k``: the faulted
line at ground potential and the two others at sqrt(3) x their line-to-neutral voltage
(symmetrical components, e.g. Blackburn, *Symmetrical Components for Power Systems Engineering*,
ch. on ungrounded systems; from memory).

Neglected: the series drops of the load current in driving the zero-sequence circuit (it is driven
by the source EMF, the open-circuit secondary EMF behind a transformer), the faulted feeder's own
impedance, arcing and intermittent faults.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np

from ..errors import InvalidParameterError

KINDS = ("solid", "resistance", "ungrounded")


@dataclasses.dataclass(frozen=True)
class GroundFault:
    """A line-to-ground fault on another feeder from ``start_s`` to ``end_s`` through ``resistance_ohm``."""

    line: str
    start_s: float
    end_s: float
    resistance_ohm: float = 0.0


@dataclasses.dataclass(frozen=True)
class Grounding:
    """Source neutral grounding.

    Parameters
    ----------
    kind : {"solid", "resistance", "ungrounded"}
    resistance_ohm : float
        Neutral grounding resistor [ohm] (``resistance`` only).
    charging_uf_per_phase : float
        System capacitance of each line to ground [uF].
    faults : tuple of GroundFault
    """

    kind: str = "solid"
    resistance_ohm: float = 0.0
    charging_uf_per_phase: float = 1.0
    faults: tuple[GroundFault, ...] = ()

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise InvalidParameterError(f"grounding kind={self.kind!r} must be one of {KINDS}")
        if self.kind == "resistance" and not self.resistance_ohm > 0:
            raise InvalidParameterError("grounding kind='resistance' needs resistance_ohm > 0")
        if self.kind == "ungrounded" and not self.charging_uf_per_phase > 0:
            raise InvalidParameterError("grounding kind='ungrounded' needs charging_uf_per_phase > 0 (it sets the neutral)")
        if self.charging_uf_per_phase < 0:
            raise InvalidParameterError("grounding charging_uf_per_phase must be >= 0")
        if self.kind == "solid" and self.faults:
            raise InvalidParameterError("a ground fault on a solidly grounded source is a short circuit: model it as a dip")
        for f in self.faults:
            if f.line not in ("A", "B", "C") or not (0 <= f.start_s < f.end_s) or f.resistance_ohm < 0:
                raise InvalidParameterError(f"ground fault {f!r}: line A/B/C, 0 <= start_s < end_s, resistance_ohm >= 0")
        for i, f in enumerate(self.faults):
            for g in self.faults[i + 1 :]:
                if f.start_s < g.end_s and g.start_s < f.end_s:
                    raise InvalidParameterError("ground faults must not overlap")

    def change_times_s(self) -> list[float]:
        return sorted({x for f in self.faults for x in (f.start_s, f.end_s)})

    def fault_at(self, t_s: float) -> GroundFault | None:
        return next((f for f in self.faults if f.start_s <= t_s < f.end_s), None)


#: conductance standing for a bolted fault (R_f = 0) [S]
BOLTED_S = 1e6


def neutral_voltage_v(g: Grounding, phasors_at, orders: Sequence[int], omega_rad_s: float, t_s: np.ndarray,  # noqa: ANN001
                      extra_change_times_s: Sequence[float] = ()) -> np.ndarray:
    """Neutral-to-ground voltage ``v_N`` (n,) [V] at the instants ``t_s`` (see the module docstring).

    ``phasors_at(t)`` returns the EMF phasors (3, k) in force just after ``t`` (RMS, multiplying
    ``exp(j h w t)``); ``extra_change_times_s`` are the instants where those phasors change (dips).
    """
    out = np.zeros(t_s.size)
    if g.kind == "solid":
        return out
    c0 = 3.0 * g.charging_uf_per_phase * 1e-6
    gn = 1.0 / g.resistance_ohm if g.kind == "resistance" else 0.0
    bounds = [0.0] + sorted({b for b in [*g.change_times_s(), *extra_change_times_s] if 0.0 < b < float(t_s[-1])}) + [math.inf]
    h = np.array(orders, dtype=float) * omega_rad_s
    v_carry = None
    for ta, tb in zip(bounds[:-1], bounds[1:], strict=True):
        f = g.fault_at(ta)
        gf = 0.0 if f is None else (BOLTED_S if f.resistance_ohm == 0 else 1.0 / f.resistance_ohm)
        e = phasors_at(ta)
        e0 = e.mean(axis=0)
        ek = e["ABC".index(f.line)] if f is not None else np.zeros_like(e0)
        # steady phasors: (j h w 3C0 + gn + gf) V = -gf E_k - j h w 3C0 E0
        vss = (-gf * ek - 1j * h * c0 * e0) / (1j * h * c0 + gn + gf)
        a = (gn + gf) / c0 if c0 > 0 else math.inf

        def ss(t: np.ndarray, v: np.ndarray = vss) -> np.ndarray:
            return math.sqrt(2.0) * np.real(np.exp(1j * np.outer(t, h)) @ v)

        sel = (t_s >= ta) & (t_s < tb)
        tt = t_s[sel]
        start = float(ss(np.array([ta]))[0])
        offset = 0.0 if v_carry is None or not math.isfinite(a) else v_carry - start
        out[sel] = ss(tt) if offset == 0.0 else ss(tt) + offset * (np.exp(-a * (tt - ta)) if a > 0 else 1.0)
        if math.isfinite(tb):
            end = float(ss(np.array([tb]))[0])
            v_carry = end if offset == 0.0 else end + offset * (math.exp(-a * (tb - ta)) if a > 0 else 1.0)
    return out
