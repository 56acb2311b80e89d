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
weighted as ``I_eq^2 = I1^2 + K I2^2`` while the motor runs (IEEE C37.96, motor
protection guide; ``K = 175 / I_LR^2`` is a rule of thumb there, recalled from
memory, no clause cited).  At standstill (a stalled rotor, slip 1) the rotor
sees the positive- and the negative-sequence field alike at supply frequency,
with the same locked-rotor resistance, so both sequences heat it equally:
``I_eq^2 = I1^2 + I2^2`` (K = 1; the reason K exceeds 1 while running is the
difference between the rotor's resistance at slip frequency and at about twice
supply frequency, which vanishes at slip 1).

The initial state is taken from the capture when it begins with the motor
running at a steady load (steady state at that pre-event current, the motor
assumed to have run so for several time constants); cold or hot only when
asked.  De-energised, the motor cools with a slower time constant than it heats
while running (no fan air): `STANDSTILL_COOLING_RATIO` times the heating
constant, common practice (2 to 4 x), no source.  Past the end of the capture
the models are projected at the last steady heating current, and the verdict's
sensitivity to the assumed time constant, K and locked-rotor current is
reported.  Across consecutive files of one site the batch carries the end state of one
file into the next (`carry_states`, `free_response_decay`, `cooled_state`;
`waveforms.incidents.thermal_carry`).

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
#: tuned to, inside the IEC 60947-4-1 band: three quarters of the upper limit for
#: classes 10, 20, 30 (7.5, 15, 22.5 s); 6 s, the middle of the 2-10 s band, for
#: class 10A (0.6 x its upper limit) (our choice, no source: real relays differ;
#: the band is what is certain).
TRIP_CLASS_TARGET_S: dict[str, float] = {"10A": 6.0, "10": 7.5, "20": 15.0, "30": 22.5}

#: Pick-up of the model relays, in per unit of the setting: between the
#: 1.05 x "no trip within 2 h" and 1.2 x "trip within 2 h" limits of
#: IEC 60947-4-1 (midpoint chosen; common practice, no source).
RELAY_PICKUP_PU = 1.125

#: Multiple of the setting at which the trip class is defined (IEC 60947-4-1).
CLASS_TEST_MULTIPLE = 7.2

#: Cooling time constant of a stopped (de-energised) motor, in multiples of its heating
#: time constant while running: no fan air at standstill.  Common practice puts it at
#: 2 to 4 x; 3 chosen (common practice, no source).
STANDSTILL_COOLING_RATIO = 3.0

#: A cycle whose largest line current is below this share of FLA carries no motor
#: current: the motor is taken as stopped and cooling (our choice, no source).
DEENERGISED_PU = 0.05

#: Stretch at each end of the capture read for the pre-event load and the last steady
#: current [s] (our choice, no source).
EDGE_WINDOW_S = 1.0

#: The heating current of an edge stretch counts as steady when its largest and smallest
#: per-cycle values differ by at most this factor (our choice, no source).
STEADY_RATIO = 1.15

#: A pre-event heating current above this multiple of the service-factor current is not
#: a running load (a start or a stall under way): the initial state is then cold
#: (our choice, no source).
PRE_EVENT_MAX_PU = 1.5

INITIAL_STATES = ("capture", "cold", "hot")

#: Positive-sequence impedance V1/I1, per unit of the rated impedance, above which the rotor is
#: taken as running near its rated slip (full K): a motor drawing more than 2 x FLA of
#: positive-sequence current at rated voltage is not (our choice, no source).  Between the
#: locked-rotor impedance FLA / I_LR and this value the weight goes linearly from 1 to K.
RUNNING_Z1_PU = 0.5


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
    from scipy.signal import lfilter  # imported where used: importing scipy.signal costs about 1 s (issue 10 item 5)

    # exact discretisation: theta_n = a theta_{n-1} + (1 - a) u_n
    y, _ = lfilter([1.0 - a], [1.0, -a], u, zi=[a * theta0])
    return y


def first_order_state_varying(
    u: np.ndarray, dt_s: float | np.ndarray, tau_s: np.ndarray, theta0: float = 0.0
) -> np.ndarray:
    """`first_order_state` with a time constant per step (``tau_s`` an array of ``u``'s length) [s].

    Solved exactly, stretch by stretch of constant ``tau_s`` (one `scipy.signal.lfilter`
    call per stretch; the stretches are the motor's state changes, few).  ``dt_s`` may be an
    array too (a step length per step: a time-stamp gap is one long step, `capture_thermal`);
    the stretches then are those of constant ``tau_s`` and ``dt_s``.

    References
    ----------
    .. [1] IEC 60255-149:2013, clause 5 (first-order thermal model).
    """
    u = np.asarray(u, dtype=float)
    tau = np.broadcast_to(np.asarray(tau_s, dtype=float), u.shape)
    if u.size == 0:
        return u.copy()
    step = np.broadcast_to(np.asarray(dt_s, dtype=float), u.shape)
    diff = tau[1:] != tau[:-1]
    if np.ndim(dt_s):
        diff = diff | (step[1:] != step[:-1])
    change = np.flatnonzero(np.r_[True, diff])
    ends = np.r_[change[1:], u.size]
    out = np.empty_like(u)
    th = float(theta0)
    for a, b in zip(change, ends, strict=True):
        out[a:b] = first_order_state(u[a:b], float(step[a]), float(tau[a]), th)
        th = float(out[b - 1])
    return out


def time_to_level_s(u: float, theta: float, tau_s: float, level: float) -> float | None:
    """Time [s] for the state to go from ``theta`` to ``level`` at constant input ``u``.

    0 when already there; None when ``u`` never takes it there (``u <= level``).

    References
    ----------
    .. [1] IEC 60255-149:2013, clause 5: t = tau ln((u - theta) / (u - level)).
    """
    if theta >= level:
        return 0.0
    if not u > level:
        return None
    return float(tau_s * math.log((u - theta) / (u - level)))  # IEC 60255-149 cl. 5


def crossing_time_s(
    t_end_s: np.ndarray, u: np.ndarray, theta: np.ndarray, dt_s: float | np.ndarray, tau_s: float, level: float,
    theta0: float = 0.0
) -> float | None:
    """First instant the state reaches ``level``, solved exactly inside its step.

    Returns seconds (on the ``t_end_s`` axis) or None when never reached.  ``dt_s``: the step
    length, or one per step.
    """
    hit = np.flatnonzero(theta >= level)
    if hit.size == 0:
        return None
    n = int(hit[0])
    if np.ndim(dt_s):
        dt_s = float(np.asarray(dt_s, dtype=float)[n])
    prev = theta0 if n == 0 else float(theta[n - 1])
    if prev >= level:
        return float(t_end_s[n] - dt_s) if n > 0 else float(t_end_s[0] - dt_s)
    # inside step n, theta(t) = u + (prev - u) exp(-t/tau)  (IEC 60255-149 cl. 5)
    dt_in = tau_s * math.log((u[n] - prev) / (u[n] - level))
    return float(t_end_s[n] - dt_s + min(dt_in, dt_s))


def class_tau_s(trip_class: str, pickup_pu: float = RELAY_PICKUP_PU, trip_at_7_2x_s: float | None = None) -> float:
    """Time constant [s] of our model relay of an IEC 60947-4-1 trip class.

    Chosen so that the cold trip time at 7.2 x setting equals
    `TRIP_CLASS_TARGET_S` (inside the class band, IEC 60947-4-1), or
    ``trip_at_7_2x_s`` when given (a relay elsewhere in the band).
    """
    if trip_class not in TRIP_CLASS_TARGET_S:
        raise InvalidParameterError(f"{trip_class=} must be one of {list(TRIP_CLASS_TARGET_S)}")
    m2 = CLASS_TEST_MULTIPLE**2
    t72 = TRIP_CLASS_TARGET_S[trip_class] if trip_at_7_2x_s is None else float(trip_at_7_2x_s)
    # invert IEC 60255-149 cl. 5 with Ip = 0: tau = t / ln(I^2 / (I^2 - k^2))
    return t72 / math.log(m2 / (m2 - pickup_pu**2))


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
    initial_state : {"capture", "cold", "hot"}
        ``"capture"``: steady state at the pre-event running current when the
        capture begins with the motor running at a steady load, else cold (said
        in the notes); ``hot_start`` true means ``"hot"``.
    standstill_cooling_ratio : float
        Cooling time constant of the stopped motor over its heating time constant
        (common practice 2-4, no source).
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
    initial_state: str = setting(
        "capture", "initial thermal state: 'capture' (steady state at the capture's pre-event running current when it "
        "begins with the motor running, else cold), 'cold' or 'hot' (hot_start = true also means hot)", choices=INITIAL_STATES)
    standstill_cooling_ratio: float = setting(
        STANDSTILL_COOLING_RATIO, "cooling time constant of the stopped motor over its running heating time constant [-]; "
        "3 is common practice (2-4), no source", minimum=1.0)

    def __post_init__(self) -> None:
        check_fields(self)  # one bound per field, written above; met by the library, recipes and CLI alike
        if self.hot_start and self.initial_state == "cold":
            raise InvalidParameterError("hot_start = true contradicts initial_state = 'cold'")

    @property
    def start_state(self) -> str:
        """The initial state in effect: ``"hot"`` when ``hot_start``, else ``initial_state``."""
        return "hot" if self.hot_start else self.initial_state


@dataclasses.dataclass(frozen=True)
class ThermalResult:
    """Outcome of `assess_thermal`.

    ``track`` has one row per cycle: ``t_s``, ``i_max_line_a`` (largest line
    RMS), ``i1_a``, ``i2_a``, ``i_eq_pu`` (per unit FLA; K applied while
    running, 1 at standstill), ``i_winding_max_pu`` (hottest winding, per unit
    of its rated current), ``heating_pu`` (the model's input: the larger of the
    two), ``standstill`` (rotor not turning: stalled or de-energised),
    ``theta_motor_pct`` (thermal capacity used, 100 % = steady state at
    service-factor current) and one ``theta_class<N>_pct`` per relay class
    (100 % = trip).
    """

    track: pd.DataFrame
    summary: dict
    #: The figures a later file of the same site needs to carry this file's end state into its own
    #: start (`carry_states`): ``theta0_pu2``, ``theta_end_pu2`` (motor model, (pu FLA)^2),
    #: ``free_decay_end`` (the share of the initial state left at the end, `free_response_decay`),
    #: ``off_at_start``, ``off_at_end``, ``start_heating_pu2`` (median heating^2 of the first
    #: `EDGE_WINDOW_S` while energised, None when de-energised there), ``motor_tau_s``,
    #: ``cooling_ratio``, ``sf``, ``t_end_s``.  Kept out of ``summary`` (and result.json).
    carry: dict = dataclasses.field(default_factory=dict)


def free_response_decay(off: np.ndarray, dt_s: float, tau_s: float, cooling_ratio: float) -> np.ndarray:
    """Share of the initial state still present at the end of each step, ``exp(-sum dt / tau_n)``.

    The model is linear in its initial state: a trace started from ``theta0`` is the trace started
    from ``theta0'`` plus ``(theta0 - theta0') * decay`` (superposition of the free response of the
    first-order equation).  ``tau_n`` is ``tau_s`` while energised and ``cooling_ratio * tau_s``
    where ``off`` (de-energised, cooling without fan air).

    References
    ----------
    .. [1] IEC 60255-149:2013, clause 5 (first-order thermal model; its free response is
       ``theta0 exp(-t / tau)``).
    """
    off = np.asarray(off, bool)
    if not (np.all(np.asarray(dt_s) > 0) and tau_s > 0 and cooling_ratio > 0):
        raise InvalidParameterError(f"{dt_s=}, {tau_s=} and {cooling_ratio=} must be positive")
    rate = np.where(off, 1.0 / (tau_s * cooling_ratio), 1.0 / tau_s)
    return np.exp(-np.cumsum(rate * dt_s))


def cooled_state(theta: float, gap_s: float, tau_s: float, target: float = 0.0) -> float:
    """State after ``gap_s`` seconds at constant input ``target`` from ``theta`` (cooling when ``target`` is 0).

    ``theta(t) = target + (theta - target) exp(-t / tau)`` (IEC 60255-149:2013, clause 5, the
    first-order thermal model at constant current; exponential cooling for ``target = 0``).
    """
    if not (gap_s >= 0 and tau_s > 0):
        raise InvalidParameterError(f"{gap_s=} must be 0 or more and {tau_s=} positive")
    return float(target + (theta - target) * math.exp(-gap_s / tau_s))


def carry_states(theta0: np.ndarray, theta_end: np.ndarray, free_decay_end: np.ndarray, gap_s: np.ndarray,
                 gap_target: np.ndarray, gap_tau_s: np.ndarray, linked: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Initial and end states of consecutive files with the state carried from file to file.

    File ``k`` (``linked[k]`` true) starts from file ``k-1``'s carried end state, moved over the
    ``gap_s[k]`` between them towards ``gap_target[k]`` with ``gap_tau_s[k]`` (`cooled_state`);
    its end state is its own end state plus the change of initial state times ``free_decay_end[k]``
    (superposition, `free_response_decay`): exact for the first-order model.  An unlinked file
    keeps its own initial state.  All arrays per file, in time order; states in (pu)^2.

    Returns
    -------
    (ndarray, ndarray)
        Carried initial and end states per file.
    """
    theta0 = np.asarray(theta0, float)
    n = theta0.size
    th_end = np.asarray(theta_end, float)
    dec = np.asarray(free_decay_end, float)
    start = theta0.copy()
    end = th_end.copy()
    for k in range(n):  # one step per file (few), not per sample
        if k > 0 and bool(linked[k]):
            start[k] = cooled_state(end[k - 1], float(gap_s[k]), float(gap_tau_s[k]), float(gap_target[k]))
            end[k] = th_end[k] + (start[k] - theta0[k]) * dec[k]  # linear in the initial state
    return start, end


def _edge_heating(u: np.ndarray, t_s: np.ndarray, first: bool, stop: np.ndarray | None = None) -> tuple[float | None, str]:
    """Median of ``u`` over the first (or last) `EDGE_WINDOW_S` and whether it is steady; None with the reason when not."""
    if u.size == 0:
        return None, "no cycles"
    if first:
        sel = t_s <= t_s[0] + EDGE_WINDOW_S
        if stop is not None and stop.any():
            sel &= np.arange(u.size) < int(np.argmax(stop))  # before the first standstill
    else:
        sel = t_s >= t_s[-1] - EDGE_WINDOW_S
    v = u[sel]
    if v.size == 0:
        return None, "no running stretch"
    lo, hi = float(np.min(v)), float(np.max(v))
    if lo <= 0 or hi > STEADY_RATIO**2 * lo:  # u is a current squared
        return None, "the current is not steady there"
    return float(np.median(v)), ""


def _models(
    u_motor: np.ndarray, u_relay: np.ndarray, off: np.ndarray, t_end: np.ndarray, dt: float | np.ndarray, *,
    motor_tau_s: float, cooling_ratio: float, sf: float, theta0_motor: float, theta0_relay: float,
    relay_taus: dict[str, float],
) -> dict:
    """Run the motor model and the relay models over the capture and project them past its end."""
    tau_m = np.where(off, motor_tau_s * cooling_ratio, motor_tau_s)
    theta_m = first_order_state_varying(u_motor, dt, tau_m, theta0_motor)
    level_m = sf**2
    out: dict = {"theta_motor": theta_m, "relays": {}}
    hit = np.flatnonzero(theta_m >= level_m)
    out["motor_100pct_s"] = float(t_end[hit[0]]) if hit.size else None
    level = RELAY_PICKUP_PU**2
    for cls, tau_c in relay_taus.items():
        th = (first_order_state_varying(u_relay, dt, np.full(u_relay.shape, tau_c), theta0_relay) if np.ndim(dt)
              else first_order_state(u_relay, dt, tau_c, theta0_relay))
        out["relays"][cls] = {"theta": th, "trip_s": crossing_time_s(t_end, u_relay, th, dt, tau_c, level, theta0_relay)}
    return out


def _project(models: dict, u_motor_end: float | None, u_relay_end: float | None, t_last: float, *, motor_tau_s: float, sf: float,
             relay_taus: dict[str, float]) -> dict:
    """Times past the end of the capture [s, capture axis] at the last steady heating (None = never at that current)."""
    out: dict = {"motor_100pct_s": None, "relays": {}}
    if u_motor_end is not None and models["motor_100pct_s"] is None:
        dt_m = time_to_level_s(u_motor_end, float(models["theta_motor"][-1]), motor_tau_s, sf**2)
        out["motor_100pct_s"] = None if dt_m is None else t_last + dt_m
    for cls, tau_c in relay_taus.items():
        r = models["relays"][cls]
        if u_relay_end is None or r["trip_s"] is not None:
            out["relays"][cls] = None
            continue
        dt_r = time_to_level_s(u_relay_end, float(r["theta"][-1]), tau_c, RELAY_PICKUP_PU**2)
        out["relays"][cls] = None if dt_r is None else t_last + dt_r
    return out


def assess_thermal(
    cycles: pd.DataFrame,
    fla_a: float,
    service_factor: float = 1.0,
    locked_rotor_a: float | None = None,
    connection: str = "star",
    params: ThermalParams | None = None,
    standstill: np.ndarray | None = None,
    locked_rotor_range_a: tuple[float, float] | None = None,
    rated_voltage_v: float | None = None,
    gap_spans_s: list[tuple[float, float]] | None = None,
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
    standstill : ndarray of bool, optional
        Per cycle: the rotor stands still while energised (a stall, from the
        detectors).  There the negative-sequence weight is 1, not K.  Absent:
        K is applied to every energised cycle (said in the notes).
    locked_rotor_range_a : (float, float), optional
        The range the locked-rotor current may lie in (NEMA code letter) [A],
        for the sensitivity of K.
    rated_voltage_v : float, optional
        Rated line-to-line voltage [V].  With it and a ``V1`` column the
        weight goes from K to 1 as the positive-sequence impedance V1/I1 falls
        from `RUNNING_Z1_PU` to the locked-rotor impedance FLA / I_LR (a
        decelerating rotor, before a stall is detected).
    gap_spans_s : list of (float, float), optional
        The time-stamp gaps that split the analysis (`waveforms.segments.gap_spans_s`) [s].  A
        row lying wholly inside one (the engine's one row for the gap,
        `waveforms.measure.engine.gap_marker`) is one step of its own length, the motor taken as
        de-energised and cooling there.

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
    t_s = cycles["t_s"].to_numpy(float)
    t_end = cycles["t_end_s"].to_numpy(float) if "t_end_s" in cycles else t_s
    dur = np.diff(cycles[["t_start_s", "t_end_s"]].to_numpy(float), axis=1)[:, 0] if "t_start_s" in cycles else np.diff(t_end, prepend=t_end[0])
    dt = float(np.nanmedian(dur)) if dur.size and np.isfinite(np.nanmedian(dur)) and np.nanmedian(dur) > 0 else 0.02
    # a time-stamp gap is one row of the cycle table spanning the gap (waveforms.measure.engine.gap_marker): one step of
    # its own length, cooling there as de-energised (nothing was recorded; assumed stopped, our choice, no source)
    long_step = np.zeros(len(cycles), bool)
    if gap_spans_s and "t_start_s" in cycles:
        t0 = cycles["t_start_s"].to_numpy(float)
        for g0, g1 in gap_spans_s:
            long_step |= (t0 >= g0 - 1e-9) & (t_end <= g1 + 1e-9)
        long_step &= dur > dt
    if long_step.any():
        dt = np.where(long_step, dur, dt)
    i_rms = cycles[lines].to_numpy(float)
    i_max = np.nanmax(np.where(np.isfinite(i_rms), i_rms, -np.inf), axis=1)
    i_max = np.where(np.isfinite(i_max), i_max, np.nan)
    off = ~(np.nan_to_num(i_max, nan=0.0) >= DEENERGISED_PU * fla_a)  # no motor current: stopped, cooling
    off |= long_step
    if long_step.any():
        notes.append(f"{int(long_step.sum())} time-stamp gap(s) ({float(np.sum(dur[long_step])):.6g} s): nothing recorded there, "
                     "the motor taken as de-energised and cooling at standstill over the gap's whole duration (our "
                     "assumption, no source: a motor that ran through the gap would be warmer)")
    still = np.zeros(len(cycles), bool) if standstill is None else np.asarray(standstill, bool).copy()
    if still.shape != (len(cycles),):
        raise InvalidParameterError(f"standstill has shape {still.shape}, expected ({len(cycles)},) (one value per cycle)")
    still &= ~off
    if standstill is None:
        notes.append("no standstill information (no stall detection): the running negative-sequence weight K applied to every cycle")

    lr_pu = (locked_rotor_a / fla_a) if locked_rotor_a else 6.0
    if params.k_neg is None:
        k_neg = negative_sequence_k(lr_pu)
        notes.append(f"negative-sequence weight K = 175 / {lr_pu:.2f}^2 = {k_neg:.2f} while running: a rule of thumb "
                     "(IEEE C37.96 motor protection guide, from memory; no clause cited)")
    else:
        k_neg = float(params.k_neg)
    if still.any():
        notes.append("at standstill (stalled, energised) the rotor sees the positive- and negative-sequence fields alike at "
                     "supply frequency, with the same locked-rotor resistance: heating I1^2 + I2^2 there (K = 1), "
                     "not the running weight")
    have_seq = "I1" in cycles and "I2" in cycles
    if have_seq:
        i1 = cycles["I1"].to_numpy(float)
        i2 = cycles["I2"].to_numpy(float)
    else:
        i1 = np.full(len(cycles), np.nan)
        i2 = np.full(len(cycles), np.nan)
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

    run_w = np.where(still, 0.0, 1.0)  # 1 = running near rated slip (full K), 0 = standstill (K = 1)
    if have_seq and rated_voltage_v and "V1" in cycles and lr_pu > 1.0 / RUNNING_Z1_PU:
        with np.errstate(divide="ignore", invalid="ignore"):
            z1 = (cycles["V1"].to_numpy(float) / (float(rated_voltage_v) / math.sqrt(3.0))) / (i1 / fla_a)
        z_lr = 1.0 / lr_pu
        w = np.clip((z1 - z_lr) / (RUNNING_Z1_PU - z_lr), 0.0, 1.0)
        run_w = np.where(np.isfinite(w), np.minimum(run_w, w), run_w)
        if (run_w[~still & ~off] < 1.0).any():
            notes.append(f"where the positive-sequence impedance V1/I1 fell below {RUNNING_Z1_PU:g} pu (the rotor slowing towards "
                         f"standstill, locked rotor at {z_lr:.3f} pu) the negative-sequence weight is taken between K and 1, "
                         "linearly in V1/I1 (our choice, no source)")

    def heating_sq(k: float) -> tuple[np.ndarray, np.ndarray]:
        if have_seq:
            k_cyc = 1.0 + (k - 1.0) * run_w  # standstill: both sequences heat alike, K = 1 (module docstring)
            ieq_pu = np.sqrt(i1**2 + k_cyc * i2**2) / fla_a  # I_eq^2 = I1^2 + K I2^2 (IEEE C37.96, from memory)
        else:
            ieq_pu = i_max / fla_a
        h = np.fmax(np.nan_to_num(ieq_pu, nan=0.0), np.nan_to_num(i_wind_pu, nan=0.0))
        return ieq_pu, h

    i_eq_pu, heating = heating_sq(k_neg)
    u = heating**2
    setting_a = params.relay_setting_a or fla_a
    # the relays see the largest line current (an overload relay measures line current)
    u_relay = np.nan_to_num(i_max / setting_a, nan=0.0) ** 2
    sf = float(service_factor)

    # -- initial state ---------------------------------------------------------------
    start = params.start_state
    initial: dict = {"mode": start}
    if start == "hot":
        th0_m = th0_r = 1.0
        initial["basis"] = "hot: steady state at rated current (1 pu), as asked"
    elif start == "cold":
        th0_m = th0_r = 0.0
        initial["basis"] = "cold: motor at ambient, as asked"
    else:
        th0_m = th0_r = 0.0
        u0, why = _edge_heating(np.where(off, 0.0, u), t_s, True, still | off)
        if off[0]:
            initial["basis"] = ("cold: the capture begins with the motor de-energised (how long it had been stopped is not "
                                "known; cold is the least heat it can hold)")
        elif u0 is None:
            initial["basis"] = f"cold: no steady pre-event running stretch in the first {EDGE_WINDOW_S:g} s ({why})"
        elif math.sqrt(u0) > PRE_EVENT_MAX_PU * sf:
            initial["basis"] = (f"cold: the capture begins at {math.sqrt(u0):.2f} x FLA heating current, not a running load "
                                "(a start or stall under way)")
        else:
            u0r, _ = _edge_heating(np.where(off, 0.0, u_relay), t_s, True, still | off)
            th0_m, th0_r = u0, (u0r if u0r is not None else u0)
            initial["basis"] = (f"from the capture: steady state at the pre-event running heating current {math.sqrt(u0):.2f} x FLA "
                                f"(median of the first {EDGE_WINDOW_S:g} s; the motor assumed to have run at that load for "
                                "several time constants before the capture)")
            initial["pre_event_heating_pu"] = math.sqrt(u0)
    initial["theta_motor_pct"] = 100.0 * th0_m / sf**2
    notes.append(f"initial thermal state {initial['basis']}")
    if off.any():
        notes.append(f"de-energised cycles cool with {params.standstill_cooling_ratio:g} x the heating time constant "
                     "(no fan air at standstill; common practice 2-4 x, no source)")

    relay_taus = {cls: class_tau_s(cls) for cls in params.trip_classes}
    kw = dict(motor_tau_s=params.motor_tau_s, cooling_ratio=params.standstill_cooling_ratio, sf=sf,
              theta0_motor=th0_m, theta0_relay=th0_r)
    base = _models(u, u_relay, off, t_end, dt, relay_taus=relay_taus, **kw)

    # -- projection past the end of the capture -----------------------------------------
    t_last = float(t_end[-1])
    if off[-1]:
        u_end = ur_end = None
        proj_basis = "none: the motor was de-energised at the end of the capture"
    else:
        u_end, why = _edge_heating(u, t_s, False)
        ur_end, _ = _edge_heating(u_relay, t_s, False)
        proj_basis = (f"at the last steady heating current {math.sqrt(u_end):.2f} x FLA (median of the last {EDGE_WINDOW_S:g} s), "
                      "held constant after the capture" if u_end is not None else f"none: {why} in the last {EDGE_WINDOW_S:g} s")
    proj = _project(base, u_end, ur_end, t_last, relay_taus=relay_taus, motor_tau_s=params.motor_tau_s, sf=sf)
    projection = {
        "basis": proj_basis, "heating_pu": None if u_end is None else math.sqrt(u_end),
        "relay_current_pu": None if ur_end is None else math.sqrt(ur_end),
        "motor_100pct_s": proj["motor_100pct_s"],
        "motor_steady_state_pct": None if u_end is None else 100.0 * u_end / sf**2,
        "relays": {cls: proj["relays"][cls] for cls in relay_taus},
    }

    # -- sensitivity to the assumptions -----------------------------------------------------
    def motor_case(name: str, value: float, u_case: np.ndarray, tau: float) -> dict:
        m = _models(u_case, u_relay, off, t_end, dt, relay_taus={}, **dict(kw, motor_tau_s=tau))
        p_ = _project(m, None if u_end is None else float(np.median(u_case[t_s >= t_s[-1] - EDGE_WINDOW_S])), None, t_last,
                      relay_taus={}, motor_tau_s=tau, sf=sf)
        return {"parameter": name, "value": value, "capacity_used_pct": float(100.0 * np.max(m["theta_motor"]) / sf**2),
                "motor_100pct_s": m["motor_100pct_s"], "motor_100pct_projected_s": p_["motor_100pct_s"]}

    sens: list[dict] = []
    for f in (0.5, 2.0):
        sens.append(motor_case("motor_tau_s", params.motor_tau_s * f, u, params.motor_tau_s * f))
    if have_seq:
        ks = [("k_neg", k_neg * f) for f in (0.5, 2.0)]
        if params.k_neg is None and locked_rotor_range_a is not None:
            lo, hi = (float(x) for x in locked_rotor_range_a)
            if math.isfinite(hi) and hi > lo > fla_a:
                ks += [("locked_rotor_a", lo), ("locked_rotor_a", hi)]
        for name, val in ks:
            k_case = val if name == "k_neg" else negative_sequence_k(val / fla_a)
            sens.append(motor_case(name, val, heating_sq(k_case)[1] ** 2, params.motor_tau_s))
    for cls in relay_taus:
        band = TRIP_CLASS_BAND_S.get(cls)
        if band is None:
            continue
        for edge in band:
            tau_e = class_tau_s(cls, trip_at_7_2x_s=edge)
            m = _models(u, u_relay, off, t_end, dt, relay_taus={cls: tau_e}, **kw)
            p_ = _project(m, None, ur_end, t_last, relay_taus={cls: tau_e}, motor_tau_s=params.motor_tau_s, sf=sf)
            sens.append({"parameter": f"class{cls}_trip_at_7_2x_s", "value": float(edge), "trip_s": m["relays"][cls]["trip_s"],
                         "trip_projected_s": p_["relays"][cls]})

    track = pd.DataFrame({
        "t_s": t_s, "i_max_line_a": i_max, "i1_a": i1, "i2_a": i2,
        "i_eq_pu": i_eq_pu, "i_winding_max_pu": i_wind_pu, "heating_pu": heating, "standstill": still | off,
    })
    track["theta_motor_pct"] = 100.0 * base["theta_motor"] / sf**2
    relays = {}
    for cls, tau_c in relay_taus.items():
        track[f"theta_class{cls}_pct"] = 100.0 * base["relays"][cls]["theta"] / RELAY_PICKUP_PU**2
        relays[cls] = {
            "tau_s": tau_c, "trip_s": base["relays"][cls]["trip_s"], "pickup_pu": RELAY_PICKUP_PU,
            "trip_at_7_2x_cold_s": float(trip_time_s(CLASS_TEST_MULTIPLE, tau_c, RELAY_PICKUP_PU)),
            "band_at_7_2x_s": list(TRIP_CLASS_BAND_S[cls]) if cls in TRIP_CLASS_BAND_S else None,
            "trip_projected_s": projection["relays"][cls],
        }
    valid = np.isfinite(i_max)
    per_line = {}
    for col in lines:
        v = cycles[col].to_numpy(float)
        ok = np.isfinite(v)
        per_line[col[1].upper()] = {
            "max_current_pu": float(np.max(v[ok]) / fla_a) if ok.any() else None,
            "time_above_fla_s": float(np.sum(dur[ok & (np.nan_to_num(v) > fla_a)])),
        }
    summary = {
        "fla_a": fla_a, "service_factor": sf, "connection": connection, "k_neg": k_neg,
        "motor_tau_s": params.motor_tau_s, "relay_setting_a": setting_a, "hot_start": params.hot_start,
        "initial_state": initial, "standstill_cooling_ratio": params.standstill_cooling_ratio,
        "standstill_s": float(np.sum(dur[still])), "deenergised_s": float(np.sum(dur[off])),
        "time_above_fla_s": float(np.sum(dur[valid & (i_max > fla_a)])),
        "time_above_sf_current_s": float(np.sum(dur[valid & (i_max > fla_a * sf)])),
        "max_current_pu": float(np.nanmax(i_max) / fla_a) if valid.any() else None,
        "max_heating_pu": float(np.max(heating)) if heating.size else None,
        "thermal_capacity_used_pct": float(np.max(track["theta_motor_pct"])) if len(track) else None,
        "thermal_capacity_end_pct": float(track["theta_motor_pct"].iloc[-1]) if len(track) else None,
        "motor_100pct_s": base["motor_100pct_s"],
        "lines": per_line,
        "relays": relays,
        "projection": projection,
        "sensitivity": sens,
        "notes": notes,
    }
    energised = ~off & (t_s <= t_s[0] + EDGE_WINDOW_S)
    carry = {
        "theta0_pu2": float(th0_m), "theta_end_pu2": float(base["theta_motor"][-1]),
        "free_decay_end": float(free_response_decay(off, dt, params.motor_tau_s, params.standstill_cooling_ratio)[-1]),
        "off_at_start": bool(off[0]), "off_at_end": bool(off[-1]),
        "start_heating_pu2": float(np.median(u[energised])) if energised.any() else None,
        "motor_tau_s": float(params.motor_tau_s), "cooling_ratio": float(params.standstill_cooling_ratio), "sf": sf,
        "t_end_s": t_last, "initial_mode": start,
    }
    return ThermalResult(track=track, summary=summary, carry=carry)
