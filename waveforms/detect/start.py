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


@register("start")
def detect_start(inp: DetectionInput, prior: dict) -> Findings:
    """Start attempts with inrush, acceleration time and outcome."""
    notes = inp.reference_notes(locked_rotor=True)
    if not np.isfinite(inp.i_max).any() or not np.isfinite(inp.current_ref_a):
        return Findings(notes=notes)
    on = inp.energised
    high, _ = high_current_mask(inp)
    out: list[Event] = []
    fla = inp.current_ref_a
    for a, b in runs(on, min_len=2, max_gap=2):
        in_progress = a == 0 and bool(high[0])
        if a == 0 and not in_progress:
            continue  # already running when the capture began
        if a > 0 and on[max(0, a - 3) : a].any():
            continue
        seg_high = high[a:b]
        first_low = int(np.flatnonzero(~seg_high)[0]) + a if (~seg_high).any() else b
        # inrush: largest one-cycle RMS in the first cycles after energisation
        inrush = float(np.nanmax(inp.i_max[a : min(b, a + 5)]))
        success = first_low < b and (b - first_low) >= 5
        start_s = float(inp.t_start_s[a])
        if inp.capture is not None and inp.current_channels and not in_progress:
            ch = [inp.current_channels[c] for c in sorted(inp.current_channels)]
            f = 1.0 / inp.cycle_s
            t_ref = refine_onset_s(inp.capture, ch, (float(inp.t_start_s[a - 1]), float(inp.t_end_s[a])), f, inrush * np.sqrt(2))
            if t_ref is not None:
                start_s = t_ref
        figs = {"inrush_rms_a": inrush, "inrush_pu_fla": inrush / fla, "success": bool(success),
                "in_progress_at_capture_start": in_progress}
        if success:
            settle_n = max(1, int(round(1.0 / inp.cycle_s)))
            settled = float(np.nanmedian(inp.i_max[first_low : min(b, first_low + settle_n)]))
            after = np.flatnonzero(inp.i_max[first_low:b] <= 1.1 * settled)
            acc_end = first_low + int(after[0]) if after.size else first_low
            end_s = float(inp.t_start_s[acc_end]) if acc_end < inp.n else None
            figs.update({"acceleration_time_s": None if end_s is None else end_s - start_s,
                         "settled_current_a": settled, "settled_pu_fla": settled / fla})
            summary = (f"start: inrush {inrush / fla:.1f} x FLA, accelerated in "
                       f"{figs['acceleration_time_s']:.2f} s to {settled / fla:.2f} x FLA")
        else:
            end_s = float(inp.t_start_s[b]) if b < inp.n else None
            if end_s is not None and inp.capture is not None and inp.current_channels:
                ch = [inp.current_channels[c] for c in sorted(inp.current_channels)]
                amp = np.sqrt(2) * float(np.nanmedian(inp.i_max[a:b]))
                t_off = refine_onset_s(inp.capture, ch, (float(inp.t_start_s[max(0, b - 2)]), float(inp.t_end_s[min(inp.n - 1, b)])), 1.0 / inp.cycle_s, amp)
                if t_off is not None:
                    end_s = t_off
            figs["acceleration_time_s"] = None
            why = "still at locked-rotor current at the end of the capture" if end_s is None else "de-energised before accelerating"
            summary = f"failed start: inrush {inrush / fla:.1f} x FLA, {why}"
        figs.update(speed_summary(inp.speed, start_s, end_s))
        out.append(Event(kind="start", phase=None, start_s=start_s, end_s=end_s, summary=summary, figures=figs, detector="start"))
    return Findings(tuple(out), notes)
