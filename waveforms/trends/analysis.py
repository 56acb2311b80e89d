"""`analyze_trend`: a trend log's events, motor states and verdict (the trend recipe's detect step)."""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np
import pandas as pd

from ..detect.event import Event, iso_at
from .detect import LIMITS, TrendInput, TrendSettings, current_reference_a, detect_trend_events
from ..io.trend_log import TrendLog


@dataclasses.dataclass(eq=False)
class TrendResult:
    """What the trend analysis found in one log (the trend recipe's counterpart of `AnalysisResult`)."""

    log: TrendLog
    nameplate: Any
    events: list[Event]
    timeline: pd.DataFrame
    verdict: str
    notes: list[str]
    parameters: dict[str, Any]
    timings_s: dict[str, float]
    limits: tuple[str, ...] = LIMITS

    @property
    def cycles(self) -> pd.DataFrame:
        """The log's rows (``t_s`` and the RMS columns), the trend counterpart of the per-cycle table."""
        return self.log.table


def trend_input(log: TrendLog, nameplate: Any, nominal_voltage_v: float | None = None) -> tuple[TrendInput, list[str]]:
    """The detectors' arrays from a log, the nameplate and the declared voltage (line-to-line [V])."""
    from ..analysis import locked_rotor_a

    tab = log.table
    notes: list[str] = []
    cur = log.current_columns
    vol = log.voltage_columns
    i_a = tab[list(cur)].to_numpy(float).T if cur else None
    v_v = tab[list(vol)].to_numpy(float).T if vol else None
    ll = vol == ("Vab_rms", "Vbc_rms", "Vca_rms")
    vnom = nominal_voltage_v or log.nominal_voltage_v
    declared, basis = None, ""
    if v_v is not None:
        if vnom:
            declared = float(vnom) if ll else float(vnom) / math.sqrt(3)
            basis = f"declared {float(vnom):g} V line-to-line" + ("" if ll else " (/sqrt 3 for the line-to-neutral values)")
        else:
            declared = float(np.nanmedian(v_v))
            basis = "no declared voltage given: the log's median RMS voltage"
            notes.append(f"dips and swells against the log's median voltage {declared:.1f} V (no declared voltage given; "
                         "set import.nominal_voltage_v)")
    else:
        notes.append("no RMS voltages in the log: dips, swells, interruptions and voltage unbalance not assessed")
    fla = None if nameplate is None else float(nameplate.fla_a)
    inp = TrendInput(t_s=log.t_s, resolution_s=log.resolution_s, i_a=i_a, v_v=v_v, v_ll=ll, fla_a=fla,
                     lra_a=locked_rotor_a(nameplate), declared_v=declared, declared_basis=basis)
    if i_a is not None and fla is None:
        ref, b = current_reference_a(inp)
        notes.append(f"no nameplate: currents judged against {b} ({ref:.1f} A)")
    return inp, notes


def motor_timeline(inp: TrendInput, events: list[Event], p: Any) -> pd.DataFrame:
    """Periods of motor state (``state``, ``start_s``, ``end_s``) at the log's resolution."""
    n = inp.n
    t_end = np.append(inp.t_s[1:], inp.t_s[-1] + inp.resolution_s) if n else np.array([])
    state = np.full(n, "three-phase", dtype=object)
    if inp.i_a is not None:
        ref, _ = current_reference_a(inp)
        state[np.nanmax(inp.i_a, axis=0) <= p.energised_frac_fla * ref] = "de-energised"
    for kind, label in (("open_phase", "single-phased"), ("stall", "stalled")):
        for e in events:
            if e.kind != kind:
                continue
            a = int(np.searchsorted(inp.t_s, e.start_s - 1e-9))
            b = n if e.end_s is None else int(np.searchsorted(inp.t_s, e.end_s - 1e-9))
            cur = state[a:b]
            if label == "stalled":
                state[a:b] = np.where(cur == "single-phased", "single-phased, stalled", "stalled")
            else:
                state[a:b] = np.where(cur == "stalled", "single-phased, stalled", "single-phased")
    rows = []
    for k in range(n):
        if rows and rows[-1]["state"] == state[k]:
            rows[-1]["end_s"] = float(t_end[k])
        else:
            rows.append({"state": str(state[k]), "start_s": float(inp.t_s[k]), "end_s": float(t_end[k])})
    return pd.DataFrame.from_records(rows, columns=["state", "start_s", "end_s"])


def verdict(log: TrendLog, events: list[Event], nameplate: Any) -> str:
    """One paragraph in plain words, every time with the log's resolution."""
    res = log.resolution_s
    parts = []
    for e in events:
        if e.kind == "start" and e.figures.get("success"):
            continue
        when = iso_at(log.start_time, e.start_s)
        dur = "still present at the end of the log" if e.end_s is None else f"for about {e.end_s - e.start_s:.3g} s"
        what = {"open_phase": f"line {e.phase} open", "stall": "motor stalled", "start": "failed start",
                "dip": "voltage dip", "swell": "voltage swell", "interruption": "supply interruption",
                "unbalance": "sustained voltage unbalance"}[e.kind]
        parts.append(f"{what} from {when} (within {res:g} s), {dur}")
    n_starts = sum(1 for e in events if e.kind == "start" and e.figures.get("success"))
    head = (f"RMS trend log of {log.duration_s:.0f} s at {res:g} s resolution: "
            + ("; ".join(parts) if parts else "no open phase, stall, dip or sustained unbalance found"))
    tail = f". {n_starts} successful start{'s' if n_starts != 1 else ''}." if n_starts else "."
    plate = "" if nameplate is not None else " Stall not assessed (no nameplate)."
    return head + tail + plate + " A trend log shows no onset to the sample and no slip."


def analyze_trend(log: TrendLog, nameplate: Any = None, params: Any = None, settings: TrendSettings | None = None,
                  nominal_voltage_v: float | None = None) -> TrendResult:
    """Find the events of a trend log and write its verdict.

    Parameters
    ----------
    log : TrendLog
    nameplate : Nameplate, optional
        Needed for stalls (the locked-rotor current) and currents in multiples of FLA.
    params : DetectParams, optional
        The detectors' thresholds (the waveform detectors' own settings).
    settings : TrendSettings, optional
    nominal_voltage_v : float, optional
        Declared line-to-line voltage for dips and swells [V].

    Returns
    -------
    TrendResult
    """
    import time

    from ..detect import DetectParams

    t0 = time.perf_counter()
    p = params or DetectParams()
    s = settings or TrendSettings()
    inp, notes = trend_input(log, nameplate, nominal_voltage_v)
    events, more = detect_trend_events(inp, p, s)
    notes = [*log.notes, *notes, *more]
    timeline = motor_timeline(inp, events, p)
    params_rec = {"detect": p.to_dict(), "trend": dataclasses.asdict(s), "resolution_s": log.resolution_s,
                  "declared_v": inp.declared_v, "declared_basis": inp.declared_basis}
    return TrendResult(log=log, nameplate=nameplate, events=events, timeline=timeline, verdict=verdict(log, events, nameplate),
                       notes=notes, parameters=params_rec, timings_s={"trend_detect": time.perf_counter() - t0})
