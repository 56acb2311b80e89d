"""Steady running operating point: the speed where motor and load torques balance.

The supply is split into rotating space-vector components (each harmonic
order's positive and negative sequence); with the speed held constant the
machine is linear, so each component is solved on its own
(`waveforms.sim.machine.steady_component`) and the mean torques add (cross
products of different frequencies average to zero).  The operating speed is
the stable root of ``T_e(w) = T_load(w)`` on the motoring side of the
breakdown torque, found with `scipy.optimize.brentq`.

The resulting state is used to start a simulation "already running"; it
neglects the small speed ripple caused by negative-sequence torque pulsation.

References
----------
.. [1] Krause, Wasynczuk, Sudhoff, *Analysis of Electric Machinery and Drive
   Systems*, 2nd ed., 2002, ch. 4 (steady-state operation; from memory).
.. [2] C. L. Fortescue, "Method of symmetrical co-ordinates applied to the
   solution of polyphase networks", Trans. AIEE 37, 1918.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy.optimize import brentq

from ..errors import InvalidParameterError
from .loads import Load, load_torque_n_m
from .machine import MachineParameters, steady_component, steady_torque_n_m
from .supply import Supply
from .topology import line_map


@dataclasses.dataclass(frozen=True)
class OperatingPoint:
    """A steady running point.

    Attributes
    ----------
    omega_m_rad_s : float
        Mechanical speed [rad/s].
    slip : float
        Slip against the supply's actual fundamental frequency [-].
    torque_n_m : float
        Mean electromagnetic torque [N m].
    state : ndarray (6,)
        Model state at t = 0 (see `waveforms.sim.dynamics`).
    """

    omega_m_rad_s: float
    slip: float
    torque_n_m: float
    state: np.ndarray


def components(machine: MachineParameters, supply: Supply, t_s: float = 0.0) -> list[tuple[float, complex]]:
    """Rotating components ``(omega_e, amplitude)`` of the machine-side driving vector ``M^T e``.

    A phasor set ``E`` (3,) at ``h w`` gives ``e_abc = sqrt(2) Re(E exp(j h w t))``;
    with ``g = M[:, 0] + j M[:, 1]`` the machine-side vector is
    ``(sqrt(2)/2) [(g . E) exp(j h w t) + (g . conj(E)) exp(-j h w t)]``
    (Fortescue [2]: the two terms are the positive and negative sequence).
    """
    m_map = line_map(machine.connection)
    g = m_map[:, 0] + 1j * m_map[:, 1]
    out: list[tuple[float, complex]] = []
    e = supply.phasors(t_s)
    for k, h in enumerate(supply.orders):
        w = h * supply.omega_rad_s
        out.append((w, complex(math.sqrt(2.0) / 2.0 * (g @ e[:, k]))))
        out.append((-w, complex(math.sqrt(2.0) / 2.0 * (g @ np.conj(e[:, k])))))
    return out


def mean_torque_n_m(machine: MachineParameters, supply: Supply, omega_m_rad_s: float) -> float:
    """Mean electromagnetic torque [N m] at a constant speed, all supply components summed."""
    wr = machine.pole_pairs * omega_m_rad_s
    total = 0.0
    for w, a in components(machine, supply):
        if abs(a) == 0.0:
            continue
        i_s, psi_r = steady_component(machine, a, w, wr, supply.source_r_ohm, supply.source_l_h)
        total += float(steady_torque_n_m(machine, i_s, psi_r))
    return total


def operating_point(machine: MachineParameters, supply: Supply, load: Load) -> OperatingPoint:
    """Steady running point with all three lines closed, forward rotation.

    Raises
    ------
    InvalidParameterError
        When the load at t = 0 exceeds the breakdown torque (no running point).
    """
    kq, tst = load.coefficients(0.0)
    ws = machine.synchronous_speed_rad_s(supply.f_hz)

    def balance(wm: float) -> float:
        return mean_torque_n_m(machine, supply, wm) - float(load_torque_n_m(kq, tst, float(wm))) - machine.friction_n_m_s * wm

    slips = np.geomspace(1e-5, 0.9, 200)  # a running point: not the held-at-standstill balance of a resisting load
    vals = np.array([balance(ws * (1.0 - s)) for s in slips])
    k_max = int(np.argmax(vals))
    if vals[k_max] <= 0:
        raise InvalidParameterError(
            f"the load ({float(load_torque_n_m(kq, tst, ws)):.1f} N m near synchronous speed) exceeds the breakdown torque; "
            "no steady running point (start from rest instead)"
        )
    neg = np.nonzero(vals[:k_max + 1] < 0)[0]
    lo_s = float(slips[neg[-1]]) if neg.size else 0.0
    s_op = brentq(lambda s: balance(ws * (1.0 - s)), lo_s, slips[k_max], xtol=1e-12)
    wm = ws * (1.0 - s_op)
    wr = machine.pole_pairs * wm
    i0 = 0j
    f0 = 0j
    for w, a in components(machine, supply):
        i_s, psi_r = steady_component(machine, a, w, wr, supply.source_r_ohm, supply.source_l_h)
        i0 += complex(i_s)
        f0 += complex(psi_r)
    state = np.array([i0.real, i0.imag, f0.real, f0.imag, wm, 0.0])
    return OperatingPoint(wm, float(s_op), mean_torque_n_m(machine, supply, wm), state)
