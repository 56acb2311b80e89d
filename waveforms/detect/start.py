"""Start attempts: energisation, inrush, acceleration time, success or failure.

An energisation is a cycle carrying current after at least three cycles that
carried none (or a capture that begins in the locked-rotor region: a start
already under way, flagged ``in_progress_at_capture_start``).  The start has succeeded when the current leaves the
locked-rotor region (see `waveforms.detect.stall`) while the motor stays
energised; the acceleration time runs from energisation to the first cycle at
or below 110 % of the settled running current, as motor-protection relays
commonly end a start (common practice, no source).  This lands somewhat after
the rotor reaches 90 % of synchronous speed: the current is still about twice
its running value there.
"""

from __future__ import annotations

import numpy as np

from .context import DetectionInput, runs, speed_summary
from .event import Event
from .pointonwave import refine_onset_s
from .registry import Findings, register
from .stall import high_current_mask


def _speed_after(inp: DetectionInput, t0_s: float) -> float | None:
    """Median slip of the speed windows lying wholly after ``t0_s`` while the motor is energised, or None."""
    sp = inp.speed
    if sp is None or len(sp) == 0 or "slip" not in sp:
        return None
    t_lo = sp["t_start_s"].to_numpy(float) if "t_start_s" in sp else sp["t_s"].to_numpy(float)
    slip = sp["slip"].to_numpy(float)
    sel = (t_lo >= t0_s) & np.isfinite(slip)
    return float(np.median(slip[sel])) if sel.any() else None


@register("start")
def detect_start(inp: DetectionInput, prior: dict) -> Findings:
    """Start attempts with inrush, acceleration time and outcome.

    A start succeeded only when its current actually fell out of the
    locked-rotor region (and below ``start_frac_inrush`` x its inrush) while
    energised, and the speed track, where there is one after the acceleration,
    shows the rotor turning (slip below 0.5); durations are never negative.
    Without a nameplate no "x FLA" figure is given.

    Examples
    --------
    A direct-on-line start at 0.2 s: a 60 A inrush decaying to the 10 A running current:

    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 0.2, 0.0, 10 + 50 * np.exp(-np.clip(t - 0.2, 0, None) / 0.4)))

    >>> e = detect_start(inp, {}).events[0]
    >>> print(e.kind, e.start_s, e.figures["success"], round(e.figures["inrush_pu_fla"], 1))
    start 0.2 True 5.7
    """
    notes = inp.reference_notes(locked_rotor=True)
    if not np.isfinite(inp.i_max).any() or not np.isfinite(inp.current_ref_a):
        return Findings(notes=notes)
    on = inp.energised
    high, _ = high_current_mask(inp)
    out: list[Event] = []
    fla = float(inp.fla_a) if inp.rated else None
    p = inp.params
    for a, b in runs(on, min_len=2, max_gap=2):
        in_progress = a == 0 and bool(high[0])
        if a == 0 and not inp.rated:
            if in_progress:
                notes = (*notes, "a start or stall under way at the capture start is not assessed without a nameplate")
            continue
        if a == 0 and not in_progress:
            continue  # already running when the capture began
        if a > 0 and on[max(0, a - 3) : a].any():
            continue
        # inrush: largest one-cycle RMS in the first cycles after energisation (the first may be a partial cycle)
        k_peak = a + int(np.nanargmax(inp.i_max[a : min(b, a + 5)]))
        inrush = float(inp.i_max[k_peak])
        seg_high = high[k_peak:b]
        first_low = int(np.flatnonzero(~seg_high)[0]) + k_peak if (~seg_high).any() else b
        start_s = float(inp.t_start_s[a])
        if inp.capture is not None and inp.current_channels and not in_progress:
            ch = [inp.current_channels[c] for c in sorted(inp.current_channels)]
            f = 1.0 / inp.cycle_s
            t_ref = refine_onset_s(inp.capture, ch, (float(inp.t_start_s[a - 1]), float(inp.t_end_s[a])), f, inrush * np.sqrt(2))
            if t_ref is not None:
                start_s = t_ref
        settle_n = max(1, int(round(1.0 / inp.cycle_s)))
        settled = float(np.nanmedian(inp.i_max[first_low : min(b, first_low + settle_n)])) if first_low < b else np.nan
        fell = bool(np.isfinite(settled) and settled < p.start_frac_inrush * inrush)
        success = first_low < b and (b - first_low) >= 5 and fell
        figs = {"inrush_rms_a": inrush, "success": bool(success), "in_progress_at_capture_start": in_progress}
        if fla:
            figs["inrush_pu_fla"] = inrush / fla
        why_not = None
        if success:
            after = np.flatnonzero(inp.i_max[first_low:b] <= 1.1 * settled)
            acc_end = first_low + int(after[0]) if after.size else first_low
            end_s = float(inp.t_start_s[acc_end]) if acc_end < inp.n else None
            if end_s is not None:
                end_s = max(end_s, start_s)  # the refined onset may lie inside the first cycle
            slip_after = None if end_s is None else _speed_after(inp, end_s)
            if slip_after is not None and slip_after > 0.5:
                success, why_not = False, f"the current fell but the speed track shows the rotor near standstill (slip {slip_after:.2f})"
                figs["success"] = False
        if success:
            figs.update({"acceleration_time_s": None if end_s is None else end_s - start_s,
                         "settled_current_a": settled, "settled_over_inrush": settled / inrush})
            if fla:
                figs["settled_pu_fla"] = settled / fla
                level = f"inrush {inrush / fla:.1f} x FLA"
                to = f"{settled / fla:.2f} x FLA"
            else:
                level = f"inrush {inrush:.0f} A"
                to = f"{settled:.0f} A ({100 * settled / inrush:.0f} % of the inrush)"
            acc = "" if figs["acceleration_time_s"] is None else f" in {figs['acceleration_time_s']:.2f} s"
            summary = f"start: {level}, accelerated{acc} to {to}"
        else:
            end_s = float(inp.t_start_s[b]) if b < inp.n else None
            if end_s is not None and inp.capture is not None and inp.current_channels:
                ch = [inp.current_channels[c] for c in sorted(inp.current_channels)]
                amp = np.sqrt(2) * float(np.nanmedian(inp.i_max[a:b]))
                t_off = refine_onset_s(inp.capture, ch, (float(inp.t_start_s[max(0, b - 2)]), float(inp.t_end_s[min(inp.n - 1, b)])), 1.0 / inp.cycle_s, amp)
                if t_off is not None:
                    end_s = t_off
            if end_s is not None:
                end_s = max(end_s, start_s)
            figs["acceleration_time_s"] = None
            if why_not is None:
                if fla:
                    why_not = "still at locked-rotor current at the end of the capture" if end_s is None else "de-energised before accelerating"
                else:
                    why_not = ("the current had not fallen from its inrush by the end of the capture" if end_s is None
                               else "de-energised before its current fell from the inrush")
            level = f"inrush {inrush / fla:.1f} x FLA" if fla else f"inrush {inrush:.0f} A"
            summary = f"failed start: {level}, {why_not}"
        figs.update(speed_summary(inp.speed, start_s, end_s))
        out.append(Event(kind="start", phase=None, start_s=start_s, end_s=end_s, summary=summary, figures=figs, detector="start"))
    return Findings(tuple(out), notes)
