"""The ``hookup`` recipe stage (between ``import`` and ``measure``) and what the later stages take from it.

The stage runs `check_hookup` on the imported capture, puts the corrected
capture in its place (unless ``as_recorded``), adds one data-quality
warning per finding and keeps the `HookupResult` on the run state for the
verdict, result.json, the report and the summary.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from .check import HookupSettings, check_hookup
from .finding import HookupResult


def run_stage(state: Any, params: dict[str, Any]) -> None:
    from ..recipe import get_stage

    (s,) = get_stage("hookup").build(params)
    state.capture, state.hookup = check_hookup(state.capture, state.nameplate, s)
    state.quality.extend(f.quality_note() for f in state.hookup.findings)
    if state.hookup.findings and not state.hookup.corrected and not s.as_recorded:
        state.notes.append("hook-up: evidence ambiguous, nothing corrected; findings that depend on the current-voltage "
                           "angles (open-point location, power, power factor) are less certain")


def register_hookup_stage() -> None:
    from ..recipe import Stage, register_stage

    register_stage(Stage(
        name="hookup",
        description="logger hook-up check: phase sequence, reversed or moved clamps, dead sensors, two-CT/open-delta, "
                    "scaling; unambiguous errors corrected (as_recorded = analyse the file as it is)",
        run=run_stage, settings=(HookupSettings,), needs=("import",), library="waveforms.hookup:check_hookup",
    ))


def as_labelled(events: list, hookup: HookupResult | None) -> list:
    """Events with their line named as labelled in the file (after an A-C-B relabelling).

    After clamps moved one line along were corrected, an event's line is named
    by the voltage leads and the other reading is added: the same waveforms come
    from the voltage leads moved the other way, so the line may be the one the
    clamp labels give ("line A (line B if it is the voltage leads, not the clamps, that were moved)").
    """
    if hookup is None:
        return events
    alt = next((f.evidence["line_if_voltage_leads_moved"] for f in hookup.findings
                if f.corrects and "line_if_voltage_leads_moved" in f.evidence), None)
    if alt and not hookup.relabelled:
        return [_either_line(e, alt) for e in events]
    if not hookup.relabelled:
        return events
    out = []
    for e in events:
        if e.phase is None or hookup.labelled(e.phase) == e.phase:
            out.append(e)
            continue
        lab = hookup.labelled(e.phase)
        figs = dict(e.figures, line_as_analysed=e.phase)
        summary = e.summary.replace(f"line {e.phase} ", f"line {lab} ")
        out.append(dataclasses.replace(e, phase=lab, figures=figs, summary=summary))
    return out


def _either_line(e: Any, alt: dict[str, str]) -> Any:
    if e.phase is None or alt.get(e.phase, e.phase) == e.phase:
        return e
    other = alt[e.phase]
    figs = dict(e.figures, line_if_voltage_leads_moved=other)
    summary = e.summary.replace(f"line {e.phase} ", f"line {e.phase} (line {other} if it is the voltage leads, not the "
                                "clamps, that were moved) ", 1)
    return dataclasses.replace(e, figures=figs, summary=summary)


def dead_lead_events(events: list, hookup: HookupResult | None) -> tuple[list, list[str]]:
    """Events without the dips / interruptions that are only a dead voltage lead, and a note for each one left out.

    Only matters when the file is analysed as recorded (corrected, the lead is
    derived and reads no dip): a dip on nothing but a lead the hook-up check found
    dead, starting after that lead was last seen live, is the sensor, not the supply.
    """
    if hookup is None:
        return events, []
    dead = [f for f in hookup.findings if f.check == "dead_sensor" and not f.corrects and f.channels
            and f.channels[0].startswith("V") and "last_seen_live_s" in f.evidence]
    if not dead:
        return events, []
    out, notes = [], []
    for e in events:
        chans = set(e.figures.get("channels") or ())
        f = next((f for f in dead if e.kind in ("dip", "interruption") and chans and chans <= set(f.channels)
                  and e.start_s >= f.evidence["last_seen_live_s"]), None)
        if f is None:
            out.append(e)
            continue
        notes.append(f"hook-up: the {e.kind} on {', '.join(sorted(chans))} from {e.start_s:.3f} s is the dead voltage lead "
                     "(a sensor problem), not reported as a dip or interruption")
    return out, notes
