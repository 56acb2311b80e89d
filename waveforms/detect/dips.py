"""Voltage dips, swells and interruptions from Urms(1/2), with the IEEE 1159 category.

Polyphase rules of IEC 61000-4-30 (5.4.2, 5.4.3, 5.5): a dip begins when the
Urms(1/2) of one channel falls below the dip threshold and ends when every
channel is at or above the threshold plus the hysteresis; a swell is the
mirror image; an interruption begins when *all* channels fall below the
interruption threshold and ends when any channel is back above it plus the
hysteresis.  The residual voltage of a dip is the lowest Urms(1/2) of any
channel during it; the duration runs from start to end.

References
----------
.. [1] IEC 61000-4-30, Testing and measurement techniques - Power quality
   measurement methods, 5.4 (dips and swells), 5.5 (interruptions); the
   thresholds 90 % / 110 % / 10 % and the 2 % hysteresis are recalled (from memory).
.. [2] IEEE Std 1159, Recommended Practice for Monitoring Electric Power
   Quality, Table 2 (categories of short- and long-duration variations).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InvalidParameterError
from .context import LINES, DetectionInput, runs, schmitt
from .event import Event
from .neutral_shift import neutral_shifts, shift_mask
from .registry import Findings, register

#: IEEE 1159 Table 2 duration bands (in cycles, then seconds) [2].
_CYCLES_INSTANT = 30.0
_MOMENTARY_S = 3.0
_TEMPORARY_S = 60.0

#: IEEE 1159 Table 2 magnitude bands [pu] [2]: interruptions below 0.1 pu; sags
#: 0.1-0.9 pu at every duration up to 1 min; swells 1.1-1.8 pu (instantaneous),
#: 1.1-1.4 pu (momentary), 1.1-1.2 pu (temporary); over 1 min undervoltage
#: 0.8-0.9 pu and overvoltage 1.1-1.2 pu.  The temporary-sag, temporary-swell,
#: sustained-interruption and overvoltage bands are recalled (from memory).
_INTERRUPTION_PU = 0.1
_SAG_PU = (0.1, 0.9)
_SWELL_PU = {"instantaneous": (1.1, 1.8), "momentary": (1.1, 1.4), "temporary": (1.1, 1.2)}
_UNDERVOLTAGE_PU = (0.8, 0.9)
_OVERVOLTAGE_PU = (1.1, 1.2)

#: Category returned when the magnitude lies in no IEEE 1159 band of the event's kind.
OUTSIDE_IEEE1159 = "outside IEEE 1159 bands"


def ieee1159_category(kind: str, duration_s: float | None, magnitude_pu: float, cycle_s: float) -> str:
    """IEEE 1159 Table 2 category of a dip ("sag"), swell or interruption.

    The duration picks the column (instantaneous, momentary, temporary, long
    duration) and the magnitude the row.  ``kind`` limits the rows to the
    event's side of nominal: a dip may be a sag or undervoltage, or an
    interruption when one channel's residual is below 0.1 pu (IEEE 1159
    counts the voltage of each phase); an interruption must be below 0.1 pu; a
    swell may be a swell or overvoltage.  A magnitude in no band of its kind
    (a 0.5 pu dip longer than 1 min, a 1.5 pu momentary swell, ...) gives
    `OUTSIDE_IEEE1159`.  Durations shorter than half a cycle are not resolved
    by Urms(1/2) and count as instantaneous.

    Parameters
    ----------
    kind : {"dip", "swell", "interruption"}
    duration_s : float or None
        None = still present at the end of the capture (at least as long as seen).
    magnitude_pu : float
        Residual (dip, interruption) or peak (swell) voltage [pu].
    cycle_s : float
        Length of one fundamental cycle [s].

    References
    ----------
    .. [1] IEEE Std 1159, Table 2: instantaneous 0.5-30 cycles, momentary
       30 cycles-3 s, temporary 3 s-1 min, long duration over 1 min;
       interruption below 0.1 pu (momentary 0.5 cycle-3 s); sag 0.1-0.9 pu;
       swell 1.1-1.8 / 1.1-1.4 / 1.1-1.2 pu; undervoltage 0.8-0.9 pu,
       overvoltage 1.1-1.2 pu (the last four partly from memory).

    Examples
    --------
    IEEE Std 1159-2019 Table 2 duration classes (from memory): 0.2 s is
    instantaneous (0.5-30 cycles), 2 s momentary (30 cycles-3 s):

    >>> ieee1159_category("dip", 0.2, 0.7, 0.02), ieee1159_category("interruption", 2.0, 0.05, 0.02)
    ('instantaneous sag', 'momentary interruption')
    """
    if kind not in ("dip", "swell", "interruption"):
        raise InvalidParameterError(f"{kind=} must be 'dip', 'swell' or 'interruption'")
    d = math.inf if duration_s is None else duration_s
    m = float(magnitude_pu)
    if not math.isfinite(m):
        return OUTSIDE_IEEE1159
    if d <= _CYCLES_INSTANT * cycle_s:
        band = "instantaneous"
    elif d <= _MOMENTARY_S:
        band = "momentary"
    elif d <= _TEMPORARY_S:
        band = "temporary"
    else:
        band = "sustained"  # IEEE 1159 Table 2, long-duration variations
    if kind in ("dip", "interruption") and m < _INTERRUPTION_PU:
        # IEEE 1159: momentary interruption 0.5 cycle-3 s (no instantaneous interruption)
        return "momentary interruption" if band == "instantaneous" else f"{band} interruption"
    if kind == "dip":
        lo, hi = _UNDERVOLTAGE_PU if band == "sustained" else _SAG_PU
        if not lo <= m <= hi:
            return OUTSIDE_IEEE1159
        return "sustained undervoltage" if band == "sustained" else f"{band} sag"
    if kind == "swell":
        lo, hi = _OVERVOLTAGE_PU if band == "sustained" else _SWELL_PU[band]
        if not lo <= m <= hi:
            return OUTSIDE_IEEE1159
        return "sustained overvoltage" if band == "sustained" else f"{band} swell"
    return OUTSIDE_IEEE1159  # an interruption at or above 0.1 pu


#: The line-to-line Urms(1/2) columns the measurement adds on a 3-wire system recorded line-to-neutral.
_LL_LABELS = {"A": "Vab", "B": "Vbc", "C": "Vca"}


def assessed_voltages(inp: DetectionInput, notes: list[str] | None = None) -> DetectionInput:
    """The input with the voltages dips and swells are assessed on: line-to-line ones on a 3-wire system.

    IEC 61000-4-30 (5.4.1, from memory): on a 3-wire system dips and swells are
    evaluated on the line-to-line voltages, on a 4-wire system on the
    line-to-neutral ones.  A 3-wire capture recorded line-to-neutral carries
    ``Vab_rms_half`` ... (`waveforms.measure.engine`), and those are used; the
    line-to-neutral channels then only show how the system sits against earth
    (`waveforms.detect.neutral_shift`).
    """
    three_wire = getattr(inp.capture, "wiring", None) == "3-wire"
    hc = inp.half_cycles
    if not (three_wire and inp.voltage_reference == "LN" and hc is not None
            and all(f"{lab}_rms_half" in hc for lab in _LL_LABELS.values())):
        return inp
    if notes is not None:
        notes.append("3-wire system: dips, swells and interruptions assessed on the line-to-line voltages Vab, Vbc, Vca "
                     "(computed from the line-to-neutral samples; IEC 61000-4-30 practice for 3-wire systems, from memory)")
    import dataclasses

    return dataclasses.replace(inp, voltage_channels=dict(_LL_LABELS), voltage_reference="LL")


def _half_cycle_matrix(inp: DetectionInput, notes: list[str]) -> tuple[np.ndarray, np.ndarray, list[str]] | None:
    labels = [inp.voltage_channels[c] for c in LINES if c in inp.voltage_channels]
    if not labels:
        return None
    hc = inp.half_cycles
    if hc is not None and all(f"{lab}_rms_half" in hc for lab in labels) and len(hc):
        # a value whose one-cycle window begins before the first tracked cycle (capture edge, tracker
        # settling) is left out: it does not cover a whole cycle of the tracked frequency
        t_ok = 0.0
        if "tracked" in inp.cycles and inp.cycles["tracked"].astype(bool).any():
            t_ok = float(inp.t_start_s[int(np.argmax(inp.cycles["tracked"].astype(bool).to_numpy()))])
        hc = hc[hc["t_s"].to_numpy(float) - inp.cycle_s >= t_ok - 1e-9]
        return hc["t_s"].to_numpy(float), np.vstack([hc[f"{lab}_rms_half"].to_numpy(float) for lab in labels]), labels
    if all(f"{lab}_rms" in inp.cycles for lab in labels):
        notes.append("no Urms(1/2) table: dips assessed on one-cycle RMS values (IEC 61000-4-30 asks for Urms(1/2))")
        return inp.t_end_s, np.vstack([inp.cycles[f"{lab}_rms"].to_numpy(float) for lab in labels]), labels
    return None


def declared_voltage(inp: DetectionInput, urms: np.ndarray, notes: list[str] | None = None) -> tuple[float, str]:
    """Declared voltage of the channels [V] and where it came from (`waveforms.measure.declared`).

    ``inp.declared_voltage_ll_v`` with ``inp.declared_voltage_source`` when set
    (`waveforms.analysis.detection_input` applies the rule); otherwise the same
    rule on the Urms(1/2) values here, the basis said in ``notes``.

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(v_rms_v=lambda t: np.where((t >= 1.0) & (t < 1.2), 0.7 * 230.0, 230.0))

    >>> v, source = declared_voltage(inp, inp.half_cycles.filter(like="_rms_half").to_numpy().T)
    >>> print(f"{v:.1f} V", source)
    230.9 V capture

    The capture's 400 V line-to-line nominal, as line-to-neutral 400 / sqrt(3) V.
    """
    from ..measure.declared import measured_ll_v, resolve_declared_voltage

    scale = math.sqrt(3.0) if inp.voltage_reference == "LN" else 1.0
    if inp.declared_voltage_ll_v:
        return float(inp.declared_voltage_ll_v / scale), inp.declared_voltage_source
    f_nom = inp.capture.nominal_frequency_hz if inp.capture is not None else None
    decl = resolve_declared_voltage(None, None, measured_ll_v(urms, inp.voltage_reference or "LN"), f_nom)
    if notes is not None:
        notes.append(decl.basis)
    if decl.ll_v is None:
        return float(np.nanmedian(urms)), decl.source
    return float(decl.ll_v / scale), decl.source


def _open_phase_explains(
    inp: DetectionInput, open_phases: tuple[Event, ...], start_s: float, end_s: float | None, low_channels: list[str],
) -> bool:
    """True when an upstream open phase on the line(s) of these channels overlaps the dip.

    An open line on a transformer's primary explains a dip on any secondary
    channel: which secondary voltages collapse depends on the vector group,
    and the named line is the secondary line with the double current, not
    necessarily the depressed one.
    """
    for e in open_phases:
        if e.kind != "open_phase" or not e.overlaps(start_s, end_s):
            continue
        if e.figures.get("location") == "transformer_primary":
            return True
        line = e.phase
        if inp.voltage_reference == "LL":
            nxt = {"A": "B", "B": "C", "C": "A"}
            own = {lab for c, lab in inp.voltage_channels.items() if line in (c, nxt[c])}
        else:
            own = {inp.voltage_channels.get(line, "")}
        if set(low_channels) <= own:
            return True
    return False


def motor_terminal_mask(inp: DetectionInput, open_phases: tuple[Event, ...], t: np.ndarray, labels: list[str]) -> np.ndarray:
    """(n_channels, n_t) bool: the channel is the motor terminal of an open line, not the supply (issue 12).

    While an open phase with the open point upstream of the logger is active,
    the open line's channel (LN; LL: the two channels through it) carries the
    voltage the turning motor regenerates, not the supply's; a Urms(1/2) value
    whose one-cycle window reaches into that stretch is masked.

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(v_rms_v=lambda t: np.where((t >= 1.0) & (t < 1.2), 0.7 * 230.0, 230.0))

    No open phase, so no channel is masked:

    >>> half = inp.half_cycles
    >>> mask = motor_terminal_mask(inp, (), half["t_s"].to_numpy(), ["Va", "Vb", "Vc"])
    >>> print(mask.shape, bool(mask.any()))
    (3, 297) False
    """
    out = np.zeros((len(labels), t.size), dtype=bool)
    nxt = {"A": "B", "B": "C", "C": "A"}
    for e in open_phases:
        if e.kind != "open_phase" or e.figures.get("location") != "upstream":
            continue
        if inp.voltage_reference == "LL":
            own = {lab for c, lab in inp.voltage_channels.items() if e.phase in (c, nxt[c])}
        else:
            own = {inp.voltage_channels.get(e.phase or "", "")}
        end = math.inf if e.end_s is None else e.end_s + inp.cycle_s
        live = (t > e.start_s) & (t < end)
        for k, lab in enumerate(labels):
            if lab in own:
                out[k] |= live
    return out


def _motor_off_at(inp: DetectionInput, t: np.ndarray) -> np.ndarray:
    """For each Urms(1/2) time stamp: True when the cycle there carries no motor current."""
    if not np.isfinite(inp.i_max).any():
        return np.zeros(t.size, dtype=bool)
    k = np.clip(np.searchsorted(inp.t_end_s, t), 0, inp.n - 1)
    return ~inp.energised[k]


@register("dips", needs=("open_phase",))
def detect_dips(inp: DetectionInput, prior: dict) -> Findings:
    """Dips, swells and interruptions (IEC 61000-4-30 5.4, 5.5) with IEEE 1159 categories.

    A dip that an upstream open phase explains (``prior["open_phase"]``) is that event's, not reported again.

    Examples
    --------
    Three seconds of a 400 V, 50 Hz supply that falls to 70 % on all three
    phases from 1.0 s to 1.2 s:

    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(v_rms_v=lambda t: np.where((t >= 1.0) & (t < 1.2), 0.7 * 230.0, 230.0))

    >>> e = detect_dips(inp, {"open_phase": ()}).events[0]
    >>> print(e.kind, round(e.start_s, 3), round(e.end_s, 3), round(e.figures["residual_pct"]), e.figures["ieee1159_category"])
    dip 1.005 1.225 70 instantaneous sag

    The dip starts at the first Urms(1/2) value below 90 % and ends when every
    channel is back above 92 % (IEC 61000-4-30:2015, 5.4.2, threshold plus
    hysteresis); Urms(1/2) is refreshed every half cycle over one cycle, so the
    times lie within a cycle of the change.
    """
    notes: list[str] = []
    shifts = neutral_shifts(inp)  # a zero-sequence voltage with balanced line-to-line voltages: no dip or swell
    notes.extend(s["sentence"] for s in shifts)
    inp = assessed_voltages(inp, notes)
    got = _half_cycle_matrix(inp, notes)
    if got is None:
        return Findings(notes=(*notes, "no voltage channels: dips, swells and interruptions not assessed"))
    t, u, labels = got
    p = inp.params
    udin, udin_src = declared_voltage(inp, u, notes)
    pct = 100.0 * u / udin
    if shifts and inp.voltage_reference == "LN":  # 4-wire: the line-to-neutral values moved with the neutral only
        pct = np.where(shift_mask(shifts, t, inp.cycle_s)[None, :], np.nan, pct)
    terminal = motor_terminal_mask(inp, prior["open_phase"], t, labels)
    if terminal.any():
        pct = np.where(terminal, np.nan, pct)  # the open line's channel is the motor terminal: no supply event there
        for k in np.flatnonzero(terminal.any(axis=1)):
            tk = t[terminal[k]]
            notes.append(f"{labels[k]} from {tk[0]:.3f} s to {tk[-1]:.3f} s is the motor terminal of an open line upstream of the "
                         "logger (the motor's regenerated voltage, see the open_phase event): no dip or swell assessed on it there")
    lo = np.fmin.reduce(pct, axis=0)  # NaN-skipping; NaN where every channel is missing or masked
    hi = np.fmax.reduce(pct, axis=0)
    valid = np.isfinite(lo)
    h = p.hysteresis_pct
    # IEC 61000-4-30 5.4.2.1: dip starts when one channel < threshold, ends when all >= threshold + hysteresis
    in_dip = schmitt(valid & (lo < p.dip_threshold_pct), valid & (lo >= p.dip_threshold_pct + h))
    # IEC 61000-4-30 5.4.2.2: swell starts when one channel > threshold, ends when all <= threshold - hysteresis
    in_swell = schmitt(valid & (hi > p.swell_threshold_pct), valid & (hi <= p.swell_threshold_pct - h))
    # IEC 61000-4-30 5.5: interruption when all channels < threshold, ends when any >= threshold + hysteresis
    in_int = schmitt(valid & (hi < p.interruption_threshold_pct), valid & (hi >= p.interruption_threshold_pct + h))
    n = t.size
    found: list[Event] = []
    interruptions: list[tuple[float, float | None]] = []
    motor_off = _motor_off_at(inp, t)
    notes.extend(inp.reference_notes())  # the motor-current threshold of "de-energised"
    for kind, mask in (("interruption", in_int), ("dip", in_dip), ("swell", in_swell)):
        for a, b in runs(mask):
            start = float(t[a])
            end = None if b >= n else float(t[b])
            if kind == "interruption" and (a == 0 or b >= n) and motor_off[a:b].mean() > 0.9:
                # no voltage and no current at a capture edge: the motor circuit is switched off on the
                # supply side of the logger (or the supply is lost) -- shown as "de-energised", not as an interruption
                interruptions.append((start, end))
                notes.append(
                    f"no voltage and no motor current from {start:.3f} s to {'the end' if end is None else f'{end:.3f} s'}: "
                    "motor circuit de-energised at the logger (switching device or supply); not reported as a supply interruption")
                continue
            end_x = math.inf if end is None else end
            if kind == "dip" and any(s_int <= end_x and start <= (math.inf if e_int is None else e_int) for s_int, e_int in interruptions):
                continue  # the voltage collapse around an interruption or de-energisation is that event's
            seg = pct[:, a:b]
            if kind == "swell":
                mag = float(np.nanmax(seg))
                worst = [labels[int(k)] for k in np.flatnonzero(np.fmax.reduce(seg, axis=1) > p.swell_threshold_pct)]  # fmax: NaN-skipping, a masked row stays NaN
            else:
                mag = float(np.nanmin(seg))
                thr = p.interruption_threshold_pct if kind == "interruption" else p.dip_threshold_pct
                worst = [labels[int(k)] for k in np.flatnonzero(np.fmin.reduce(seg, axis=1) < thr)]
            if kind == "dip" and _open_phase_explains(inp, prior["open_phase"], start, end, worst):
                continue  # an upstream open phase, reported as such
            if kind == "interruption":
                interruptions.append((start, end))
            dur = None if end is None else end - start
            if end is None:
                # still present at the end: the category of what was seen, and no claim beyond it
                seen_s = float(inp.cycles["t_end_s"].iloc[-1]) - start if len(inp.cycles) else 0.0
                cat = ieee1159_category(kind, max(seen_s, 0.0), mag / 100.0, inp.cycle_s)
                if cat != OUTSIDE_IEEE1159:
                    cat += " or longer (still present at the end of the capture)"
            else:
                cat = ieee1159_category(kind, end - start, mag / 100.0, inp.cycle_s)
            phase = None
            if len(worst) == 1 and inp.voltage_reference == "LN":
                phase = next(c for c, lab in inp.voltage_channels.items() if lab == worst[0])
            word = {"dip": "residual", "interruption": "residual", "swell": "peak"}[kind]
            dur_txt = "to the end of the capture" if dur is None else f"for {dur * 1000:.0f} ms" if dur < 1 else f"for {dur:.2f} s"
            found.append(Event(
                kind=kind, phase=phase, start_s=start, end_s=end, detector="dips",
                summary=f"voltage {kind} on {', '.join(worst)} {dur_txt}, {word} {mag:.0f} % of declared ({cat})",
                figures={
                    ("peak_pct" if kind == "swell" else "residual_pct"): mag,
                    ("peak_v" if kind == "swell" else "residual_v"): mag * udin / 100.0,
                    "declared_v": udin, "declared_source": udin_src, "channels": worst,
                    "ieee1159_category": cat, "threshold_pct": {"dip": p.dip_threshold_pct, "swell": p.swell_threshold_pct,
                                                              "interruption": p.interruption_threshold_pct}[kind],
                    "hysteresis_pct": h,
                },
            ))
    return Findings(tuple(found), tuple(notes))
