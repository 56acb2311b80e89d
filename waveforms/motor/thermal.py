"""Thermal stress of a motor: a single time-constant heating model.

The stator (or rotor) temperature rise is modelled, as in a thermal overload
relay, by one first-order state ``theta`` in units of (per-unit current)^2::

    d theta / dt = (I_eq^2 - theta) / tau

so that a constant current ``I`` (per unit of the setting) from an initial
state ``I_p^2`` reaches the trip level ``(k I_B)^2`` after

    t = tau ln((I^2 - I_p^2) / (I^2 - (k I_B)^2))

(IEC 60255-149, thermal electrical relays; the same law as the older
IEC 60255-8).  Negative-sequence current heats the rotor far more than its
magnitude suggests (the rotor sees it at nearly twice supply frequency); it is
weighted as ``I_eq^2 = I1^2 + K I2^2`` (IEEE C37.96, motor protection guide).

Everything here takes arrays (per-cycle values) and returns arrays or
DataFrames; nothing reads files or prints.

References
----------
.. [1] IEC 60255-149:2013, Measuring relays and protection equipment -
   Part 149: Functional requirements for thermal electrical relays (the
   thermal equation, clause 5).
.. [2] IEEE Std C37.96, IEEE Guide for AC Motor Protection (negative-sequence
   heating, K about 175 / I_LR^2 with I_LR in per unit) -- recalled, from memory.
.. [3] IEC 60947-4-1, Low-voltage switchgear and controlgear - Contactors and
   motor-starters: trip classes 10A, 10, 20, 30 (trip time at 7.2 x setting from
   the cold state) and the 1.05 / 1.2 x limits.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pandas as pd
from scipy.signal import lfilter

from ..errors import InvalidParameterError
from ..settings import check_fields, setting

#: IEC 60947-4-1 trip-class bands: (lowest, highest) trip time [s] at 7.2 x the
#: current setting, from the cold state ([3]).
TRIP_CLASS_BAND_S: dict[str, tuple[float, float]] = {
    "10A": (2.0, 10.0),
    "10": (4.0, 10.0),
    "20": (6.0, 20.0),
    "30": (9.0, 30.0),
}

#: Trip time [s] at 7.2 x setting, cold, that our model relay of each class is
#: tuned to: three quarters of the class's upper limit, inside the IEC 60947-4-1
#: band (our choice, no source: real relays differ; the band is what is certain).
TRIP_CLASS_TARGET_S: dict[str, float] = {"10A": 6.0, "10": 7.5, "20": 15.0, "30": 22.5}

#: Pick-up of the model relays, in per unit of the setting: between the
#: 1.05 x "no trip within 2 h" and 1.2 x "trip within 2 h" limits of
#: IEC 60947-4-1 (midpoint chosen; common practice, no source).
RELAY_PICKUP_PU = 1.125

#: Multiple of the setting at which the trip class is defined (IEC 60947-4-1).
CLASS_TEST_MULTIPLE = 7.2


def trip_time_s(i_pu: np.ndarray | float, tau_s: float, k: float = 1.05, ip_pu: np.ndarray | float = 0.0) -> np.ndarray:
    """Operate time of a thermal relay at constant current.

    Parameters
    ----------
    i_pu : array_like
        Current in per unit of the basic current I_B [pu].
    tau_s : float
        Heating time constant [s].
    k : float
        Pick-up factor, trip level ``(k I_B)^2`` [pu].
    ip_pu : array_like
        Steady load current before the overload (0 = cold) [pu].

    Returns
    -------
    ndarray
        Time to trip [s]; ``inf`` where ``i_pu <= k`` (never trips).

    References
    ----------
    .. [1] IEC 60255-149:2013, clause 5, thermal equation.
    """
    if not tau_s > 0:
        raise InvalidParameterError(f"{tau_s=} must be positive")
    i2 = np.asarray(i_pu, dtype=float) ** 2
    ip2 = np.asarray(ip_pu, dtype=float) ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        # IEC 60255-149 cl. 5: t = tau ln((I^2 - Ip^2) / (I^2 - (k IB)^2))
        t = tau_s * np.log((i2 - ip2) / (i2 - k * k))
    t = np.where(i2 > k * k, np.maximum(t, 0.0), np.inf)
    return t


def negative_sequence_k(locked_rotor_pu: float) -> float:
    """Default negative-sequence heating weight ``K = 175 / I_LR^2``.

    Parameters
    ----------
    locked_rotor_pu : float
        Locked-rotor current in per unit of FLA [pu].

    References
    ----------
    .. [1] IEEE Std C37.96, AC motor protection guide (from memory: K about
       175 / I_LR^2, I_LR in per unit; about 4.9 for a 6 x FLA motor).
    """
    if not locked_rotor_pu > 1:
        raise InvalidParameterError(f"{locked_rotor_pu=} must be above 1 (per unit of FLA)")
    return 175.0 / locked_rotor_pu**2  # IEEE C37.96 (from memory)


def equivalent_heating_current(i1: np.ndarray, i2: np.ndarray, k_neg: float) -> np.ndarray:
    """``I_eq = sqrt(I1^2 + K I2^2)`` (same unit as the inputs).

    References
    ----------
    .. [1] IEEE Std C37.96 (negative-sequence weighting; from memory).
    """
    if k_neg < 0:
        raise InvalidParameterError(f"{k_neg=} must not be negative")
    i1 = np.asarray(i1, dtype=float)
    i2 = np.asarray(i2, dtype=float)
    return np.sqrt(i1**2 + k_neg * i2**2)  # IEEE C37.96: I_eq^2 = I1^2 + K I2^2


def delta_winding_currents(phasors_line: np.ndarray) -> np.ndarray:
    """Winding currents of a delta winding from its line-current phasors.

    With line currents ``Ia = Iab - Ica``, ``Ib = Ibc - Iab``, ``Ic = Ica - Ibc``
    and no circulating (zero-sequence) current inside the delta, the winding
    currents are ``Iab = (Ia - Ib)/3``, ``Ibc = (Ib - Ic)/3``, ``Ica = (Ic - Ia)/3``
    (Kirchhoff's current law at the three terminals; common practice, no source).

    Parameters
    ----------
    phasors_line : ndarray, complex, shape (3, n)
        Ia, Ib, Ic phasors per cycle [A].

    Returns
    -------
    ndarray, complex, shape (3, n)
        Iab, Ibc, Ica [A].
    """
    p = np.asarray(phasors_line, dtype=complex)
    if p.shape[0] != 3:
        raise InvalidParameterError(f"phasors_line must have 3 rows (Ia, Ib, Ic), got shape {p.shape}")
    return (p - np.roll(p, -1, axis=0)) / 3.0


def first_order_state(
    u: np.ndarray, dt_s: float, tau_s: float, theta0: float = 0.0
) -> np.ndarray:
    """Solve ``d theta/dt = (u - theta)/tau`` exactly for a piecewise-constant ``u``.

    ``theta[n]`` is the state at the end of step ``n`` (step length ``dt_s``).

    References
    ----------
    .. [1] IEC 60255-149:2013, clause 5 (the first-order thermal model whose
       closed form is `trip_time_s`).
    """
    if not (dt_s > 0 and tau_s > 0):
        raise InvalidParameterError(f"{dt_s=} and {tau_s=} must be positive")
    a = math.exp(-dt_s / tau_s)
    u = np.asarray(u, dtype=float)
    if u.size == 0:
        return u.copy()
    # exact discretisation: theta_n = a theta_{n-1} + (1 - a) u_n
    y, _ = lfilter([1.0 - a], [1.0, -a], u, zi=[a * theta0])
    return y


def crossing_time_s(
    t_end_s: np.ndarray, u: np.ndarray, theta: np.ndarray, dt_s: float, tau_s: float, level: float, theta0: float = 0.0
) -> float | None:
    """First instant the state reaches ``level``, solved exactly inside its step.

    Returns seconds (on the ``t_end_s`` axis) or None when never reached.
    """
    hit = np.flatnonzero(theta >= level)
    if hit.size == 0:
        return None
    n = int(hit[0])
    prev = theta0 if n == 0 else float(theta[n - 1])
    if prev >= level:
        return float(t_end_s[n] - dt_s) if n > 0 else float(t_end_s[0] - dt_s)
    # inside step n, theta(t) = u + (prev - u) exp(-t/tau)  (IEC 60255-149 cl. 5)
    dt_in = tau_s * math.log((u[n] - prev) / (u[n] - level))
    return float(t_end_s[n] - dt_s + min(dt_in, dt_s))


def class_tau_s(trip_class: str, pickup_pu: float = RELAY_PICKUP_PU) -> float:
    """Time constant [s] of our model relay of an IEC 60947-4-1 trip class.

    Chosen so that the cold trip time at 7.2 x setting equals
    `TRIP_CLASS_TARGET_S` (inside the class band, IEC 60947-4-1).
    """
    if trip_class not in TRIP_CLASS_TARGET_S:
        raise InvalidParameterError(f"{trip_class=} must be one of {list(TRIP_CLASS_TARGET_S)}")
    m2 = CLASS_TEST_MULTIPLE**2
    # invert IEC 60255-149 cl. 5 with Ip = 0: tau = t / ln(I^2 / (I^2 - k^2))
    return TRIP_CLASS_TARGET_S[trip_class] / math.log(m2 / (m2 - pickup_pu**2))


@dataclasses.dataclass(frozen=True)
class ThermalParams:
    """Parameters of the thermal assessment.

    Parameters
    ----------
    motor_tau_s : float
        Heating time constant of the motor [s].  Default 600 s is an assumption
        (no source): give the maker's figure where known.
    k_neg : float or None
        Negative-sequence weight K; None = ``175 / I_LR^2`` (IEEE C37.96, from memory).
    relay_setting_a : float or None
        Overload relay current setting [A]; None = nameplate FLA.
    trip_classes : tuple of str
        IEC 60947-4-1 classes to evaluate.
    hot_start : bool
        Start the models from the state of steady rated current (1 pu) rather than cold.
    """

    motor_tau_s: float = setting(
        600.0, "heating time constant of the motor [s]; 600 s is an assumption (no source): give the maker's figure",
        check=lambda v: None if v >= 1.0 else
        f"{v!r} is below the minimum 1 s (a heating time constant is positive, and no motor's is under 1 s)")
    k_neg: float | None = setting(
        None, "negative-sequence heating weight K [-]; absent = 175 / I_LR^2 (IEEE C37.96, from memory)", minimum=0.0)
    relay_setting_a: float | None = setting(
        None, "overload relay current setting [A]; absent = nameplate FLA",
        check=lambda v: None if v > 0 else f"{v!r} must be positive")
    trip_classes: tuple[str, ...] = setting(
        ("10", "20", "30"), "IEC 60947-4-1 trip classes to evaluate", choices=tuple(TRIP_CLASS_TARGET_S))
    hot_start: bool = setting(False, "start the thermal models from steady rated current (1 pu) rather than cold")

    def __post_init__(self) -> None:
        check_fields(self)  # one bound per field, written above; met by the library, recipes and CLI alike


@dataclasses.dataclass(frozen=True)
class ThermalResult:
    """Outcome of `assess_thermal`.

    ``track`` has one row per cycle: ``t_s``, ``i_max_line_a`` (largest line
    RMS), ``i1_a``, ``i2_a``, ``i_eq_pu`` (per unit FLA), ``i_winding_max_pu``
    (hottest winding, per unit of its rated current), ``heating_pu`` (the
    model's input: the larger of the two), ``theta_motor_pct`` (thermal
    capacity used, 100 % = steady state at service-factor current) and one
    ``theta_class<N>_pct`` per relay class (100 % = trip).
    """

    track: pd.DataFrame
    summary: dict


def assess_thermal(
    cycles: pd.DataFrame,
    fla_a: float,
    service_factor: float = 1.0,
    locked_rotor_a: float | None = None,
    connection: str = "star",
    params: ThermalParams | None = None,
) -> ThermalResult:
    """Thermal stress from the per-cycle table: heating current, capacity used, relay trips.

    Parameters
    ----------
    cycles : DataFrame
        Measurement cycle table (columns ``t_s``, ``t_start_s``, ``t_end_s``,
        ``Ia_rms``..., ``I1``, ``I2``, and for delta motors ``Ia_mag``/``Ia_ang_deg``...).
    fla_a : float
        Full-load current [A].
    service_factor : float
        Nameplate service factor [-].
    locked_rotor_a : float or None
        Locked-rotor current [A] (for the default K).
    connection : {"star", "delta"}
    params : ThermalParams

    Returns
    -------
    ThermalResult

    References
    ----------
    .. [1] IEC 60255-149:2013 cl. 5; IEEE C37.96 (from memory); IEC 60947-4-1.
    """
    params = params or ThermalParams()
    if not fla_a > 0:
        raise InvalidParameterError(f"{fla_a=} must be positive")
    if connection not in ("star", "delta"):
        raise InvalidParameterError(f"{connection=} must be 'star' or 'delta'")
    lines = [f"I{c}_rms" for c in "abc" if f"I{c}_rms" in cycles]
    if not lines or len(cycles) == 0:
        raise InvalidParameterError("thermal assessment needs line-current RMS columns (Ia_rms, Ib_rms, Ic_rms)")
    notes: list[str] = []
    t_end = cycles["t_end_s"].to_numpy(float) if "t_end_s" in cycles else cycles["t_s"].to_numpy(float)
    dur = np.diff(cycles[["t_start_s", "t_end_s"]].to_numpy(float), axis=1)[:, 0] if "t_start_s" in cycles else np.diff(t_end, prepend=t_end[0])
    dt = float(np.nanmedian(dur)) if dur.size and np.isfinite(np.nanmedian(dur)) and np.nanmedian(dur) > 0 else 0.02
    i_rms = cycles[lines].to_numpy(float)
    i_max = np.nanmax(np.where(np.isfinite(i_rms), i_rms, -np.inf), axis=1)
    i_max = np.where(np.isfinite(i_max), i_max, np.nan)

    lr_pu = (locked_rotor_a / fla_a) if locked_rotor_a else 6.0
    if params.k_neg is None:
        k_neg = negative_sequence_k(lr_pu)
        notes.append(f"negative-sequence weight K = 175 / {lr_pu:.2f}^2 = {k_neg:.2f} (IEEE C37.96, from memory)")
    else:
        k_neg = float(params.k_neg)
    if "I1" in cycles and "I2" in cycles:
        i1 = cycles["I1"].to_numpy(float)
        i2 = cycles["I2"].to_numpy(float)
        i_eq_pu = equivalent_heating_current(i1, i2, k_neg) / fla_a
    else:
        i1 = np.full(len(cycles), np.nan)
        i2 = np.full(len(cycles), np.nan)
        i_eq_pu = i_max / fla_a
        notes.append("no sequence currents: heating taken from the largest line RMS current")

    i_wind_pu = i_max / fla_a
    if connection == "delta":
        cols = [(f"I{c}_mag", f"I{c}_ang_deg") for c in "abc"]
        if all(m in cycles and a in cycles for m, a in cols):
            ph = np.vstack([cycles[m].to_numpy(float) * np.exp(1j * np.deg2rad(cycles[a].to_numpy(float))) for m, a in cols])
            w = np.abs(delta_winding_currents(ph))
            # rated winding current of a delta motor is FLA / sqrt(3) (common practice, no source)
            i_wind_pu = np.nanmax(w, axis=0) / (fla_a / math.sqrt(3.0))
            notes.append("delta connection: hottest winding current from line phasors (no circulating current assumed)")
        else:
            notes.append("delta connection but no line-current phasors: winding currents not resolved")
    heating = np.fmax(np.nan_to_num(i_eq_pu, nan=0.0), np.nan_to_num(i_wind_pu, nan=0.0))
    u = heating**2
    theta0 = 1.0 if params.hot_start else 0.0

    track = pd.DataFrame({
        "t_s": cycles["t_s"].to_numpy(float), "i_max_line_a": i_max, "i1_a": i1, "i2_a": i2,
        "i_eq_pu": i_eq_pu, "i_winding_max_pu": i_wind_pu, "heating_pu": heating,
    })
    sf = float(service_factor)
    theta_m = first_order_state(u, dt, params.motor_tau_s, theta0)
    track["theta_motor_pct"] = 100.0 * theta_m / sf**2
    setting = params.relay_setting_a or fla_a
    # the relays see the largest line current (an overload relay measures line current)
    u_relay = np.nan_to_num(i_max / setting, nan=0.0) ** 2
    relays = {}
    for cls in params.trip_classes:
        tau_c = class_tau_s(cls)
        th = first_order_state(u_relay, dt, tau_c, theta0)
        level = RELAY_PICKUP_PU**2
        track[f"theta_class{cls}_pct"] = 100.0 * th / level
        t_trip = crossing_time_s(t_end, u_relay, th, dt, tau_c, level, theta0)
        relays[cls] = {
            "tau_s": tau_c, "trip_s": t_trip, "pickup_pu": RELAY_PICKUP_PU,
            "trip_at_7_2x_cold_s": float(trip_time_s(CLASS_TEST_MULTIPLE, tau_c, RELAY_PICKUP_PU)),
            "band_at_7_2x_s": list(TRIP_CLASS_BAND_S[cls]) if cls in TRIP_CLASS_BAND_S else None,
        }
    valid = np.isfinite(i_max)
    summary = {
        "fla_a": fla_a, "service_factor": sf, "connection": connection, "k_neg": k_neg,
        "motor_tau_s": params.motor_tau_s, "relay_setting_a": setting, "hot_start": params.hot_start,
        "time_above_fla_s": float(np.sum(dur[valid & (i_max > fla_a)])),
        "time_above_sf_current_s": float(np.sum(dur[valid & (i_max > fla_a * sf)])),
        "max_current_pu": float(np.nanmax(i_max) / fla_a) if valid.any() else None,
        "max_heating_pu": float(np.max(heating)) if heating.size else None,
        "thermal_capacity_used_pct": float(np.max(track["theta_motor_pct"])) if len(track) else None,
        "thermal_capacity_end_pct": float(track["theta_motor_pct"].iloc[-1]) if len(track) else None,
        "relays": relays,
        "notes": notes,
    }
    return ThermalResult(track=track, summary=summary)
