"""The hook-up check: read a few short windows, run every check, build the correction.

Order: a missing third channel (two-CT, open-delta) is derived; a reversed
voltage channel is undone; the phase sequence of the voltages (of the
currents without voltages) is found and an A-C-B set relabelled; a dead
current sensor is told from an open line and its current derived; the
currents are matched to the lines by their angles to the voltages; the
running current and voltage are compared with the nameplate.  The checks
look only at steady windows (`waveforms.hookup.windows`): a start, a stall
onset or a line opening is not steady, and a real single-phased stretch is
recognised as such (`waveforms.hookup.sensors`) and left to the detectors.
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from typing import Any

import numpy as np

from ..capture import Capture, Channel
from ..settings import check_fields, setting
from . import assignment as _assign
from .finding import Finding, HookupResult
from .missing import missing_currents, missing_line_voltage
from .phasor_math import LINES, Terms, combine, polar, unbalance
from .scaling import scaling
from .sensors import classify, dead_sensors
from .sequence import line_equivalents, phase_sequence, relabel_voltages, voltage_polarity
from .transform import ChannelRule, apply_rules
from .voltage_leads import dead_voltage_leads
from .windows import window_phasors

AS_RECORDED_ACTION = "none: analysed as recorded (as_recorded)"


@dataclasses.dataclass(frozen=True)
class HookupSettings:
    """The ``hookup`` stage: how the hook-up is checked, and whether it is corrected."""

    as_recorded: bool = setting(False, "analyse the file exactly as recorded: report hook-up findings, correct nothing",
                               forward=False)
    n_windows: int = setting(16, "short windows read, spread evenly over the capture [-]", minimum=3, maximum=200, forward=False)
    window_cycles: int = setting(6, "nominal cycles per window [cycles]", minimum=2, maximum=60, forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


def _frequency(capture: Capture) -> float:
    if capture.nominal_frequency_hz:
        return float(capture.nominal_frequency_hz)
    from ..timebase import infer_nominal_frequency

    names = list(capture.phase_channels("voltage").values()) or list(capture.phase_channels("current").values())
    n = min(capture.n_samples, int(2.0 * capture.sample_rate_hz))
    f, _ = infer_nominal_frequency(capture.read(0, n, [names[0].name])[0], capture.sample_rate_hz)
    return float(f or 50.0)


def _expand(terms: Terms, derived: dict[str, Terms]) -> Terms:
    out: Terms = {}
    for n, c in terms.items():
        for m, k in (derived.get(n) or {n: 1.0}).items():
            out[m] = out.get(m, 0.0) + c * k
    return {n: c for n, c in out.items() if abs(c) > 1e-12}


#: Current unbalance (smaller over larger sequence component) of windows that are the hook-up's own, and of windows
#: that are an event's when both kinds occur in one capture [-] (our choices, common practice, no source)
OWN_UNBALANCE_MAX = 0.3
EVENT_UNBALANCE_MIN = 0.5


def balanced_part(i_line: list[np.ndarray], three: np.ndarray) -> np.ndarray:
    """Windows to judge the clamps by: all of ``three``, or its balanced part when the current unbalance steps within it.

    A hook-up error is there from the first window to the last, so it leaves
    the current unbalance (the smaller of the positive- and negative-sequence
    currents over the larger, Fortescue 1918) the same in every window: about
    0.5 with one reversed clamp, near 0 with two clamps swapped.  An open line
    whose current is kept up by other equipment (a capacitor bank, another
    motor, a transformer's 2:1:1 split; issue 19) lifts it to 0.5-1 only after
    its onset, while every line still carries current.  When some windows are
    below `OWN_UNBALANCE_MAX` and others above `EVENT_UNBALANCE_MIN`, only the
    balanced ones are the hook-up's; otherwise all are.

    Examples
    --------
    Four windows of a balanced set, then two in which line C carries a quarter
    of its current and the others have turned towards antiphase:

    >>> import numpy as np
    >>> a = np.exp(2j * np.pi / 3)
    >>> ia, ib = np.array([10, 10, 10, 10, 17, 17], complex), np.array([10 * a * a] * 4 + [-15, -15])
    >>> ic = -(ia + ib)
    >>> balanced_part([ia, ib, ic], np.ones(6, bool)).tolist()
    [True, True, True, True, False, False]
    """
    u = unbalance(*i_line)
    low = three & (u <= OWN_UNBALANCE_MAX)
    if low.sum() >= 2 and (three & (u >= EVENT_UNBALANCE_MIN)).any():
        return low
    return three


def check_hookup(capture: Capture, nameplate: Any = None, settings: HookupSettings | None = None) -> tuple[Capture, HookupResult]:
    """Check the hook-up of a capture; return the capture to analyse (corrected unless ``as_recorded``) and what was found.

    Parameters
    ----------
    capture : Capture
    nameplate : Nameplate, optional
        FLA and rated voltage for the scaling check.
    settings : HookupSettings, optional

    Returns
    -------
    (Capture, HookupResult)
        The capture is the input itself when nothing is corrected, else a
        lazily corrected copy (`waveforms.hookup.transform.apply_rules`) with a
        provenance history entry.
    """
    with np.errstate(all="ignore"):  # dead channels and empty windows give NaN ratios, handled below
        return _check(capture, nameplate, settings or HookupSettings())


def _check(capture: Capture, nameplate: Any, s: HookupSettings) -> tuple[Capture, HookupResult]:
    vmap = capture.phase_channels("voltage")
    vref = next(iter(vmap.values())).reference if vmap else ""
    imap = capture.phase_channels("current")
    if len(imap) < 2 and len(vmap) < 3:
        return capture, HookupResult(windows={"read": 0, "reason": "fewer than two line currents and three voltages"})
    findings: list[Finding] = []
    vfind, vextra = missing_line_voltage(capture)
    work, cfind, cextra = missing_currents(capture)
    findings += vfind + cfind
    derived: dict[str, Terms] = {ch.name: t for ch, t in vextra}
    derived.update({ch.name: work[ch.conductor] for ch in cextra})
    new_channels = {ch.name: ch for ch, _ in vextra} | {ch.name: ch for ch in cextra}
    read = [c.name for c in vmap.values()] + [c.name for c in imap.values()]
    f_hz = _frequency(capture)
    try:
        wp = window_phasors(capture, read, f_hz, s.n_windows, s.window_cycles)
    except Exception as e:  # too short: nothing to check
        return capture, HookupResult(windows={"read": 0, "reason": str(e)})
    ph_rec = dict(wp.phasors)  # as recorded, for the phasor diagram
    ph = dict(wp.phasors)
    for n, t in derived.items():
        if n.startswith("V"):
            ph[n] = combine(t, ph)
    v_names = ([f"V{c.lower()}" for c in LINES] if vref == "LN" else ["Vab", "Vbc", "Vca"]) if vref else []
    have_v = bool(v_names) and all(n in ph for n in v_names)
    chan: dict[str, Terms] = {n: {n: 1.0} for n in v_names if n in ph}
    line_map = {"A": "A", "B": "B", "C": "C"}
    sequence = ""
    steady = wp.steady
    live_v = np.zeros(wp.n, dtype=bool)
    have_i = len(work) == 3
    i_names = [next(iter(work[c])) if len(work[c]) == 1 else f"I{c.lower()}" for c in LINES] if have_i else []
    il = [combine(work[c], ph) for c in LINES] if have_i else []
    imax_w = np.nanmax(np.vstack([np.abs(x) for x in il]), axis=0) if have_i else np.zeros(wp.n)
    on = imax_w[np.isfinite(imax_w)]
    floor = max(0.05 * float(np.median(on[on > 0.02 * on.max()])) if on.size and on.max() > 0 else 0.0, 1e-3)
    three0 = steady & (classify(il, floor)[2] == "three") if have_i else np.zeros(wp.n, dtype=bool)
    if have_v and have_i and not vextra:
        # a voltage lead that reads nothing while the motor draws three currents (voltage_leads.py): derived first,
        # so that every later check sees three voltages
        # current balance under the clamp polarities that best satisfy the zero sum (a reversed clamp leaves a residual
        # of twice a line current, Fortescue), so that a reversed clamp does not hide a balanced motor
        signs = list(itertools.product((1, -1), repeat=3))
        resid = np.vstack([np.abs(sum(k * x for k, x in zip(sg, il))) for sg in signs])
        best = np.argmin(np.where(np.isfinite(resid), resid, np.inf), axis=0)
        i_unbal = np.array([unbalance(*(np.atleast_1d(k * x[w]) for k, x in zip(signs[b], il)))[0]
                            for w, b in enumerate(best)])
        vdead, vfound = dead_voltage_leads(v_names, vref, ph, three0, wp.t_s, i_unbal)
        findings += vfound
        for n, t in vdead.items():
            derived[n] = t
            ph[n] = combine(t, ph)
    if have_v:
        vm = np.vstack([np.abs(ph[n]) for n in v_names])
        vlev = np.nanmax(vm, axis=0)
        # voltages judged where they are present, of about equal size (a reversed channel keeps its size; an open
        # terminal does not) and, where there are such windows, while the motor draws three currents
        live_v = steady & np.isfinite(vlev) & (vlev > 0.1 * np.nanmax(vlev)) & (np.nanmin(vm, axis=0) >= 0.85 * vlev)
        if (live_v & three0).any():
            live_v = live_v & three0
        chan, vpol = voltage_polarity(v_names, vref, ph, live_v)
        findings += vpol
    vl_terms = line_equivalents(vref, chan) if have_v else {}
    # phase sequence: of the voltages, else of the currents in steady three-phase windows
    if have_v:
        vl = {c: combine(vl_terms[c], ph) for c in LINES}
        sequence, sev = phase_sequence(vl["A"][live_v], vl["B"][live_v], vl["C"][live_v], "voltages")
    elif have_i:
        if all(len(work[c]) == 1 for c in LINES):
            # no voltages: a reversed clamp by its siblings alone -- the three line currents of a motor sum to zero
            # (Kirchhoff), a reversed one leaves a residual of twice a line current
            flipped, cpol = voltage_polarity(i_names, "LL", ph, three0)
            for f in cpol:
                n = f.channels[0]
                work = {c: (flipped[n] if next(iter(work[c])) == n else work[c]) for c in LINES}
                findings.append(dataclasses.replace(f, check="current_assignment", what=f"current clamp {n} reversed",
                                                    short=f"current clamp {n} reversed",
                                                    evidence=dict(f.evidence, basis="no voltages: the zero sum of the currents")))
            il = [combine(work[c], ph) for c in LINES]
        sequence, sev = phase_sequence(il[0][three0], il[1][three0], il[2][three0], "currents")
    else:
        sev = {}
    if sequence == "ACB":
        line_map = {"A": "A", "B": "C", "C": "B"}
        if have_v:
            chan = relabel_voltages(vref, chan)
            vl_terms = line_equivalents(vref, chan)
        if have_i:
            work = {"A": work["A"], "B": work["C"], "C": work["B"]}
            i_names = [i_names[0], i_names[2], i_names[1]]
        findings.append(Finding("phase_sequence", "phase sequence A-C-B as labelled", tuple(v_names or i_names), sev, "high",
                                "corrected: lines B and C exchanged so that the analysis runs in the supply's own "
                                "rotation; lines named as labelled", True))
    if have_i:
        il = [combine(work[c], ph) for c in LINES]
        _, _, kind = classify(il, floor)
        three = steady & (kind == "three")
        level = float(np.median(np.mean([np.abs(x[three]) for x in il], axis=0))) if three.any() else None
        assume = not any(c.reference == "neutral" for c in capture.find("current")) or capture.wiring == "3-wire"
        work, dfind = dead_sensors(work, i_names, il, wp.t_s, floor, level, assume, capture.wiring)
        steady_sel = steady & np.isfinite(wp.spread)
        il = [combine(work[c], ph) for c in LINES]
        _, _, kind = classify(il, floor)
        three = steady_sel & (kind == "three")
        three &= balanced_part(il, three)
        if have_v and three.sum() >= 1:
            vl = {c: combine(vl_terms[c], ph)[three] for c in LINES}
            new, afind, _ = _assign.search(work, i_names, vl, [x[three] for x in il])
            if new is not None:
                work = new
            if afind is not None:
                findings.append(afind)
        if not dfind:
            il = [combine(work[c], ph) for c in LINES]
            work, dfind = dead_sensors(work, i_names, il, wp.t_s, floor, level, assume, capture.wiring)
        findings += dfind
    # scaling against the nameplate
    if have_i and have_v and nameplate is not None:
        il = [combine(work[c], ph) for c in LINES]
        vl = {c: combine(vl_terms[c], ph) for c in LINES}
        _, _, kind = classify(il, floor)
        three = steady & (kind == "three") & live_v
        three &= balanced_part(il, three)
        lev = np.where(three, np.mean([np.abs(x) for x in il], axis=0), np.nan)
        lag = np.where(three, np.median([np.degrees(np.angle(vl[c] / il[k])) for k, c in enumerate(LINES)], axis=0), np.nan)
        vll = np.where(three, math.sqrt(3.0) * np.mean([np.abs(vl[c]) for c in LINES], axis=0), np.nan)
        declared = capture.nominal_voltage_v or float(getattr(nameplate, "rated_voltage_v", 0) or 0) or None
        findings += scaling(lev, lag, vll, float(nameplate.fla_a), declared, i_names, v_names)
    # the correction, as rules over the recorded channels
    rules: list[ChannelRule] = []
    out_terms: dict[str, Terms] = {}
    for n in v_names:
        if n in chan:
            out_terms[n] = _expand(chan[n], derived)
    if have_i:
        for c in LINES:
            out_terms[f"I{c.lower()}"] = _expand(work[c], derived)
    for n, t in out_terms.items():
        if t == {n: 1.0}:
            continue
        base = capture.channel(n) if n in capture.channel_names else new_channels[n]
        label = " ".join(f"{'-' if k < 0 else '+'}{abs(k):g}*{m}".replace("1*", "") for m, k in t.items()).lstrip("+")
        ch = dataclasses.replace(base, source_label=f"{base.source_label or n} (hook-up: {n} = {label.strip()})")
        rules.append(ChannelRule(ch, tuple((float(k), m) for m, k in t.items()), "hook-up correction"))
    fixes = [f for f in findings if f.corrects]
    if s.as_recorded:
        findings = [dataclasses.replace(f, action=AS_RECORDED_ACTION, corrects=False) if f.corrects else f for f in findings]
        rules = []
        line_map = {"A": "A", "B": "B", "C": "C"}
    ratio_note, absent = "", set()
    if s.as_recorded:
        for f in fixes:
            if f.check in ("phase_sequence", "voltage_polarity"):
                absent |= {"V2_V1_pct", "I2_I1_pct", "V_unbal_nema_pct"} if f.check == "voltage_polarity" else {"V2_V1_pct", "I2_I1_pct"}
            elif f.check in ("current_assignment", "dead_sensor", "missing_channel"):
                absent |= {"I2_I1_pct"} if f.channels and f.channels[0].startswith("I") else {"V2_V1_pct", "V_unbal_nema_pct"}
        if absent:
            ratio_note = (f"analysed as recorded with a hook-up error: {', '.join(sorted(absent))} would not be unbalance "
                          "figures and are left out of the summary")
    # the phasor diagram: the steadiest window with current and voltage
    rec_ph: dict[str, list[float]] = {}
    cor_ph: dict[str, list[float]] = {}
    good = np.flatnonzero(np.isfinite(wp.spread))
    if good.size:
        w = int(good[np.argmin(wp.spread[good])])
        ref_name = read[0]
        ref = ph_rec[ref_name][w]
        for n in read:
            rec_ph[n] = polar(ph_rec[n][w], ref)
        for n, t in out_terms.items():
            cor_ph[n] = polar(complex(combine(t, {m: ph_rec[m][w:w + 1] for m in t})[0]), ref)
    result = HookupResult(
        findings=tuple(findings), rules=tuple(rules), line_map=line_map, sequence=sequence, phasors_recorded=rec_ph,
        phasors_corrected=cor_ph if rules else {},
        windows={"read": int(wp.n), "steady": int(steady.sum()), "cycles_each": s.window_cycles,
                 "frequency_hz": wp.frequency_hz, "t_s": [float(t) for t in wp.t_s]},
        as_recorded=s.as_recorded, ratio_note=ratio_note, absent_ratios=tuple(sorted(absent)))
    if not rules:
        return capture, result
    step = "hook-up correction: " + "; ".join(r.describe() for r in rules)
    return apply_rules(capture, rules, step), result
