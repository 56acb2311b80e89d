"""Equivalent-circuit parameters estimated from a nameplate, for "what if" simulations.

A nameplate gives three figures the single-cage T circuit must meet at rated
voltage and frequency: the rated torque at the rated slip, the full-load
current at the rated slip, and the locked-rotor current (given, or the middle
of the NEMA code-letter range).  With two assumptions stated up front

* the stator-to-rotor resistance ratio ``rs_per_rr`` (default 1.0), and
* the share ``x1_share`` of the total leakage reactance on the stator side
  (default 0.4, the split usually quoted for NEMA design B; from memory,
  IEEE Std 112),

the three unknowns ``rr``, ``X1 + X2`` and ``Xm`` follow from the three figures
by `scipy.optimize.least_squares` on the T-circuit solution.  This is an
*estimate*: the breakdown torque and the single-phased behaviour of the
estimated machine are only as good as the assumptions (a single-cage rotor,
no saturation), and the result says so in its warnings.  Inertia is not on a
nameplate and must be given.

References
----------
.. [1] Krause, Wasynczuk, Sudhoff, *Analysis of Electric Machinery and Drive
   Systems*, 2nd ed., 2002, ch. 4 (steady-state equivalent circuit; from memory).
.. [2] NEMA MG-1, 10.37.2 (locked-rotor kVA per hp by code letter).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
from scipy.optimize import least_squares

from ..errors import InvalidParameterError
from ..sim.machine import MachineParameters, steady_component, steady_torque_n_m
from .nameplate import Nameplate


@dataclasses.dataclass(frozen=True)
class Estimate:
    """Estimated machine and how it was obtained.

    Attributes
    ----------
    machine : MachineParameters
    targets : dict
        The three figures met: rated torque [N m], FLA [A], locked-rotor current [A].
    achieved : dict
        The same figures of the estimated machine.
    warnings : tuple of str
        Assumptions taken.
    """

    machine: MachineParameters
    targets: dict[str, float]
    achieved: dict[str, float]
    warnings: tuple[str, ...]


def _figures(m: MachineParameters, v_ll: float, f_hz: float, slip: float) -> tuple[float, float, float]:
    """(torque at slip [N m], line current at slip [A], locked-rotor line current [A])."""
    w = 2 * math.pi * f_hz
    # machine-side space-vector amplitude (power invariant) = sqrt(3) x winding RMS voltage:
    # star sqrt(3) V_ph = V_ll, delta sqrt(3) V_ll
    e = v_ll * (math.sqrt(3.0) if m.connection == "delta" else 1.0)
    scale = math.sqrt(m.winding_to_line) / math.sqrt(3.0)  # line RMS from the winding-space amplitude
    i_r, psi_r = steady_component(m, e, w, w * (1 - slip))
    i_lr, _ = steady_component(m, e, w, 0.0)
    torque = float(steady_torque_n_m(m, i_r, psi_r))
    return torque, float(abs(i_r)) * scale, float(abs(i_lr)) * scale


def machine_from_nameplate(
    plate: Nameplate,
    inertia_kg_m2: float,
    rs_per_rr: float = 1.0,
    x1_share: float = 0.4,
    friction_n_m_s: float = 0.0,
) -> Estimate:
    """Estimate T-circuit parameters that meet the nameplate's rated and locked-rotor figures.

    Parameters
    ----------
    plate : Nameplate
    inertia_kg_m2 : float
        Inertia of rotor and load [kg m^2] (not on a nameplate).
    rs_per_rr : float
        Assumed ratio of stator to referred rotor resistance [-].
    x1_share : float
        Assumed stator share of the total leakage reactance [-], 0 < x1_share < 1.
    friction_n_m_s : float
        Viscous friction [N m s/rad]; the rated torque is met at the shaft.

    Raises
    ------
    InvalidParameterError
        If the figures cannot be met by a single-cage circuit.
    """
    if not (0.0 < x1_share < 1.0) or not rs_per_rr > 0 or not inertia_kg_m2 > 0:
        raise InvalidParameterError(f"{x1_share=} must be in (0, 1), {rs_per_rr=} and {inertia_kg_m2=} positive")
    warn = [f"estimated from the nameplate with rs/rr = {rs_per_rr:g} and stator leakage share {x1_share:g} (assumptions)"]
    rng = plate.locked_rotor_current_range_a()
    if rng is None or not math.isfinite(rng[1]):
        raise InvalidParameterError("the nameplate gives no usable locked-rotor current (give locked_rotor_current_a)")
    i_lr = 0.5 * (rng[0] + rng[1])
    if rng[0] != rng[1]:
        warn.append(f"locked-rotor current {i_lr:.1f} A taken as the middle of code letter {plate.nema_code_letter}")
    v_ll, f_hz = plate.rated_voltage_v, plate.rated_frequency_hz
    slip = plate.rated_slip
    w_rated = plate.rated_speed_rpm * 2 * math.pi / 60
    t_rated = plate.rated_power_kw * 1000.0 / w_rated + friction_n_m_s * w_rated
    k_w = 3.0 if plate.connection == "delta" else 1.0  # winding ohms = 3 x star equivalent
    z_base = v_ll / math.sqrt(3.0) / plate.fla_a

    def build(p: np.ndarray) -> MachineParameters:
        rr, x, xm = (float(v) for v in np.exp(p))
        return MachineParameters(
            rs_ohm=k_w * rs_per_rr * rr, xls_ohm=k_w * x1_share * x, xm_ohm=k_w * xm, xlr_ohm=k_w * (1 - x1_share) * x,
            rr_ohm=k_w * rr, base_frequency_hz=f_hz, poles=plate.poles, inertia_kg_m2=inertia_kg_m2,
            friction_n_m_s=friction_n_m_s, connection=plate.connection, rated_voltage_v=v_ll,
            name=f"estimated from nameplate {plate.name!r}",
        )

    def resid(p: np.ndarray) -> np.ndarray:
        t, i, ilr = _figures(build(p), v_ll, f_hz, slip)
        return np.array([t / t_rated - 1.0, i / plate.fla_a - 1.0, ilr / i_lr - 1.0])

    p0 = np.log([slip * z_base * 0.9, 0.8 * v_ll / math.sqrt(3.0) / i_lr, v_ll / math.sqrt(3.0) / (0.35 * plate.fla_a)])
    sol = least_squares(resid, p0, xtol=1e-14, ftol=1e-14, gtol=1e-14)
    if not sol.success or np.max(np.abs(sol.fun)) > 1e-6:
        raise InvalidParameterError(
            f"nameplate {plate.name!r}: no single-cage circuit meets FLA {plate.fla_a} A, {plate.rated_speed_rpm} rpm "
            f"and locked-rotor {i_lr:.0f} A together (worst mismatch {100 * np.max(np.abs(sol.fun)):.2f} %)"
        )
    m = build(sol.x)
    t, i, ilr = _figures(m, v_ll, f_hz, slip)
    return Estimate(
        machine=m,
        targets={"torque_n_m": t_rated, "fla_a": plate.fla_a, "locked_rotor_current_a": i_lr},
        achieved={"torque_n_m": t, "fla_a": i, "locked_rotor_current_a": ilr},
        warnings=tuple(warn),
    )
