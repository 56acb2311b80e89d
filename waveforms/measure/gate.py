"""Level gate: ratio and unbalance columns are absent where their denominator is (nearly) nothing.

A ratio such as V2/V1 or I2/I1 has a meaning only while the quantity below
the line is there: on a de-energised circuit the "positive sequence" is the
logger's noise (0.15 V on a 460 V system) and its ratio to an equally noisy
negative sequence can be anything (thousands of percent).  `gate_cycles`
blanks every voltage ratio / unbalance column (to NaN) in the cycles whose
positive-sequence voltage is below the voltage gate, and every current ratio /
unbalance / power-factor column in the cycles whose positive-sequence current
is below the current gate, and says why in the ``level_gate`` column.  The
summary statistics and the detectors skip NaN, so those cycles are excluded
from both.

The gates
---------
* Voltage: 10 % of the declared voltage -- the IEC 61000-4-30 (5.5)
  interruption threshold: below it the supply is interrupted and no
  unbalance is defined.  Without a declared voltage, 10 % of the capture's
  99th-percentile positive-sequence voltage (an inference, stated in the
  note).
* Current: 5 % of the nameplate FLA (the detectors' "carries current" level,
  `waveforms.detect.context.DetectParams.energised_frac_fla`; our choice).
  Without a nameplate, 1 % of the capture's largest positive-sequence current
  (far above a logger's noise, below any running motor's magnetising current,
  which is some 20-50 % of FLA while a locked-rotor current is at most about
  8 x FLA; common practice, no source).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

#: IEC 61000-4-30 5.5: interruption threshold, % of the declared voltage
VOLTAGE_GATE_FRAC = 0.10
#: Without a declared voltage: fraction of the capture's 99th-percentile V1 (our inference)
VOLTAGE_GATE_QUANTILE = 0.99
#: With a nameplate: fraction of FLA (as DetectParams.energised_frac_fla; our choice)
CURRENT_GATE_FRAC_FLA = 0.05
#: Without a nameplate: fraction of the capture's largest I1 (common practice, no source)
CURRENT_GATE_FRAC_MAX = 0.01

VOLTAGE_RATIO_COLUMNS = ("V2_V1_pct", "V0_V1_pct", "V_unbal_vuf_pct", "V_unbal_nema_pct", "V_unbal_pvur_pct",
                         "V_unbal_iec_ll_pct")
CURRENT_RATIO_COLUMNS = ("I2_I1_pct", "I0_I1_pct", "I_unbal_vuf_pct", "I_unbal_nema_pct", "I_unbal_pvur_pct")
#: Power factors are P / S: absent when either the voltage or the current is gated out
POWER_RATIO_COLUMNS = ("PF", "DPF", "PFa", "PFb", "PFc")


def voltage_gate_v(cycles: pd.DataFrame, declared_ll_v: float | None) -> tuple[float, str]:
    """(gate on ``V1`` [V], where it comes from); NaN when there is no ``V1`` column.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> cyc = pd.DataFrame({"t_s": [0.01, 0.03], "V1": [230.0, 0.5], "V2": [2.3, 0.4], "V2_V1_pct": [1.0, 80.0],
    ...                     "Va_mag": [230.0, 0.5], "I1": [10.0, 0.0], "I2": [0.1, 0.0], "I2_I1_pct": [1.0, np.nan]})

    10 % of the declared 400 / sqrt(3) V (IEC 61000-4-30:2015, 5.5):

    >>> v, why = voltage_gate_v(cyc, 400.0)
    >>> print(round(v, 2))
    23.09
    """
    if "V1" not in cycles:
        return math.nan, "no voltage sequence"
    ln = "Va_mag" in cycles or "Vb_mag" in cycles  # V1 of line-to-neutral phasors is V_LL / sqrt(3)
    if declared_ll_v:
        basis = float(declared_ll_v) / (math.sqrt(3.0) if ln else 1.0)
        return VOLTAGE_GATE_FRAC * basis, (f"V1 below {100 * VOLTAGE_GATE_FRAC:.0f} % of the declared voltage "
                                           "(IEC 61000-4-30 5.5 interruption threshold)")
    v1 = cycles["V1"].to_numpy(float)
    v1 = v1[np.isfinite(v1)]
    if v1.size == 0:
        return math.nan, "no voltage"
    ref = float(np.quantile(v1, VOLTAGE_GATE_QUANTILE))
    return VOLTAGE_GATE_FRAC * ref, (f"V1 below {100 * VOLTAGE_GATE_FRAC:.0f} % of the capture's "
                                     f"{100 * VOLTAGE_GATE_QUANTILE:.0f}th-percentile V1 (no declared voltage; inferred)")


def current_gate_a(cycles: pd.DataFrame, fla_a: float | None) -> tuple[float, str]:
    """(gate on ``I1`` [A], where it comes from); NaN when there is no ``I1`` column.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> cyc = pd.DataFrame({"t_s": [0.01, 0.03], "V1": [230.0, 0.5], "V2": [2.3, 0.4], "V2_V1_pct": [1.0, 80.0],
    ...                     "Va_mag": [230.0, 0.5], "I1": [10.0, 0.0], "I2": [0.1, 0.0], "I2_I1_pct": [1.0, np.nan]})

    >>> current_gate_a(cyc, 10.0)
    (0.5, 'I1 below 5 % of the nameplate FLA')
    """
    if "I1" not in cycles:
        return math.nan, "no current sequence"
    if fla_a:
        return CURRENT_GATE_FRAC_FLA * float(fla_a), f"I1 below {100 * CURRENT_GATE_FRAC_FLA:.0f} % of the nameplate FLA"
    i1 = cycles["I1"].to_numpy(float)
    i1 = i1[np.isfinite(i1)]
    if i1.size == 0:
        return math.nan, "no current"
    return CURRENT_GATE_FRAC_MAX * float(i1.max()), (f"I1 below {100 * CURRENT_GATE_FRAC_MAX:.0f} % of the capture's "
                                                     "largest I1 (no nameplate)")


def _blank(frame: pd.DataFrame, columns: tuple[str, ...], mask: np.ndarray) -> None:
    """Set ``columns`` (those present) of ``frame`` to NaN where ``mask`` (in place, one array per column)."""
    for c in columns:
        if c in frame:
            arr = frame[c].to_numpy(float, copy=True)
            arr[mask] = np.nan
            frame[c] = arr


def gate_cycles(cycles: pd.DataFrame, declared_ll_v: float | None = None,
                fla_a: float | None = None) -> tuple[pd.DataFrame, list[str]]:
    """The cycle table with ratio columns absent (NaN) below the level gates, and a ``level_gate`` reason column.

    Parameters
    ----------
    cycles : DataFrame
        The measurement engine's cycle table (docs/columns.md).
    declared_ll_v : float, optional
        Declared line-to-line voltage [V].
    fla_a : float, optional
        Nameplate full-load current [A].

    Returns
    -------
    (cycles, notes)
        A copy with the gated columns set to NaN where gated; ``level_gate`` is
        "" where nothing was gated, else the reason(s) joined with "; ".
        ``notes`` say how many cycles each gate removed and from where.

    References
    ----------
    .. [1] IEC 61000-4-30:2015, 5.5 (interruption: voltage below 10 % of the declared voltage).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> cyc = pd.DataFrame({"t_s": [0.01, 0.03], "V1": [230.0, 0.5], "V2": [2.3, 0.4], "V2_V1_pct": [1.0, 80.0],
    ...                     "Va_mag": [230.0, 0.5], "I1": [10.0, 0.0], "I2": [0.1, 0.0], "I2_I1_pct": [1.0, np.nan]})

    The second cycle is de-energised: its 80 % "unbalance" of noise is removed:

    >>> g, notes = gate_cycles(cyc, 400.0, 10.0)
    >>> g["V2_V1_pct"].tolist(), bool(g["level_gate"][1])
    ([1.0, nan], True)
    """
    # a shallow copy: the gated columns are replaced by new arrays (`_blank`), the others shared, the input
    # left as it is -- a deep copy would hold the whole table twice (memory, issue 10)
    out = cycles.copy(deep=False)
    n = len(out)
    reason = np.full(n, "", dtype=object)
    notes: list[str] = []
    for kind, (gate, why), cols, col_mag in (
        ("voltage", voltage_gate_v(out, declared_ll_v), VOLTAGE_RATIO_COLUMNS, "V1"),
        ("current", current_gate_a(out, fla_a), CURRENT_RATIO_COLUMNS, "I1"),
    ):
        if not math.isfinite(gate):
            continue
        mag = out[col_mag].to_numpy(float)
        low = ~(mag >= gate)  # NaN magnitude counts as below the gate
        if not low.any():
            continue
        _blank(out, (*cols, *POWER_RATIO_COLUMNS), low)
        reason[low] = np.where(reason[low] == "", why, reason[low] + "; " + why)
        notes.append(f"level gate: {kind} ratio and unbalance columns absent in {int(low.sum())} of {n} cycles "
                     f"({why}, gate {gate:.3g} {'V' if kind == 'voltage' else 'A'})")
    if "frequency_hz" in out:
        # a cycle without a tracked frequency (the fundamental outside the tracked band, or a partial cycle at an edge)
        # has phasors that are not those of the fundamental: its ratios mean nothing either
        loose = ~np.isfinite(out["frequency_hz"].to_numpy(float))
        if loose.any():
            why = "frequency not tracked (fundamental outside the tracked band, or a partial cycle)"
            _blank(out, (*VOLTAGE_RATIO_COLUMNS, *CURRENT_RATIO_COLUMNS, *POWER_RATIO_COLUMNS), loose)
            reason[loose] = np.where(reason[loose] == "", why, reason[loose] + "; " + why)
    out["level_gate"] = reason.astype(str)
    return out, notes
