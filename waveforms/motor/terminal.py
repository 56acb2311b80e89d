"""The motor's terminal voltage against the motor's own tolerance band (not the supply's declared voltage).

A motor's rated voltage is a utilization voltage below the system's nominal
one (460 V motors on 480 V systems, 575 V on 600 V, 4000 V on 4160 V; NEMA
MG 1 against ANSI C84.1), so the supply's dips and swells are judged against
the declared system voltage (`waveforms.measure.declared`) and the terminal
voltage is judged here, separately, against the motor's rating:

- NEMA MG 1 (12.44, from memory): running at rated frequency with the
  voltage within +/-10 % of rated;
- IEC 60034-1 (7.3, from memory): zone A +/-5 % of rated voltage (at
  rated frequency), zone B +/-10 %.

The measured value is the median line-to-line Urms(1/2) of the energised
stretch; it is the motor's terminal voltage when the logger is at the motor
terminals (or the starter), as it usually is.  When a cable or feeder lies
between the logger and the motor (`Cable`; the ``cable_*`` detect keys), the
terminal voltage is estimated per cycle as ``V_term = V_logger - Z I``
(phasors, per line; `terminal_ll_phasors`), and that estimate is what the
tolerance check, the NEMA unbalance derating at the motor and the stall
detector's locked-rotor threshold use (`terminal_record`).

References
----------
.. [1] NEMA MG 1, Motors and Generators, 12.44 (variation from rated voltage) -- from memory.
.. [2] IEC 60034-1, Rotating electrical machines - Rating and performance, 7.3 (zones A and B) -- from memory.
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InvalidParameterError

#: NEMA MG 1 voltage tolerance of a running motor, relative to rated (from memory).
NEMA_MG1_BAND = 0.10
#: IEC 60034-1 zone A and zone B voltage limits, relative to rated (from memory).
IEC_60034_ZONE_A = 0.05
IEC_60034_ZONE_B = 0.10


def terminal_voltage_check(measured_ll_v: float, rated_v: float) -> dict:
    """The terminal voltage [V, line-to-line] against the rated voltage ``rated_v`` [V].

    Returns
    -------
    dict
        ``measured_ll_v``, ``rated_v``, ``pct_of_rated``, ``nema_mg1_band_pct``
        ([90, 110]), ``within_nema_mg1``, ``iec_60034_1_zone`` ("A", "B" or
        "outside B") and ``sentence``.

    Examples
    --------
    >>> terminal_voltage_check(508.0, 460.0)["within_nema_mg1"]
    False
    >>> terminal_voltage_check(480.0, 460.0)["iec_60034_1_zone"]
    'A'
    """
    if not (rated_v > 0 and math.isfinite(measured_ll_v) and measured_ll_v > 0):
        raise InvalidParameterError(f"{measured_ll_v=} and {rated_v=} must be positive")
    r = measured_ll_v / rated_v - 1.0
    within = abs(r) <= NEMA_MG1_BAND + 1e-12
    zone = "A" if abs(r) <= IEC_60034_ZONE_A + 1e-12 else "B" if abs(r) <= IEC_60034_ZONE_B + 1e-12 else "outside B"
    pct = 100.0 * measured_ll_v / rated_v
    band = "within" if within else "outside"
    sentence = (f"motor terminal voltage, median {measured_ll_v:.0f} V line-to-line, is {pct:.1f} % of the motor's rated "
                f"{rated_v:g} V: {band} the NEMA MG 1 +/-10 % band; IEC 60034-1 "
                + (f"zone {zone}" if zone != "outside B" else "outside zone B (+/-10 %)"))
    return {"measured_ll_v": float(measured_ll_v), "rated_v": float(rated_v), "pct_of_rated": pct,
            "nema_mg1_band_pct": [100.0 * (1 - NEMA_MG1_BAND), 100.0 * (1 + NEMA_MG1_BAND)], "within_nema_mg1": bool(within),
            "iec_60034_1_zone": zone, "sentence": sentence}


# -- the voltage at the motor when the logger is not at its terminals ------------------------------------------
class Cable:
    """The series impedance of each line between the logger and the motor, ``Z = R + jX`` [ohm] at the system frequency.

    Parameters
    ----------
    r_ohm, x_ohm : float
        Resistance and reactance per line [ohm] (for a cable: per conductor,
        length x the per-km values).  Equal in the three lines; the cable's
        shunt capacitance and the mutual coupling between lines are neglected
        (short low-voltage motor circuits; common practice, no source).
    basis : str
        How the figures were given, for the record.
    """

    def __init__(self, r_ohm: float, x_ohm: float, basis: str = "") -> None:
        if not (math.isfinite(r_ohm) and math.isfinite(x_ohm) and r_ohm >= 0 and x_ohm >= 0 and r_ohm + x_ohm > 0):
            raise InvalidParameterError(f"cable {r_ohm=} {x_ohm=}: must be non-negative, not both zero [ohm]")
        self.r_ohm, self.x_ohm = float(r_ohm), float(x_ohm)
        self.basis = basis or f"R {self.r_ohm:g} ohm, X {self.x_ohm:g} ohm per line"

    @property
    def z_ohm(self) -> complex:
        return complex(self.r_ohm, self.x_ohm)

    @classmethod
    def from_length(cls, length_m: float, r_ohm_per_km: float, x_ohm_per_km: float) -> Cable:
        """``R = length x r'``, ``X = length x x'``."""
        km = float(length_m) / 1000.0
        return cls(km * r_ohm_per_km, km * x_ohm_per_km,
                   f"{length_m:g} m of cable at {r_ohm_per_km:g} + j{x_ohm_per_km:g} ohm/km per conductor")

    def to_dict(self) -> dict:
        return {"r_ohm": self.r_ohm, "x_ohm": self.x_ohm, "basis": self.basis}


def cable_from_params(params: object) -> Cable | None:
    """The `Cable` that `waveforms.detect.DetectParams` (``cable_*`` keys) describes, or None (logger at the motor)."""
    r, x = getattr(params, "cable_r_ohm", None), getattr(params, "cable_x_ohm", None)
    if r is not None or x is not None:
        return Cable(r or 0.0, x or 0.0)
    length = getattr(params, "cable_length_m", None)
    if length is not None:
        return Cable.from_length(length, params.cable_r_ohm_per_km, params.cable_x_ohm_per_km)  # type: ignore[attr-defined]
    return None


def terminal_ll_phasors(v: np.ndarray, i: np.ndarray, reference: str, cable: Cable) -> np.ndarray:
    """Line-to-line phasors at the motor, ``V_term = V_logger - Z I`` per line (Kirchhoff's voltage law).

    Parameters
    ----------
    v : ndarray (3, n), complex
        The logger's voltage phasors: line-to-neutral Va, Vb, Vc (``reference="LN"``)
        or line-to-line Vab, Vbc, Vca (``"LL"``) [V].
    i : ndarray (3, n), complex
        Line current phasors Ia, Ib, Ic into the motor, on the same angle reference [A].
    reference : {"LN", "LL"}
    cable : Cable

    Returns
    -------
    ndarray (3, n), complex
        ``Vab, Vbc, Vca`` at the motor terminals [V]: ``Vab,term = Vab - Z (Ia - Ib)``.
        With equal impedance in the three lines the sequence networks decouple:
        ``V1,term = V1 - Z I1`` and ``V2,term = V2 - Z I2`` (symmetrical components).

    References
    ----------
    .. [1] Series impedance in each line: Kirchhoff's voltage law; sequence decoupling of a symmetrical
       series impedance (Fortescue; any power-systems text, e.g. Glover, Sarma & Overbye, *Power
       System Analysis and Design*, symmetrical components, from memory).

    Examples
    --------
    100 A at 0.85 power factor lagging from a 277 V (480 V line-to-line) supply through 0.05 + j0.04 ohm:

    >>> import numpy as np
    >>> a = np.exp(-2j * np.pi / 3) ** np.arange(3)
    >>> i = 100 * np.exp(-1j * np.arccos(0.85)) * a
    >>> vt = terminal_ll_phasors((277.0 * a)[:, None], i[:, None], "LN", Cable(0.05, 0.04))
    >>> round(float(abs(vt[0, 0])), 1), round(float(abs(277.0 * (1 - a[1])) - abs(vt[0, 0])), 2)
    (468.8, 11.01)

    The line-to-line drop, 11.01 V, is sqrt(3) x the textbook 6.357 V per line (`approximate_drop_v`).
    """
    v = np.asarray(v, dtype=complex)
    i = np.asarray(i, dtype=complex)
    z = cable.z_ohm
    if reference == "LN":
        vt = v - z * i
        return np.vstack([vt[0] - vt[1], vt[1] - vt[2], vt[2] - vt[0]])
    if reference == "LL":
        return v - z * np.vstack([i[0] - i[1], i[1] - i[2], i[2] - i[0]])
    raise InvalidParameterError(f"{reference=} must be 'LN' or 'LL'")


def approximate_drop_v(i_a: float, pf: float, cable: Cable) -> float:
    """The textbook voltage drop per line, ``dV ~ I (R cos phi + X sin phi)`` [V] (lagging power factor ``pf``).

    The approximate formula of IEEE Std 141 (Red Book), voltage drop chapter (from memory); for the
    line-to-line drop multiply by sqrt(3).  A cross-check of `terminal_ll_phasors`, which is exact for
    the series impedance.

    Examples
    --------
    >>> round(approximate_drop_v(100.0, 0.85, Cable(0.05, 0.04)), 3)
    6.357
    """
    phi = math.acos(pf)
    return float(i_a * (cable.r_ohm * math.cos(phi) + cable.x_ohm * math.sin(phi)))


def terminal_record(v_ll_logger: np.ndarray, v_ll_term: np.ndarray, i1_a: np.ndarray, measured_ll_v: float,
                    cable: Cable) -> dict:
    """What the cable does to the voltage the motor sees: the figures of ``supply_voltage.motor_terminal.cable``.

    Parameters
    ----------
    v_ll_logger, v_ll_term : ndarray (3, n), complex
        Line-to-line phasors at the logger and (estimated) at the motor, per cycle [V].
    i1_a : ndarray (n,)
        Positive-sequence current per cycle [A]; the medians are over the cycles carrying at least half
        its median (the running motor).
    measured_ll_v : float
        The logger's median line-to-line Urms(1/2) [V]; the terminal value is it times the fundamental ratio.

    Returns
    -------
    dict
        ``terminal_ll_v`` (estimated median at the motor), ``drop_pct`` (of the logger's), NEMA
        line-voltage unbalance at the logger and at the motor (``unbalance_nema_pct_logger``,
        ``unbalance_nema_pct_terminal``), ``v2_v1_pct_terminal``, the NEMA MG 1 derating factor at the
        motor, and the cable.
    """
    from ..detect.unbalance import nema_derating_factor  # NEMA MG 1 derating curve (one place)

    ml, mt = np.abs(v_ll_logger), np.abs(v_ll_term)
    i1 = np.asarray(i1_a, dtype=float)
    ok = np.isfinite(ml).all(axis=0) & np.isfinite(mt).all(axis=0) & np.isfinite(i1)
    if ok.any():
        ok &= i1 >= 0.5 * np.nanmedian(i1[ok])
    if not ok.any():
        return {"cable": cable.to_dict(), "terminal_ll_v": None, "note": "no running cycles: terminal voltage not estimated"}

    def nema(m: np.ndarray) -> float:
        avg = m.mean(axis=0)
        return float(np.median(100.0 * np.max(np.abs(m - avg), axis=0) / avg))

    ratio = float(np.median(mt[:, ok].mean(axis=0) / ml[:, ok].mean(axis=0)))
    a = np.exp(2j * np.pi / 3)
    vt = v_ll_term[:, ok]
    v1 = (vt[0] + a * vt[1] + a * a * vt[2]) / 3.0
    v2 = (vt[0] + a * a * vt[1] + a * vt[2]) / 3.0
    u_t = nema(mt[:, ok])
    der = float(nema_derating_factor(u_t))
    return {"cable": cable.to_dict(), "terminal_ll_v": measured_ll_v * ratio, "drop_pct": 100.0 * (1.0 - ratio),
            "unbalance_nema_pct_logger": nema(ml[:, ok]), "unbalance_nema_pct_terminal": u_t,
            "v2_v1_pct_terminal": float(np.median(100.0 * np.abs(v2) / np.abs(v1))),
            "nema_derating_terminal": None if not math.isfinite(der) else float(der)}
