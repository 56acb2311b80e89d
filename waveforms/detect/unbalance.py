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

from .context import DetectionInput, runs
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
        over = mean > NEMA_MAX_UNBALANCE_PCT
        der = "operation not recommended (NEMA MG-1: above 5 %)" if over else f"NEMA derating factor {figs['nema_derating_factor']:.2f}"
        out.append(Event(
            kind="unbalance", phase=None, start_s=float(inp.t_start_s[a]), end_s=end, detector="unbalance",
            summary=(f"supply voltage unbalance {mean:.1f} % (NEMA line-voltage definition): {der}; "
                     f"expect roughly {figs['extra_temperature_rise_pct']:.0f} % extra winding temperature rise (rule of thumb)"),
            figures=figs,
        ))
    return Findings(tuple(out), inp.reference_notes() if inp.has_three_currents else ())
