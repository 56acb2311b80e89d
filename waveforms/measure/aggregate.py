"""Aggregation of per-cycle values into IEC 61000-4-30 style intervals, with dip/interruption flags.

- ``"basic"``: 10 (50 Hz) / 12 (60 Hz) consecutive cycles, counted from the first cycle.
- ``"3s"``: 15 basic intervals (150 / 180 cycles).
- ``"10min"``: clock-aligned 10-minute intervals (absolute time of the cycle
  start); partial intervals at the capture ends are kept and their
  ``n_cycles`` shows it.

Magnitudes (``_rms``, ``_mag``, sequence components, unbalance ratios) are
aggregated as the square root of the mean of squares; power and frequency as
arithmetic means; power factors as the ratio of the aggregated powers
(``PF = sum P / sum S``, ``PFa = sum Pa / sum Sa``, ``DPF = sum P1 / |sum P1 +
j sum Q1|``: the power factor of the energy over the interval, IEEE 1459-2010
definitions applied to the interval's average powers), never as a mean of
per-cycle ratios; angles and the phase sequence are not aggregated.  An
interval is flagged ``dip`` when any Urms(1/2) of a phase voltage inside it
falls below 90 % of the declared voltage, ``swell`` when any rises above
110 %, ``interruption`` when all phase voltages fall below 10 % at the same
half cycle; ``flagged`` is any of the three (IEC 61000-4-30 4.7 flags
intervals during dips, swells and interruptions).  The declared voltage follows the one rule of
`waveforms.measure.declared` (line-to-line; divided by sqrt 3 for
line-to-neutral channels): ``capture.nominal_voltage_v`` when known, else the
standard nominal system voltage nearest the measured median (an inference),
else the median Urms(1/2) itself -- never the motor's rating.

References
----------
.. [1] IEC 61000-4-30:2015, 4.4 / 4.5 (measurement aggregation over 10/12
       cycles, 150/180 cycles, 10 min), 4.7 (flagging), 5.4 (dips and
       interruptions: 90 % and 10 % thresholds of the declared input voltage).
       Clause numbers and thresholds from memory.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from ..errors import InvalidParameterError

DIP_THRESHOLD = 0.90           # IEC 61000-4-30 5.4.2: dip below 90 % of declared (from memory)
INTERRUPTION_THRESHOLD = 0.10  # IEC 61000-4-30 5.4.4: interruption below 10 % (from memory)
SWELL_THRESHOLD = 1.10         # IEC 61000-4-30 5.4.3: swell above 110 % of declared (from memory; as DetectParams)
KINDS = ("basic", "3s", "10min")

_MEAN_SUFFIXES = ("_w", "_var", "_va", "frequency_hz")
_MEAN_PREFIXES = ("PF", "DPF")


def declared_voltages(half_cycles: pd.DataFrame, info: dict[str, Any]) -> dict[str, float]:
    """Declared voltage [V] per phase-voltage column of the half-cycle table, and how it was set.

    Examples
    --------
    With a declared 400 V (line-to-line) system the phase channels are judged
    against 400 / sqrt(3) = 230.9 V:

    >>> import pandas as pd
    >>> half = pd.DataFrame({"t_s": [0.01, 0.02], "Va_rms_half": [231.0, 229.0]})
    >>> {k: round(float(v), 1) for k, v in declared_voltages(half, {"channels": {"Va": "LN"}, "nominal_voltage_v": 400.0}).items()}
    {'Va': 230.9}
    """
    from .declared import measured_ll_v, resolve_declared_voltage

    refs = info.get("channels", {})
    out: dict[str, float] = {}
    for ref in ("LN", "LL"):
        labs = [lab for lab, r in refs.items() if r == ref and lab.startswith("V") and f"{lab}_rms_half" in half_cycles]
        if not labs:
            continue
        # the one declared-voltage rule of the dip/swell detector too (waveforms.measure.declared)
        meas = measured_ll_v([half_cycles[f"{lab}_rms_half"].to_numpy(float) for lab in labs], ref)
        decl = resolve_declared_voltage(info.get("declared_voltage_v"), info.get("nominal_voltage_v"), meas,
                                        info.get("nominal_frequency_hz"))
        val = float("nan") if decl.ll_v is None else (decl.ll_v / np.sqrt(3.0) if ref == "LN" else decl.ll_v)
        for lab in labs:
            out[lab] = val
    return out


def _agg_columns(cycles: pd.DataFrame) -> tuple[list[str], list[str]]:
    rms_cols, mean_cols = [], []
    for c in cycles.columns:
        if c in ("cycle", "t_s", "t_start_s", "t_end_s", "tracked", "phase_sequence") or c.endswith("_ang_deg"):
            continue
        if c.endswith(_MEAN_SUFFIXES) or c.startswith(_MEAN_PREFIXES):
            mean_cols.append(c)
        else:
            rms_cols.append(c)
    return rms_cols, mean_cols


def aggregate(cycles: pd.DataFrame, half_cycles: pd.DataFrame, kind: str, info: dict[str, Any]) -> pd.DataFrame:
    """Aggregate the cycle table into intervals of ``kind`` (see the module docstring).

    Returns a DataFrame with ``t_start_s``, ``t_end_s``, ``n_cycles``, ``dip``,
    ``interruption``, ``flagged`` and the aggregated columns.

    Examples
    --------
    Twenty 50 Hz cycles make two basic (10-cycle) intervals; a half cycle at
    80 % of declared in the second flags it as a dip (IEC 61000-4-30 4.7):

    >>> import numpy as np
    >>> import pandas as pd
    >>> k = np.arange(20)
    >>> cycles = pd.DataFrame({"cycle": k, "t_s": (k + 0.5) / 50, "t_start_s": k / 50, "t_end_s": (k + 1) / 50,
    ...                        "Va_rms": np.full(20, 230.0)})
    >>> v_half = np.full(40, 230.0); v_half[30] = 184.0
    >>> half = pd.DataFrame({"t_s": (np.arange(40) + 2) / 100, "Va_rms_half": v_half})
    >>> info = {"channels": {"Va": "LN"}, "nominal_voltage_v": 398.4, "harmonic_window_cycles": 10}
    >>> out = aggregate(cycles, half, "basic", info)
    >>> out[["t_start_s", "t_end_s", "n_cycles", "dip", "Va_rms"]].round(1).to_dict("list")
    {'t_start_s': [0.0, 0.2], 't_end_s': [0.2, 0.4], 'n_cycles': [10, 10], 'dip': [False, True], 'Va_rms': [230.0, 230.0]}
    """
    if kind not in KINDS:
        raise InvalidParameterError(f"interval kind={kind!r} must be one of {KINDS}")
    if cycles.empty:
        return pd.DataFrame()
    nh = int(info["harmonic_window_cycles"])
    if kind == "basic":
        key = cycles["cycle"].to_numpy() // nh                              # IEC 61000-4-30 4.4: 10/12 cycles
    elif kind == "3s":
        key = cycles["cycle"].to_numpy() // (15 * nh)                       # 150/180 cycles
    else:
        epoch = float(pd.Timestamp(info["start_time"]).timestamp())
        key = np.floor((epoch + cycles["t_start_s"].to_numpy()) / 600.0).astype(np.int64)  # clock-aligned 10 min
    rms_cols, mean_cols = _agg_columns(cycles)
    g = pd.DataFrame({"key": key})
    out = pd.DataFrame({
        "t_start_s": cycles["t_start_s"].groupby(key).min().to_numpy(),
        "t_end_s": cycles["t_end_s"].groupby(key).max().to_numpy(),
        "n_cycles": g.groupby("key").size().to_numpy(),
    })
    if rms_cols:
        sqm = cycles[rms_cols].pow(2).groupby(key).mean()                  # IEC 61000-4-30 4.4: sqrt(mean of squares)
        out = pd.concat([out, np.sqrt(sqm).reset_index(drop=True)], axis=1)
    if mean_cols:
        out = pd.concat([out, cycles[mean_cols].groupby(key).mean().reset_index(drop=True)], axis=1)
    _power_factors(out)
    dip, intr, swell = _flags(out, half_cycles, info)
    out.insert(3, "dip", dip)
    out.insert(4, "interruption", intr)
    out.insert(5, "swell", swell)
    out.insert(6, "flagged", dip | intr | swell)
    return out


def _power_factors(out: pd.DataFrame) -> None:
    """Power factors of the interval from its aggregated (mean) powers, in place: sum P / sum S, not a mean of ratios.

    References
    ----------
    .. [1] IEEE 1459-2010, 3.1.2.x / 3.2.2.x (PF = P / S; PF1+ = P1+ / S1+), applied to the powers over the interval.
    """
    with np.errstate(all="ignore"):
        for pf, p, sva in [("PF", "P_w", "S_va")] + [(f"PF{x}", f"P{x}_w", f"S{x}_va") for x in "abc"]:
            if pf in out and p in out and sva in out:
                s_ = out[sva].to_numpy(float)
                out[pf] = np.where(s_ > 0, out[p].to_numpy(float) / np.where(s_ > 0, s_, 1.0), np.nan)
        if "DPF" in out and "P1_w" in out and "Q1_var" in out:
            s1 = np.hypot(out["P1_w"].to_numpy(float), out["Q1_var"].to_numpy(float))
            out["DPF"] = np.where(s1 > 0, out["P1_w"].to_numpy(float) / np.where(s1 > 0, s1, 1.0), np.nan)


_LL_HALF = ("Vab", "Vbc", "Vca")


def _flag_voltages(half: pd.DataFrame, info: dict[str, Any]) -> dict[str, float]:
    """The voltages the flags are judged on: line-to-line on a 3-wire system, as the dip detector does.

    A 3-wire capture recorded line-to-neutral carries ``Vab_rms_half`` ...
    (`waveforms.measure.engine`); dips and swells of a 3-wire system are
    assessed on those (IEC 61000-4-30 5.4.1 practice for 3-wire systems, from
    memory), so a neutral shift (a ground fault on an ungrounded system) flags
    no interval.
    """
    if info.get("wiring") == "3-wire" and all(f"{c}_rms_half" in half for c in _LL_HALF):
        return declared_voltages(half, dict(info, channels={c: "LL" for c in _LL_HALF}))
    return declared_voltages(half, info)


def _flags(out: pd.DataFrame, half: pd.DataFrame, info: dict[str, Any]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    decl = _flag_voltages(half, info)
    n = len(out)
    if not decl or half.empty:
        return np.zeros(n, bool), np.zeros(n, bool), np.zeros(n, bool)
    cols = [f"{lab}_rms_half" for lab in decl]
    v = half[cols].to_numpy() / np.array([decl[lab] for lab in decl])[None, :]
    low = np.nan_to_num(v, nan=np.inf)
    any_dip = (low < DIP_THRESHOLD).any(axis=1)                    # IEC 61000-4-30: any channel below 90 %
    all_int = (low < INTERRUPTION_THRESHOLD).all(axis=1)           # all channels below 10 %
    any_swell = (np.nan_to_num(v, nan=-np.inf) > SWELL_THRESHOLD).any(axis=1)  # any channel above 110 %
    t = half["t_s"].to_numpy()
    # which interval each half-cycle value belongs to (its window end inside [t_start, t_end])
    pos = np.searchsorted(out["t_start_s"].to_numpy(), t, side="right") - 1
    inside = (pos >= 0) & (t <= out["t_end_s"].to_numpy()[np.clip(pos, 0, n - 1)])
    dip = np.zeros(n, bool)
    intr = np.zeros(n, bool)
    np.logical_or.at(dip, pos[inside & any_dip], True)
    np.logical_or.at(intr, pos[inside & all_int], True)
    swell = np.zeros(n, bool)
    np.logical_or.at(swell, pos[inside & any_swell], True)
    return dip, intr, swell
