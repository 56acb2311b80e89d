"""Events of an RMS trend log, found at the log's resolution (one row per interval).

The same event kinds as the waveform detectors (`waveforms.detect.event.EVENT_KINDS`)
and the same thresholds (`waveforms.detect.DetectParams`), applied to the RMS
values the log gives.  Every event's instants are interval starts: the true
instant lies within one interval (``figures["resolution_s"]``) of ``start_s``
and ``end_s``.  What a trend log cannot show is listed in `LIMITS`.

* **open phase**: one line's current below ``dead_line_frac`` of the larger of the
  other two while those two carry current (above ``energised_frac_fla`` of the
  reference current) and nearly equal (``pair_balance``; with one line open the
  other two carry equal and opposite currents, Kirchhoff's current law).  The
  rise of the live lines over the three-phase level before is reported.  The
  open point (upstream / downstream of the logger) is named only when the open
  line's RMS voltage fell by more than ``upstream_mag_tol``: a motor turning on
  two lines regenerates a voltage of near-normal magnitude on the open line, so
  a small change does not tell the two apart without the phase angles.
* **stall**: the largest line current at or above ``stall_frac_lr`` of the
  locked-rotor current (the nameplate's figure or its NEMA code letter) for at
  least ``min_stall_s``, after running; or for longer than
  ``TrendSettings.start_stall_s`` from energisation.  Not assessed without a nameplate.
* **start**: a row with current after a de-energised row; accelerated when the
  current falls below half the locked-rotor current (half the first interval's
  current without a nameplate) while energised.
* **dip / swell / interruption**: IEC 61000-4-30:2015 clause 5.4.2 (dips and
  swells; polyphase: a dip begins when one channel falls below the threshold and
  ends when every channel is at or above threshold plus hysteresis) and clause
  5.5 (interruption: every channel below its threshold), on the RMS values of
  the log instead of Urms(1/2).  Thresholds in percent of the declared voltage
  (``ImportSettings.nominal_voltage_v``; without one the log's median voltage).
* **unbalance**: the NEMA definition (largest deviation from the mean over the
  mean, NEMA MG 1 clause 14.35, from memory) on the RMS voltages, sustained for
  ``unbalance_min_s`` above ``unbalance_threshold_pct``; rows with an open phase or
  no current are left out (the open phase explains them).

References
----------
IEC 61000-4-30:2015, Testing and measurement techniques - Power quality measurement methods, clauses 5.4 and 5.5.
NEMA MG 1, Motors and Generators, clause 14.35 (voltage unbalance, from memory).
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from ..detect.event import Event
from ..settings import check_fields, setting

#: What a trend log cannot show, said in every trend report and result.json.
LIMITS: tuple[str, ...] = (
    "No onset to the sample: every instant is the start of a log interval; the true instant lies within one interval of it.",
    "No slip or speed: a trend log keeps no current spectrum, so the rotor speed cannot be estimated.",
    "No point-on-wave, inrush peak or half-cycle RMS: a dip or an inrush shorter than the interval is averaged over it "
    "(residual voltages read high, inrush currents low).",
    "No phase angles: sequence components (I2/I1, V2/V1) cannot be computed; unbalance is from RMS magnitudes only.",
    "The open point (upstream or downstream of the logger) is named only when the open line's RMS voltage moved clearly; "
    "otherwise it is not determined.",
    "No thermal model: the motor's thermal state needs the per-cycle currents.",
    "A stall's onset is the first interval at locked-rotor current: between the pull-out and the rotor coming to rest, "
    "which a trend log cannot tell apart.",
)


@dataclasses.dataclass(frozen=True)
class TrendSettings:
    """The trend analysis's own settings (beside the detectors' `DetectParams`)."""

    start_stall_s: float = setting(20.0, "a high-current run from energisation longer than this is a stall, not an acceleration "
                                         "(longer than most direct-on-line starts; common practice, no source) [s]", minimum=0.0,
                                  forward=False)
    min_open_s: float = setting(0.06, "shortest open phase: three cycles at 50 Hz, or one interval if longer [s]", minimum=0.0,
                                forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


def runs(mask: np.ndarray, min_len: int = 1) -> list[tuple[int, int]]:
    """Index pairs [a, b) of the runs of True in ``mask`` at least ``min_len`` long."""
    m = np.concatenate([[0], np.asarray(mask, bool).astype(np.int8), [0]])
    d = np.diff(m)
    a, b = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
    return [(int(x), int(y)) for x, y in zip(a, b, strict=True) if y - x >= min_len]


def nema_unbalance_pct(x: np.ndarray) -> np.ndarray:
    """Largest deviation from the mean over the mean [%], per column of a (3, n) array (NaN where the mean is 0).

    NEMA MG 1 clause 14.35 (from memory): ``100 * max|x_k - mean| / mean``.

    Examples
    --------
    >>> float(nema_unbalance_pct(np.array([[460.0], [467.0], [450.0]]))[0])
    1.9565217391304348
    """
    mean = np.mean(x, axis=0)
    dev = np.max(np.abs(x - mean), axis=0)
    return np.divide(100 * dev, mean, out=np.full(mean.shape, np.nan), where=mean > 0)


@dataclasses.dataclass
class TrendInput:
    """The arrays the trend detectors read (one column per row of the log)."""

    t_s: np.ndarray
    resolution_s: float
    i_a: np.ndarray | None  # (3, n) RMS line currents [A]
    v_v: np.ndarray | None  # (3, n) RMS voltages [V]
    v_ll: bool
    fla_a: float | None
    lra_a: float | None
    declared_v: float | None  # reference for dips, in the same reference as v_v [V]
    declared_basis: str = ""

    @property
    def n(self) -> int:
        return int(self.t_s.size)

    def end_at(self, b: int) -> float | None:
        return None if b >= self.n else float(self.t_s[b])


def current_reference_a(inp: TrendInput) -> tuple[float, str]:
    """The reference current: the FLA, else the log's typical running current (median above 10 % of the largest)."""
    if inp.fla_a:
        return float(inp.fla_a), "nameplate FLA"
    imax = np.nanmax(inp.i_a, axis=0)
    top = float(np.nanmax(imax)) if np.isfinite(imax).any() else 0.0
    on = imax[imax > 0.1 * top]
    return (float(np.median(on)) if on.size else max(top, 1e-9)), "median running current of the log (no nameplate)"


def _fig(inp: TrendInput, **figs: Any) -> dict[str, Any]:
    return {**figs, "resolution_s": inp.resolution_s}


def open_phase(inp: TrendInput, p: Any, s: TrendSettings) -> tuple[list[Event], np.ndarray]:
    """Open-phase events and the per-row mask of rows with a line open."""
    n = inp.n
    any_open = np.zeros(n, bool)
    if inp.i_a is None:
        return [], any_open
    i = inp.i_a
    ref, _ = current_reference_a(inp)
    min_rows = max(1, math.ceil(s.min_open_s / inp.resolution_s - 1e-9))
    out = []
    three = np.all(i > p.energised_frac_fla * ref, axis=0)
    for k, line in enumerate("ABC"):
        o = [j for j in range(3) if j != k]
        hi, lo = np.maximum(i[o[0]], i[o[1]]), np.minimum(i[o[0]], i[o[1]])
        dead = (i[k] < p.dead_line_frac * hi) & (lo > p.energised_frac_fla * ref) & \
               (np.divide(hi - lo, hi, out=np.ones(n), where=hi > 0) <= p.pair_balance)
        for a, b in runs(dead, min_rows):
            any_open[a:b] = True
            live = float(np.median(0.5 * (i[o[0], a:b] + i[o[1], a:b])))
            before = np.flatnonzero(three[:a] & ~dead[:a])[-10:]
            base = float(np.median(np.max(i[:, before], axis=0))) if before.size else math.nan
            figs = _fig(inp, dead_line_current_a=float(np.median(i[k, a:b])), live_line_current_a=live,
                        live_line_current_pu_fla=live / inp.fla_a if inp.fla_a else None,
                        three_phase_current_before_a=base if math.isfinite(base) else None,
                        live_rise_pct=100 * (live / base - 1) if math.isfinite(base) and base > 0 else None,
                        present_at_capture_start=a == 0, onset_basis="first log interval with the line dead")
            figs.update(_location(inp, k, a, b, dead, p))
            if inp.lra_a and live >= p.stalled_single_phase_frac * inp.lra_a:
                figs["motor_state"] = "single-phased, stalled"
            else:
                figs["motor_state"] = "running single-phased"
            end = inp.end_at(b)
            rise = "" if figs["live_rise_pct"] is None else f", the other two up {figs['live_rise_pct']:.0f} %"
            out.append(Event("open_phase", line, float(inp.t_s[a]), end,
                             f"line {line} open (current {figs['dead_line_current_a']:.2f} A, others {live:.1f} A{rise}) "
                             f"at log resolution {inp.resolution_s:g} s" + ("" if end is not None else ", still open at the end of the log"),
                             figs, "trend_open_phase"))
    return out, any_open


def _location(inp: TrendInput, k: int, a: int, b: int, dead: np.ndarray, p: Any) -> dict[str, Any]:
    if inp.v_v is None or inp.v_ll:
        return {"location": "not determined", "location_reason": "no line-to-neutral RMS voltages in the log"}
    before = np.flatnonzero(~dead[:a])[-10:]
    if not before.size:
        return {"location": "not determined", "location_reason": "no interval before the open phase to compare with"}
    v0, v1 = float(np.median(inp.v_v[k, before])), float(np.median(inp.v_v[k, a:b]))
    change = abs(v1 / v0 - 1) if v0 > 0 else math.nan
    if math.isfinite(change) and change > p.upstream_mag_tol:
        return {"location": "upstream", "open_line_voltage_change_pu": change,
                "location_reason": f"the open line's RMS voltage moved {100 * change:.1f} % (more than {100 * p.upstream_mag_tol:.0f} %): "
                                   "the logger sees the motor's regenerated voltage"}
    return {"location": "not determined", "open_line_voltage_change_pu": change,
            "location_reason": f"the open line's RMS voltage moved only {100 * change:.1f} %: downstream of the logger, or upstream "
                               "with a near-normal regenerated voltage; the phase angles that tell them apart are not in a trend log"}


def starts_and_stalls(inp: TrendInput, p: Any, s: TrendSettings, open_rows: np.ndarray) -> tuple[list[Event], list[Event], list[str]]:
    """Start attempts and stalls (stalls only with a locked-rotor current)."""
    notes: list[str] = []
    if inp.i_a is None:
        return [], [], ["no RMS currents in the log: starts, stalls and open phases not assessed"]
    imax = np.nanmax(inp.i_a, axis=0)
    ref, basis = current_reference_a(inp)
    on = imax > p.energised_frac_fla * ref
    lra = inp.lra_a
    if lra is None:
        notes.append("stall not assessed: no nameplate, so the locked-rotor current is unknown")
    high = np.zeros(inp.n, bool) if lra is None else imax >= p.stall_frac_lr * lra
    starts, stalls = [], []
    stall_rows = max(1, math.ceil(p.min_stall_s / inp.resolution_s - 1e-9))
    start_rows = max(1, math.ceil(s.start_stall_s / inp.resolution_s - 1e-9))
    energ = [a for a, _ in runs(on) if a > 0]
    for a in energ:
        b = next((y for x, y in runs(on) if x == a), inp.n)
        first = float(imax[a])
        settle = 0.5 * lra if lra else 0.5 * first
        low = np.flatnonzero(imax[a:b] < settle)
        high_rows = int(low[0]) if low.size else b - a
        success = bool(low.size) and high_rows < start_rows
        figs = _fig(inp, inrush_rms_a=first, inrush_pu_fla=first / ref if inp.fla_a else None, success=success,
                    in_progress_at_capture_start=False, current_reference=basis,
                    inrush_note="RMS over the first log interval: lower than the true inrush when the interval is longer than the acceleration")
        if success:
            end = float(inp.t_s[a + high_rows])
            figs["acceleration_time_s"] = end - float(inp.t_s[a])
            summary = f"start: accelerated within {figs['acceleration_time_s']:.3g} s (log resolution {inp.resolution_s:g} s)"
        else:
            end = inp.end_at(a + high_rows) if low.size else inp.end_at(b)
            figs["acceleration_time_s"] = None
            why = "still at high current at the end of the log" if end is None else (
                "de-energised before accelerating" if not low.size else f"high current for {high_rows * inp.resolution_s:.3g} s")
            summary = f"failed start: {why}"
        starts.append(Event("start", None, float(inp.t_s[a]), end, summary, figs, "trend_start"))
    for a, b in runs(high, stall_rows):
        from_energ = bool(a > 0 and not on[a - 1])
        if from_energ and (b - a) < start_rows:
            continue  # an acceleration (or one still under way at the end of the log), not a stall
        seg = imax[a:b]
        figs = _fig(inp, i_max_median_a=float(np.median(seg)), i_max_median_pu_fla=float(np.median(seg)) / ref if inp.fla_a else None,
                    i_over_locked_rotor=float(np.median(seg)) / lra, locked_rotor_a=lra, from_energisation=bool(from_energ),
                    single_phased=bool(open_rows[a:b].any()), onset_basis="first log interval at locked-rotor level",
                    ended_by="log end" if b >= inp.n else ("de-energised" if not on[b] else "current fell, motor still energised"))
        end = inp.end_at(b)
        stalls.append(Event("stall", None, float(inp.t_s[a]), end,
                            f"stall: {figs['i_over_locked_rotor'] * 100:.0f} % of locked-rotor current for "
                            f"{'at least ' if end is None else ''}{(b - a) * inp.resolution_s:.3g} s (log resolution {inp.resolution_s:g} s)",
                            figs, "trend_stall"))
    return starts, stalls, notes


def supply_events(inp: TrendInput, p: Any) -> list[Event]:
    """Dips, swells and interruptions per IEC 61000-4-30 clauses 5.4.2 and 5.5, on the RMS values of the log."""
    if inp.v_v is None or not inp.declared_v:
        return []
    pct = 100 * inp.v_v / inp.declared_v
    lo, hi = np.min(pct, axis=0), np.max(pct, axis=0)
    out: list[Event] = []
    h = p.hysteresis_pct
    # dip: begins when one channel < threshold, ends when every channel >= threshold + hysteresis (5.4.2.2)
    for a, b in _hysteresis_runs(lo < p.dip_threshold_pct, lo >= p.dip_threshold_pct + h):
        seg = pct[:, a:b]
        residual = float(np.min(seg))
        # interruption: every channel below the interruption threshold at some interval (5.5.2)
        interrupted = bool((np.max(seg, axis=0) < p.interruption_threshold_pct).any())
        kind = "interruption" if interrupted else "dip"
        phases = "".join(c for k, c in enumerate("ABC") if (seg[k] < p.dip_threshold_pct).any())
        figs = _fig(inp, residual_pct=residual, depth_pct=100 - residual, declared_v=inp.declared_v,
                    declared_basis=inp.declared_basis, threshold_pct=p.dip_threshold_pct, hysteresis_pct=h,
                    phases=phases, standard="IEC 61000-4-30:2015 clause 5.4.2 / 5.5 on the log's RMS values (not Urms(1/2))",
                    residual_note="RMS over a log interval: a dip shorter than the interval reads shallower than it was")
        end = inp.end_at(b)
        out.append(Event(kind, phases if len(phases) == 1 else None, float(inp.t_s[a]), end,
                         f"{kind}: residual {residual:.1f} % of {inp.declared_v:.1f} V on {phases or 'all lines'} "
                         f"(log resolution {inp.resolution_s:g} s)", figs, "trend_dips"))
    # swell: begins when one channel > threshold, ends when every channel <= threshold - hysteresis (5.4.2.2)
    for a, b in _hysteresis_runs(hi > p.swell_threshold_pct, hi <= p.swell_threshold_pct - h):
        peak = float(np.max(pct[:, a:b]))
        figs = _fig(inp, max_pct=peak, declared_v=inp.declared_v, declared_basis=inp.declared_basis,
                    threshold_pct=p.swell_threshold_pct, hysteresis_pct=h)
        out.append(Event("swell", None, float(inp.t_s[a]), inp.end_at(b),
                         f"swell: up to {peak:.1f} % of {inp.declared_v:.1f} V (log resolution {inp.resolution_s:g} s)", figs, "trend_dips"))
    return out


def _hysteresis_runs(begin: np.ndarray, release: np.ndarray) -> list[tuple[int, int]]:
    """[a, b) from a row where ``begin`` holds to the first later row where ``release`` holds (loop over events only)."""
    starts = np.flatnonzero(begin)
    rel = np.flatnonzero(release)
    out = []
    k = 0
    while k < starts.size:
        a = int(starts[k])
        j = int(np.searchsorted(rel, a, side="right"))
        b = int(rel[j]) if j < rel.size else begin.size
        out.append((a, b))
        k = int(np.searchsorted(starts, b, side="left"))
    return out


def unbalance(inp: TrendInput, p: Any, open_rows: np.ndarray) -> list[Event]:
    """Sustained voltage unbalance (NEMA definition on the RMS voltages), outside open-phase rows."""
    if inp.v_v is None:
        return []
    from ..detect.unbalance import extra_temperature_rise_pct, nema_derating_factor

    vu = nema_unbalance_pct(inp.v_v)
    iu = nema_unbalance_pct(inp.i_a) if inp.i_a is not None else np.full(inp.n, np.nan)
    if inp.i_a is not None:
        ref, _ = current_reference_a(inp)
        energised = np.nanmax(inp.i_a, axis=0) > p.energised_frac_fla * ref
    else:
        energised = np.ones(inp.n, bool)
    hot = (vu > p.unbalance_threshold_pct) & ~open_rows
    min_rows = max(1, math.ceil(p.unbalance_min_s / inp.resolution_s - 1e-9))
    out = []
    for a, b in runs(hot, min_rows):
        mean = float(np.mean(vu[a:b]))
        i_seg = iu[a:b][energised[a:b]]
        figs = _fig(inp, v_unbal_nema_pct_mean=mean, v_unbal_nema_pct_max=float(np.max(vu[a:b])),
                    I_unbal_nema_pct_mean=float(np.mean(i_seg)) if i_seg.size else None,
                    nema_derating_factor=float(nema_derating_factor(mean)),
                    extra_temperature_rise_pct=float(extra_temperature_rise_pct(mean)),
                    threshold_pct=p.unbalance_threshold_pct,
                    basis="line-to-line RMS voltages" if inp.v_ll else "line-to-neutral RMS voltages (phase-voltage unbalance)")
        out.append(Event("unbalance", None, float(inp.t_s[a]), inp.end_at(b),
                         f"voltage unbalance {mean:.2f} % (NEMA definition on RMS values) for "
                         f"{(b - a) * inp.resolution_s:.3g} s (log resolution {inp.resolution_s:g} s)", figs, "trend_unbalance"))
    return out


def detect_trend_events(inp: TrendInput, p: Any, s: TrendSettings) -> tuple[list[Event], list[str]]:
    """Every trend event (open phase, stall, start, dip, swell, interruption, unbalance), in time order, and notes."""
    opens, open_rows = open_phase(inp, p, s)
    starts, stalls, notes = starts_and_stalls(inp, p, s, open_rows)
    events = opens + stalls + starts + supply_events(inp, p) + unbalance(inp, p, open_rows)
    events.sort(key=lambda e: (e.start_s, e.kind))
    return events, notes
