"""The thermal state carried across consecutive captures of one site.

Each capture's thermal model starts from what the capture itself shows (the
pre-event running load, or cold when the capture begins de-energised or in a
start or stall).  A file that follows another of the same site within the gap
tolerance does better: it starts from the previous file's end state, moved over
the gap by the first-order model (IEC 60255-149:2013, clause 5):

* when the motor was de-energised at the end of the previous file or at the
  start of this one, it cools towards ambient with the standstill cooling
  constant (``cooling_ratio x tau``; common practice 2-4 x, no source);
* when it runs on both sides of the gap, it heats or cools towards this file's
  starting heating current with the running constant (the load across the gap
  taken as the one this file begins with: an assumption, said in the basis).

The end state with the carried start is exact without re-running the model: the
model is linear in its initial state, so the trace moves by the change of
initial state times the free-response decay over the file
(`waveforms.motor.thermal.carry_states`).  Only the motor model is carried; the
peak inside a file is not recomputed (the per-file peak stands, and the carried
start and end are given beside it).

A pass after the per-file analysis (the batch's post-run step, beside the
incident join): arrays in, a table out; nothing here reads captures.
"""

from __future__ import annotations

import datetime as _dt
import math
from typing import Any

import numpy as np
import pandas as pd

from ..motor.thermal import carry_states

#: Columns of thermal_carry.csv / .parquet (docs/incidents.md).
CARRY_COLUMNS: tuple[str, ...] = (
    "site", "file", "carried_from", "gap_s", "gap_model", "previous_end_pct", "previous_end_time",
    "own_initial_pct", "initial_pct", "own_end_pct", "end_pct", "basis",
)


def _pct(theta_pu2: float, sf: float) -> float:
    return 100.0 * theta_pu2 / sf**2


def carry_thermal(spans: pd.DataFrame, carries: dict[str, dict[str, Any]], gap_tolerance_s: float) -> pd.DataFrame:
    """One row per capture with a thermal result: its initial and end state, carried from the previous file when linked.

    Parameters
    ----------
    spans : DataFrame
        `waveforms.incidents.captures.capture_spans` (``file``, ``site``, ``start``, ``end``), ordered.
    carries : dict
        Per file, the `waveforms.motor.thermal.ThermalResult.carry` figures.
    gap_tolerance_s : float
        Longest gap across which the state is carried [s] (the incident join's tolerance).
    """
    rows: list[dict[str, Any]] = []
    for site, sp in spans.groupby("site", sort=True):
        sp = sp[[str(f) in carries and bool(carries[str(f)]) for f in sp["file"]]].reset_index(drop=True)
        if not len(sp):
            continue
        c = [carries[str(f)] for f in sp["file"]]
        n = len(sp)
        gaps = np.zeros(n)
        linked = np.zeros(n, bool)
        target = np.zeros(n)
        tau = np.ones(n)
        model = [""] * n
        for k in range(1, n):
            prev, cur = c[k - 1], c[k]
            g = (sp["start"][k] - sp["end"][k - 1]).total_seconds()
            gaps[k] = g
            same = (math.isclose(prev["motor_tau_s"], cur["motor_tau_s"]) and math.isclose(prev["sf"], cur["sf"])
                    and math.isclose(prev["cooling_ratio"], cur["cooling_ratio"]))
            linked[k] = 0.0 <= g <= gap_tolerance_s and same and cur.get("initial_mode") == "capture"
            if prev["off_at_end"] or cur["off_at_start"] or cur.get("start_heating_pu2") is None:
                tau[k], target[k] = cur["motor_tau_s"] * cur["cooling_ratio"], 0.0
                model[k] = "standstill cooling"
            else:
                tau[k], target[k] = cur["motor_tau_s"], float(cur["start_heating_pu2"])
                model[k] = "running"
        th0 = np.array([x["theta0_pu2"] for x in c])
        the = np.array([x["theta_end_pu2"] for x in c])
        dec = np.array([x["free_decay_end"] for x in c])
        start, end = carry_states(th0, the, dec, gaps, target, tau, linked)
        for k in range(n):
            sf = c[k]["sf"]
            row = {"site": site, "file": sp["file"][k], "carried_from": "", "gap_s": math.nan, "gap_model": "",
                   "previous_end_pct": math.nan, "previous_end_time": "",
                   "own_initial_pct": _pct(th0[k], sf), "initial_pct": _pct(start[k], sf),
                   "own_end_pct": _pct(the[k], sf), "end_pct": _pct(end[k], sf), "basis": "the file's own initial state"}
            if linked[k]:
                pe = _pct(end[k - 1], c[k - 1]["sf"])
                t_prev = sp["start"][k - 1] + _dt.timedelta(seconds=float(c[k - 1]["t_end_s"]))
                how = (f"cooled at standstill with {c[k]['cooling_ratio']:g} x tau" if model[k] == "standstill cooling" else
                       f"at the running constant towards this file's starting heating {math.sqrt(target[k]):.2f} x FLA")
                row.update(carried_from=sp["file"][k - 1], gap_s=gaps[k], gap_model=model[k], previous_end_pct=pe,
                           previous_end_time=t_prev.isoformat(timespec="milliseconds"),
                           basis=(f"initial state carried from {sp['file'][k - 1]}, ended at {pe:.1f} % at "
                                  f"{t_prev.isoformat(timespec='milliseconds')}, gap {gaps[k]:.1f} s ({how}; "
                                  f"IEC 60255-149 cl. 5 first-order model): {_pct(start[k], sf):.1f} % instead of "
                                  f"the file's own {_pct(th0[k], sf):.1f} %"))
            elif k > 0:
                why = ("the gap exceeds the gap tolerance" if gaps[k] > gap_tolerance_s else
                       "the files overlap" if gaps[k] < 0 else
                       "an initial state was asked for" if c[k].get("initial_mode") != "capture" else
                       "the thermal parameters differ")
                row["basis"] = f"the file's own initial state (not carried from {sp['file'][k - 1]}: {why})"
            rows.append(row)
    out = pd.DataFrame.from_records(rows, columns=list(CARRY_COLUMNS))
    for col in ("gap_s", "previous_end_pct", "own_initial_pct", "initial_pct", "own_end_pct", "end_pct"):
        out[col] = pd.to_numeric(out[col], errors="coerce").astype("float64")
    return out
