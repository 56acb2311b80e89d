"""The declared supply voltage: one rule for the dip/swell events and the aggregation flags.

The declared voltage ``Udin`` of IEC 61000-4-30 is the supply's, never the
motor's rating (a 460 V motor runs on a 480 V system, a 575 V motor on 600 V,
a 4000 V motor on 4160 V: NEMA MG 1 utilization voltages against ANSI C84.1
system voltages).  In order of precedence it is:

1. ``"user"``: given for this analysis (``--declared-voltage``);
2. ``"capture"``: the capture's own nominal voltage (file metadata, the
   channel mapping, or the reading option ``--nominal-voltage``);
3. ``"inferred"``: the standard nominal system voltage nearest the measured
   median line-to-line voltage, from `STANDARD_SYSTEM_VOLTAGES_V` for the
   capture's nominal frequency, when it lies within `INFERENCE_BAND` of it;
   an inference, said so wherever it is used;
4. ``"capture median"``: the measured median itself, when no standard value
   is near (then a dip or swell is judged against what the capture mostly
   shows, not against what the supply should be).

References
----------
.. [1] IEC 60038:2009, IEC standard voltages, Table 1 (three-phase a.c.
   systems 100-1000 V: 230/400, 400/690, 1000 V; 120/208, 240, 277/480, 480,
   347/600, 600 V in the 60 Hz column) and Table 3 (1-35 kV: 3.3, 6.6, 11, 22,
   33 kV; 4.16, 12.47, 13.2, 13.8, 24.94, 34.5 kV) -- values from memory.
.. [2] ANSI C84.1, Electric Power Systems and Equipment - Voltage Ratings
   (60 Hz): nominal system voltages 208Y/120, 240, 480Y/277, 480, 600Y/347,
   600, 2400, 4160Y/2400, 4160, 4800, 6900, 12470Y, 13200, 13800 V; motor
   utilization (nameplate) voltages 200, 230, 460, 575, 2300, 4000, 6600,
   13200 V -- values from memory.
.. [3] IEC 61000-4-30:2015, 5.4 (dips and swells relative to the declared
   input voltage Udin).
"""

from __future__ import annotations

import dataclasses
import math

#: Standard nominal line-to-line system voltages [V] by nominal frequency [Hz], and the table they come from.
STANDARD_SYSTEM_VOLTAGES_V: dict[float, tuple[tuple[float, ...], str]] = {
    50.0: ((400.0, 690.0, 1000.0, 3300.0, 6600.0, 11000.0, 22000.0, 33000.0),
           "IEC 60038 Tables 1 and 3, 50 Hz series (from memory)"),
    60.0: ((208.0, 240.0, 480.0, 600.0, 2400.0, 4160.0, 4800.0, 6900.0, 12470.0, 13200.0, 13800.0),
           "ANSI C84.1 nominal system voltages / IEC 60038 Tables 1 and 3, 60 Hz series (from memory)"),
}

#: The measured voltage must lie within this share of the nearest standard value for the inference
#: (IEC 60038 puts supply voltages within +/-10 % of nominal; from memory).
INFERENCE_BAND = 0.10

SOURCES = ("user", "capture", "inferred", "capture median")


@dataclasses.dataclass(frozen=True)
class DeclaredVoltage:
    """A declared line-to-line voltage and where it came from.

    Attributes
    ----------
    ll_v : float or None
        Line-to-line RMS [V]; None when nothing is known (no voltage measured).
    source : str
        One of `SOURCES`.
    basis : str
        One sentence saying how it was set (quoted in the notes).
    """

    ll_v: float | None
    source: str
    basis: str

    @property
    def inferred(self) -> bool:
        return self.source in ("inferred", "capture median")


def nearest_standard_voltage(measured_ll_v: float, frequency_hz: float | None) -> tuple[float, str] | None:
    """The standard nominal system voltage nearest ``measured_ll_v`` [V] and its table, or None.

    None when no table value lies within `INFERENCE_BAND` (relative) of it.

    Examples
    --------
    >>> nearest_standard_voltage(508.0, 60.0)[0]
    480.0
    >>> nearest_standard_voltage(395.0, 50.0)[0]
    400.0
    >>> nearest_standard_voltage(300.0, 60.0) is None
    True
    """
    if not (measured_ll_v and math.isfinite(measured_ll_v) and measured_ll_v > 0):
        return None
    key = 50.0 if frequency_hz == 50.0 else 60.0 if frequency_hz == 60.0 else None
    tables = [STANDARD_SYSTEM_VOLTAGES_V[key]] if key else list(STANDARD_SYSTEM_VOLTAGES_V.values())
    best: tuple[float, str] | None = None
    for values, name in tables:
        for v in values:
            if best is None or abs(measured_ll_v - v) < abs(measured_ll_v - best[0]):
                best = (v, name)
    if best is None or abs(measured_ll_v / best[0] - 1.0) > INFERENCE_BAND:
        return None
    return best


def resolve_declared_voltage(
    user_ll_v: float | None, capture_ll_v: float | None, measured_ll_v: float | None, frequency_hz: float | None,
) -> DeclaredVoltage:
    """The declared line-to-line voltage by the rule of the module docstring (never the motor's rating).

    Examples
    --------
    No declared voltage: the standard system voltage nearest the measured
    508 V is 480 V (ANSI C84.1), marked as an inference; a user's value wins:

    >>> d = resolve_declared_voltage(None, None, 508.0, 60.0)
    >>> print(d.ll_v, d.source)
    480.0 inferred
    >>> print(resolve_declared_voltage(460.0, 480.0, 508.0, 60.0).source)
    user
    """
    if user_ll_v:
        return DeclaredVoltage(float(user_ll_v), "user", f"declared voltage {user_ll_v:g} V line-to-line, given by the user")
    if capture_ll_v:
        return DeclaredVoltage(float(capture_ll_v), "capture",
                               f"declared voltage {capture_ll_v:g} V line-to-line, the capture's nominal voltage")
    if measured_ll_v is None or not math.isfinite(measured_ll_v) or measured_ll_v <= 0:
        return DeclaredVoltage(None, "capture median", "no declared voltage and no voltage measured")
    near = nearest_standard_voltage(measured_ll_v, frequency_hz)
    if near is not None:
        v, table = near
        return DeclaredVoltage(v, "inferred",
                               f"no declared voltage: {v:g} V line-to-line inferred, the standard nominal system voltage "
                               f"nearest the measured median {measured_ll_v:.1f} V ({table}); give --declared-voltage to set it")
    return DeclaredVoltage(float(measured_ll_v), "capture median",
                           f"no declared voltage and no standard system voltage within {100 * INFERENCE_BAND:.0f} % of the "
                           f"measured median {measured_ll_v:.1f} V line-to-line: the median used as reference")


#: Urms(1/2) values below this share of the channels' 95th percentile are a de-energised or
#: collapsed supply, left out of the measured median (our choice, no source).
ENERGISED_SHARE = 0.5


def measured_ll_v(values_v, reference: str) -> float | None:
    """Median line-to-line voltage [V] of Urms(1/2) (or one-cycle RMS) values of the phase-voltage channels.

    ``reference`` "LN" scales by sqrt(3) (balanced-supply equivalent), "LL" takes the values as
    they are.  Values under `ENERGISED_SHARE` of the 95th percentile are left out.  None when
    there is nothing to measure.

    Examples
    --------
    Line-to-neutral values are scaled by sqrt(3): 230 V -> 398.4 V:

    >>> print(round(measured_ll_v([230.0, 231.0, 229.0], "LN"), 1), measured_ll_v([400.0, 401.0, 399.0], "LL"))
    398.4 400.0
    """
    import numpy as np

    if isinstance(values_v, (list, tuple)) and values_v and np.ndim(values_v[0]) == 1:
        cols = [np.asarray(c, dtype=float) for c in values_v]  # one array per channel: no 2-D copy
    else:
        cols = [np.asarray(values_v, dtype=float).ravel()]
    # the finite values, in an array of our own: the order statistics below may reorder it in place
    # (the percentile and the median do not depend on the order; memory on hour-long tables, issue 10)
    v = np.concatenate([c[np.isfinite(c)] for c in cols]) if len(cols) > 1 else cols[0][np.isfinite(cols[0])]
    if v.size == 0:
        return None
    top = float(np.percentile(v, 95, overwrite_input=True))
    if not top > 0:
        return None
    sel = v[v >= ENERGISED_SHARE * top]
    del v
    med = float(np.median(sel, overwrite_input=True))
    return med * (math.sqrt(3.0) if reference == "LN" else 1.0)
