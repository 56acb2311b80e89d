"""Stall / locked rotor: line current held in the locked-rotor region while energised.

A stalled induction motor draws its locked-rotor current (5-8 x FLA for NEMA
designs, from memory) at a low power factor (about 0.2-0.4, from memory);
single-phased at standstill the two live lines carry sqrt(3)/2 of the
three-phase locked-rotor current (I = V_LL / (Z1 + Z2) with Z1 = Z2 at
standstill; REFERENCES.md [calc]).  The detector looks for the largest line
current above ``stall_frac_lr`` x the locked-rotor current, scaled by the
largest line-to-line voltage (locked-rotor current is proportional to the
voltage), held for at least ``min_stall_s``.  A start (the motor was off just
before) is a stall only if it never accelerates out of that region; a
high-current stretch that decays away right after a voltage dip is the motor
re-accelerating, not a stall.

References
----------
.. [1] NEMA MG-1 10.37.2 (locked-rotor kVA code letters), via the nameplate.
"""

from __future__ import annotations

import numpy as np

from .context import DetectionInput, runs, speed_summary
from .event import Event
from .registry import register


def high_current_mask(inp: DetectionInput) -> tuple[np.ndarray, np.ndarray]:
    """(mask, threshold_a): cycles whose largest line current is in the locked-rotor region."""
    v = np.clip(inp.v_ll_max_ratio, 0.3, 1.2)
    thr = inp.params.stall_frac_lr * inp.locked_rotor_ref_a * v
    return np.isfinite(inp.i_max) & (inp.i_max > thr), thr


def off_before(inp: DetectionInput, a: int, cycles: int = 3) -> bool:
    """True when the motor carried no current in some of the ``cycles`` cycles before index ``a``."""
    if a == 0:
        return False
    return not bool(inp.energised[max(0, a - cycles) : a].all())


def runs_on_after(inp: DetectionInput, b: int, cycles: int = 5) -> bool:
    """True when the motor is still energised for the cycles after index ``b`` (False at capture end)."""
    if b >= inp.n:
        return False
    return bool(inp.energised[b : b + cycles].all())


def _dip_just_before(inp: DetectionInput, a: int) -> bool:
    v = inp.v_ll_max_ratio[max(0, a - int(round(2.0 / inp.cycle_s))) : a + 2]
    return bool(v.size and np.nanmin(v) < 0.9)


@register("stall")
def detect_stall(inp: DetectionInput) -> list[Event]:
    """Stalls (locked rotor) on a healthy or single-phased supply."""
    if not np.isfinite(inp.i_max).any() or not np.isfinite(inp.locked_rotor_ref_a):
        inp.notes.append("no line currents: stall not assessed")
        return []
    p = inp.params
    high, thr = high_current_mask(inp)
    out: list[Event] = []
    for a, b in runs(high, min_len=1, max_gap=2):
        end_s = float(inp.t_start_s[b]) if b < inp.n else None
        dur = (float(inp.t_end_s[-1]) if end_s is None else end_s) - float(inp.t_start_s[a])
        if dur < p.min_stall_s:
            continue
        started = off_before(inp, a)
        ends_running = runs_on_after(inp, b)
        seg = inp.i_max[a:b]
        q = max(1, seg.size // 5)
        decays = float(np.nanmean(seg[-q:])) < 0.75 * float(np.nanmean(seg[:q]))
        if started and ends_running:
            continue  # a start that accelerated: the start detector reports it
        if a == 0 and ends_running and decays:
            continue  # a start already under way when the capture began
        if not started and ends_running and decays and _dip_just_before(inp, a):
            continue  # re-acceleration after a voltage dip
        single = bool(inp.dead_line[a:b].any(axis=1).mean() > 0.5)
        figs = {
            "i_max_median_a": float(np.nanmedian(seg)),
            "i_max_median_pu_fla": float(np.nanmedian(seg) / inp.current_ref_a),
            "i_over_locked_rotor": float(np.nanmedian(seg) / inp.locked_rotor_ref_a),
            "locked_rotor_a": inp.locked_rotor_ref_a, "threshold_a_median": float(np.median(thr[a:b])),
            "single_phased": single, "from_energisation": started,
            "ended_by": ("capture end" if end_s is None else "current fell, motor still energised" if ends_running else "de-energised"),
        }
        pf = inp.col("PF")
        if pf is not None and np.isfinite(pf[a:b]).any():
            figs["power_factor_median"] = float(np.nanmedian(np.abs(pf[a:b])))
        figs.update(speed_summary(inp.speed, float(inp.t_start_s[a]), end_s))
        how = "single-phased" if single else "on a three-phase supply"
        cause = "failed to start (locked rotor from energisation)" if started else "stalled while running"
        dur_txt = f"{dur:.2f} s" + (" (still stalled at the end of the capture)" if end_s is None else "")
        out.append(Event(
            kind="stall", phase=None, start_s=float(inp.t_start_s[a]), end_s=end_s, detector="stall",
            summary=(f"motor {cause} {how}: {figs['i_max_median_pu_fla']:.1f} x FLA "
                     f"({100 * figs['i_over_locked_rotor']:.0f} % of locked-rotor current) for {dur_txt}"),
            figures=figs,
        ))
    return out
