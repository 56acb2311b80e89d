"""Sustained supply-voltage unbalance: NEMA MG-1 derating and the extra heating it implies.

References
----------
.. [1] NEMA MG-1, Motors and Generators (clause 14.36 in recent editions):
   line-voltage unbalance = 100 x max deviation from the mean / mean, and the
   derating curve (figure 14-1); points read off the figure, sources differ
   slightly (REFERENCES.md [pub]).
.. [2] Rule of thumb: extra winding temperature rise about 2 x (percent
   unbalance)^2 percent -- secondary sources; the primary (NEMA MG-1; von
   Jouanne & Banerjee, IEEE Trans. Power Delivery 16(4), 2001) is from memory.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
import pandas as pd

from .context import LINES, DetectionInput, runs
from .event import Event
from .registry import Findings, register

#: NEMA MG-1 derating curve points (percent unbalance, derating factor), read
#: off the published figure [1] (2.5 -> 0.93, 3 -> 0.89 middle of 0.88-0.90,
#: 5 -> 0.755 middle of 0.75-0.76).
NEMA_DERATING_POINTS: tuple[tuple[float, float], ...] = (
    (0.0, 1.0), (1.0, 1.0), (2.0, 0.95), (2.5, 0.93), (3.0, 0.89), (4.0, 0.82), (5.0, 0.755),
)

#: Operation above 5 % unbalance is not recommended (NEMA MG-1 [1]).
NEMA_MAX_UNBALANCE_PCT = 5.0


def nema_derating_factor(unbalance_pct: np.ndarray | float) -> np.ndarray:
    """Derating factor for a given NEMA line-voltage unbalance; NaN above 5 %.

    References
    ----------
    .. [1] NEMA MG-1, derating curve for voltage unbalance (points read off the figure).

    Examples
    --------
    Points of the NEMA MG-1 derating curve (read off the figure; REFERENCES.md):
    no derating to 1 %, 0.89 at 3 %, none defined above 5 %:

    >>> nema_derating_factor([1.0, 3.0, 6.0]).tolist()
    [1.0, 0.89, nan]
    """
    x = np.asarray(unbalance_pct, dtype=float)
    px, py = zip(*NEMA_DERATING_POINTS, strict=True)
    f = np.interp(x, px, py)  # NEMA MG-1 derating curve, linear between the read-off points
    return np.where((x >= 0) & (x <= NEMA_MAX_UNBALANCE_PCT), f, np.nan)


def extra_temperature_rise_pct(unbalance_pct: np.ndarray | float) -> np.ndarray:
    """Rule of thumb: extra winding temperature rise ~ 2 x (percent unbalance)^2 [%].

    References
    ----------
    .. [1] Secondary sources; primary from memory (see the module docstring).

    Examples
    --------
    3.5 % unbalance: about 2 x 3.5^2 = 24.5 % more winding temperature rise (rule of thumb):

    >>> print(f"{extra_temperature_rise_pct(3.5):.1f}")
    24.5
    """
    x = np.asarray(unbalance_pct, dtype=float)
    return 2.0 * x**2  # rule of thumb, 2 x (% unbalance)^2 %


def _excluded(inp: DetectionInput, events: Iterable[Event]) -> np.ndarray:
    """Cycles inside an open phase, dip, swell or interruption: not a steady supply unbalance."""
    ex = np.zeros(inp.n, dtype=bool)
    for e in events:
        if e.kind in ("open_phase", "dip", "swell", "interruption"):
            end = np.inf if e.end_s is None else e.end_s
            ex |= (inp.t_end_s >= e.start_s) & (inp.t_start_s <= end)
    ex |= inp.dead_line.any(axis=1)
    return ex


#: |V2/I2| below this (per unit of V1/I1) is too small a voltage to drive the current through a motor: the load draws
#: the negative sequence itself (our choice; a motor's negative-sequence impedance is about its locked-rotor one,
#: 0.12-0.2 pu; from memory)
LOAD_Z2_PU = 0.03


def unbalance_source(inp: DetectionInput, a: int, b: int) -> dict:
    """Whose unbalance it is over cycles ``[a, b)``: the supply's (voltage) or the load's (current), with the evidence.

    The negative-sequence impedance seen at the logger, ``z2 = V2 / I2``
    (Fortescue's components, currents counted towards the load), per unit of
    ``V1 / I1``: a supply that imposes ``V2`` drives the passive motor, so
    ``V2 = +Z2 I2`` with ``Z2`` the motor's negative-sequence impedance
    (inductive, about its locked-rotor impedance): positive reactance, about
    0.1-0.2 pu.  A load that draws ``I2`` itself (its own open line, a winding
    fault, single-phase loads on the logged circuit) pulls the voltage only
    through the supply's impedance, ``V2 = -Zs I2``: a negative reactance and a
    small magnitude.  (The reasoning of a negative-sequence directional
    element, common practice, no source.)

    Returns ``unbalance_of`` ("supply", "load" or "unknown"),
    ``negative_sequence_impedance_pu`` ([re, im], median over the cycles) and
    ``unbalance_of_reason``.

    Examples
    --------
    A supply whose phase C is 5 % low, feeding a balanced passive load: the
    load's currents follow the voltages, so ``V2 / I2`` is the load's own
    impedance (here 1 pu, lagging 0.5 rad): the unbalance is the supply's.

    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(v_rms_v=np.array([230.0, 230.0, 0.95 * 230.0])[:, None],
    ...                     i_rms_a=np.array([10.0, 10.0, 9.5])[:, None], duration_s=2)
    >>> r = unbalance_source(inp, 10, 90)
    >>> print(r["unbalance_of"], [round(x, 2) for x in r["negative_sequence_impedance_pu"]])
    supply [0.88, 0.48]
    """
    from ..measure.sequence import A as op

    ph_v = [inp.v_phasor(c) for c in LINES]
    ph_i = [inp.i_phasor(c) for c in LINES]
    if any(x is None for x in ph_v + ph_i):
        return {"unbalance_of": "unknown", "unbalance_of_reason": "no voltage and current phasors: the source of the unbalance cannot be told"}
    if "phase_sequence" in inp.cycles and (inp.cycles["phase_sequence"].astype(str) == "ACB").sum() > inp.n // 2:
        op = op.conjugate()
    va, vb, vc = (x[a:b] for x in ph_v)
    if inp.voltage_reference == "LL":  # line-to-neutral equivalents without zero sequence, Va = (Vab - Vca) / 3
        va, vb, vc = (va - vc) / 3, (vb - va) / 3, (vc - vb) / 3
    ia, ib, ic = (x[a:b] for x in ph_i)
    with np.errstate(all="ignore"):
        v1, v2 = (va + op * vb + op * op * vc) / 3, (va + op * op * vb + op * vc) / 3
        i1, i2 = (ia + op * ib + op * op * ic) / 3, (ia + op * op * ib + op * ic) / 3
        z = (v2 / i2) / np.abs(v1 / i1)
    z = z[np.isfinite(z)]
    if z.size == 0:
        return {"unbalance_of": "unknown", "unbalance_of_reason": "no negative-sequence current: the source cannot be told"}
    zm = complex(np.median(z.real), np.median(z.imag))
    load = abs(zm) < LOAD_Z2_PU or zm.imag < 0
    fig = {"negative_sequence_impedance_pu": [zm.real, zm.imag], "unbalance_of": "load" if load else "supply"}
    fig["unbalance_of_reason"] = (
        f"V2/I2 = {zm.real:.3f}{zm.imag:+.3f}j pu of V1/I1: the negative-sequence current flows from the load towards the "
        "supply and the voltage unbalance is its drop across the supply's impedance (the load, not the supply, is unbalanced)"
        if load else
        f"V2/I2 = {zm.real:.3f}{zm.imag:+.3f}j pu of V1/I1, the motor's own negative-sequence impedance: the supply imposes "
        "the voltage unbalance and the motor's current unbalance follows it")
    return fig


@register("unbalance", needs=("open_phase", "dips"))
def detect_unbalance(inp: DetectionInput, prior: dict) -> Findings:
    """Sustained NEMA line-voltage unbalance above the threshold, with the NEMA MG-1 derating.

    Cycles inside the open phases and the dips, swells and interruptions found before are left out.

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(v_rms_v=np.array([230.0, 230.0, 0.95 * 230.0])[:, None], duration_s=4)

    >>> e = detect_unbalance(inp, {"open_phase": (), "dips": ()}).events[0]
    >>> print(e.kind, round(e.figures["v_unbal_nema_pct_mean"], 1), round(e.figures["nema_derating_factor"], 2))
    unbalance 1.7 0.97

    Phase C 5 % low gives line-voltage unbalance 1.7 % by the NEMA definition
    (maximum deviation from the mean over the mean, NEMA MG 1; clause from memory);
    the derating factor at 1.7 % read from NEMA MG 1 Figure 14-1 is about 0.97.
    """
    u = inp.col("V_unbal_nema_pct")
    if u is None:
        return Findings(notes=("no voltage unbalance column: supply unbalance not assessed",))
    p = inp.params
    win = max(1, int(round(p.unbalance_window_s / inp.cycle_s)))
    masked = np.where(_excluded(inp, (*prior["open_phase"], *prior["dips"])), np.nan, u)
    med = pd.Series(masked).rolling(win, center=True, min_periods=max(1, win // 2)).median().to_numpy()
    hot = np.isfinite(med) & (med > p.unbalance_threshold_pct)
    min_cycles = max(1, int(round(p.unbalance_min_s / inp.cycle_s)))
    out: list[Event] = []
    for a, b in runs(hot, min_len=min_cycles, max_gap=win // 2):
        seg = masked[a:b]
        mean = float(np.nanmean(seg))
        figs: dict = {
            "v_unbal_nema_pct_mean": mean, "v_unbal_nema_pct_max": float(np.nanmax(seg)),
            "nema_derating_factor": float(nema_derating_factor(mean)),
            "extra_temperature_rise_pct": float(extra_temperature_rise_pct(mean)),
            "extra_temperature_rise_source": "rule of thumb 2 x (% unbalance)^2, secondary sources; primary from memory",
            "derating_source": "NEMA MG-1 derating curve, points read off the figure",
            "threshold_pct": p.unbalance_threshold_pct,
        }
        for col in ("V_unbal_pvur_pct", "V2_V1_pct", "V_unbal_iec_ll_pct", "I_unbal_nema_pct", "I2_I1_pct"):
            v = inp.col(col)
            if v is not None:
                figs[f"{col}_mean"] = float(np.nanmean(np.where(np.isfinite(masked), v, np.nan)[a:b]))
        iu = figs.get("I_unbal_nema_pct_mean")
        if iu is not None and mean > 0:
            # current unbalance is roughly 6-10 x the voltage unbalance (rule of thumb, secondary sources)
            figs["current_to_voltage_unbalance_ratio"] = iu / mean
        end = None if b >= inp.n else float(inp.t_start_s[b])
        keep = np.isfinite(masked)
        keep[:a], keep[b:] = False, False
        idx = np.flatnonzero(keep)
        figs.update(unbalance_source(inp, int(idx[0]), int(idx[-1]) + 1) if idx.size else {"unbalance_of": "unknown"})
        if figs["unbalance_of"] == "load":
            for k in ("nema_derating_factor", "extra_temperature_rise_pct", "extra_temperature_rise_source", "derating_source"):
                figs.pop(k)  # a motor derating for supply unbalance does not apply to the load's own unbalance
            iu2 = figs.get("I2_I1_pct_mean", float("nan"))
            out.append(Event(
                kind="unbalance", phase=None, start_s=float(inp.t_start_s[a]), end_s=end, detector="unbalance",
                summary=(f"load (current) unbalance, I2/I1 {iu2:.0f} %, drawn by the equipment below the logger, not the "
                         f"supply's: the voltage unbalance of {mean:.1f} % is its drop across the supply impedance "
                         "(no supply derating applies; look for an open line or a winding fault on the load side)"),
                figures=figs,
            ))
            continue
        over = mean > NEMA_MAX_UNBALANCE_PCT
        der = "operation not recommended (NEMA MG-1: above 5 %)" if over else f"NEMA derating factor {figs['nema_derating_factor']:.2f}"
        out.append(Event(
            kind="unbalance", phase=None, start_s=float(inp.t_start_s[a]), end_s=end, detector="unbalance",
            summary=(f"supply voltage unbalance {mean:.1f} % (NEMA line-voltage definition): {der}; "
                     f"expect roughly {figs['extra_temperature_rise_pct']:.0f} % extra winding temperature rise (rule of thumb)"),
            figures=figs,
        ))
    return Findings(tuple(out), inp.reference_notes() if inp.has_three_currents else ())
