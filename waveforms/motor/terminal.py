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
terminals (or the starter), as it usually is.

References
----------
.. [1] NEMA MG 1, Motors and Generators, 12.44 (variation from rated voltage) -- from memory.
.. [2] IEC 60034-1, Rotating electrical machines - Rating and performance, 7.3 (zones A and B) -- from memory.
"""

from __future__ import annotations

import math

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
