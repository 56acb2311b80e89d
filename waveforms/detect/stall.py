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

import math

import numpy as np
import pandas as pd
from scipy.signal import welch

from ..measure.sequence import sequence_components
from .context import LINES, DetectionInput, runs, speed_summary
from .pointonwave import refine_onset_s
from .event import Event
from .registry import Findings, register

#: Span of the following cycles whose median a cycle's impedance is compared with in
#: `standstill_index` [s] (our choice: long against the scatter, short against a long stall's drift).
STANDSTILL_AHEAD_S = 0.5

#: Already stalled without a nameplate: largest median power factor taken as locked-rotor-like.
#: Locked-rotor power factors of induction motors run from about 0.15 (large) to 0.5 (small)
#: (from memory; IEEE Std 399 motor-starting studies use such values, no table cited); the
#: bundled 50 hp model draws 0.45.  A lightly loaded running motor is as low, so this is never
#: enough alone (`ROTOR_LINE_DB`).
LOCKED_ROTOR_PF_MAX = 0.55

#: A spectral line of the line current away from the supply harmonics, at least this strong
#: relative to the fundamental [dB] and `ROTOR_LINE_ABOVE_FLOOR_DB` above the spectrum's median
#: floor, is a rotor-speed line (eccentricity sidebands f +/- f_r, rotor-slot harmonics): the
#: rotor turns.  At standstill (slip 1) these lines fall onto the supply frequency and its
#: harmonics (slot-harmonic frequency f (1 +/- k R (1 - s) / p) = f at s = 1; common practice,
#: no source).  Thresholds our choice, no source: running motors show them at -40 to -60 dB.
ROTOR_LINE_DB = -80.0
ROTOR_LINE_ABOVE_FLOOR_DB = 15.0

#: Settling skipped at the capture start (energising transient) for the rotor-line spectrum [s].
SPECTRUM_SKIP_S = 0.3


def energisations(inp: DetectionInput) -> list[tuple[int, int]]:
    """Energised stretches ``[a, b)`` that began inside the capture after at least three cycles without current.

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 0.2, 0.0, 10 + 50 * np.exp(-np.clip(t - 0.2, 0, None) / 0.4)))

    The motor draws current from 0.2 s: one energised stretch, from cycle 9 (the
    cycle holding 0.2 s, 50 Hz) to the end:

    >>> energisations(inp)
    [(9, 149)]
    """
    on = inp.energised
    return [(a, b) for a, b in runs(on, min_len=2, max_gap=2) if a > 0 and not on[max(0, a - 3) : a].any()]


def high_current_mask(inp: DetectionInput) -> tuple[np.ndarray, np.ndarray]:
    """(mask, threshold_a): cycles whose largest line current is in the locked-rotor region.

    With a nameplate: above ``stall_frac_lr`` x the locked-rotor current scaled
    by the supply voltage.  Without one (no rating is derived from the
    capture): above ``stall_ratio_running`` x the capture's running current
    (`DetectionInput.running_ref_a`), and, from each energisation, until the
    current first falls below ``start_frac_inrush`` x that start's inrush
    (its largest one-cycle current in the first five cycles).

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 1.0, 10.0, 60.0))

    >>> mask, threshold_a = high_current_mask(inp)
    >>> print(mask[:3].tolist(), mask[60:63].tolist(), round(float(threshold_a[0]), 1))
    [False, False, False] [True, True, True] 29.9
    """
    i = inp.i_max
    if inp.rated:
        v = np.clip(inp.v_ll_max_ratio, 0.3, 1.2)
        thr = inp.params.stall_frac_lr * inp.locked_rotor_ref_a * v
        return np.isfinite(i) & (i > thr), thr
    p = inp.params
    thr = np.full(inp.n, p.stall_ratio_running * inp.running_ref_a)
    for a, b in energisations(inp):
        k = a + int(np.nanargmax(i[a : min(b, a + 5)]))  # the first cycle may be a partial one
        inrush = float(i[k])
        below = np.flatnonzero(~(i[k:b] >= p.start_frac_inrush * inrush))
        stop = k + int(below[0]) if below.size else b
        thr[a:stop] = np.fmin(thr[a:stop], p.start_frac_inrush * inrush)
    with np.errstate(invalid="ignore"):
        return np.isfinite(i) & (i > thr), thr


def off_before(inp: DetectionInput, a: int, cycles: int = 3) -> bool:
    """True when the motor carried no current in some of the ``cycles`` cycles before index ``a``.

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 1.0, 10.0, 60.0))

    The motor was running before cycle 50, not switched off:

    >>> off_before(inp, 50)
    False
    """
    if a == 0:
        return False
    return not bool(inp.energised[max(0, a - cycles) : a].all())


def runs_on_after(inp: DetectionInput, b: int, cycles: int = 5) -> bool:
    """True when the motor is still energised for the cycles after index ``b`` (False at capture end).

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 1.0, 10.0, 60.0))

    >>> runs_on_after(inp, 50), runs_on_after(inp, len(inp.cycles))
    (True, False)
    """
    if b >= inp.n:
        return False
    return bool(inp.energised[b : b + cycles].all())


def apparent_impedance(inp: DetectionInput, a: int, b: int) -> np.ndarray | None:
    """Per-cycle complex impedance the motor presents over cycles ``[a, b)`` [ohm], or None.

    Three-phase: ``V1 / I1`` (positive sequence; angles are referenced to V1).
    Single-phased (line j dead): the live pair's line-to-line voltage over its
    series current, ``(V_k - V_l) / I_k``.

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 1.0, 10.0, 60.0))

    At locked rotor V/I = 230 V / 60 A = 3.83 ohm at the current's 0.5 rad lag,
    3.83 (cos 0.5 + j sin 0.5) = 3.36 + 1.84j ohm (Ohm's law):

    >>> z = apparent_impedance(inp, 60, 140)
    >>> print(np.round(z[0], 2))
    (3.36+1.84j)
    """
    ph_i = {c: inp.i_phasor(c) for c in LINES}
    if any(v is None for v in ph_i.values()):
        return None
    dead = inp.dead_line[a:b]
    with np.errstate(all="ignore"):
        if dead.any(axis=1).mean() > 0.5:
            j = int(np.argmax(dead.sum(axis=0)))
            k, l_ = LINES[(j + 1) % 3], LINES[(j + 2) % 3]
            if inp.voltage_reference == "LN":
                vk, vl = inp.v_phasor(k), inp.v_phasor(l_)
                if vk is None or vl is None:
                    return None
                v = vk - vl
            elif inp.voltage_reference == "LL":
                v = inp.v_phasor(k)  # LL channel of conductor k is V(k, next k) = V(k, l)
                if v is None:
                    return None
            else:
                return None
            return (v / ph_i[k])[a:b]
        v1 = inp.col("V1")
        if v1 is None:
            return None
        _, i1, _ = sequence_components(ph_i["A"], ph_i["B"], ph_i["C"])  # Fortescue (1918): I1 = (Ia + a Ib + a^2 Ic) / 3
        return (v1 / i1)[a:b]


def standstill_index(inp: DetectionInput, a: int, b: int) -> tuple[int, str]:
    """First cycle of ``[a, b)`` from which the motor's impedance stays at its final (standstill) value.

    While the rotor still turns, the rotor branch r2/s differs from its
    standstill value and the apparent impedance -- above all its angle -- keeps
    moving; once the rotor has stopped it is constant.  The onset is the cycle
    after the last one deviating from the final value by more than the
    tolerance (relative; ``standstill_tol_3ph`` on three phases,
    ``standstill_tol_1ph`` single-phased, where the forward and backward
    fields' rotor terms r2/s and r2/(2-s) cancel to first order in speed, so the
    impedance moves far less; never below five times the plateau's own
    scatter).  Falls back to the first high-current cycle when there are no
    phasors.  (Equivalent-circuit reasoning, common practice, no source.)

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 1.0, 10.0, 60.0))

    The current steps straight to its locked-rotor level, so the impedance is
    constant from the first high-current cycle:

    >>> standstill_index(inp, 51, 149)
    (51, 'impedance constant from the first high-current cycle')
    """
    n = b - a
    single = bool(inp.dead_line[a:b].any(axis=1).mean() > 0.5)
    tol = inp.params.standstill_tol_1ph if single else inp.params.standstill_tol_3ph
    z = apparent_impedance(inp, a, b)
    if z is None or n < 8:
        return a, "high current (no phasors for the impedance test)"
    body = z[: max(1, n - 2)]  # the last cycles may straddle the switching-off
    tail = body[-max(4, body.size // 4):]
    tail = tail[np.isfinite(tail)]
    if tail.size == 0:
        return a, "high current (impedance undefined)"
    zf = complex(np.median(tail.real), np.median(tail.imag))
    # Each cycle against the median of the cycles that follow it (at most STANDSTILL_AHEAD_S): a
    # turning rotor moves the impedance by tens of percent within that span, while the slow drift
    # of a long stall (heating, supply) moves it by far less than the tolerance.  Comparing with the
    # final value alone put the onset of a 30 s stall 14 s late.
    w = max(4, int(round(STANDSTILL_AHEAD_S / inp.cycle_s)))
    ahead = lambda x: pd.Series(x[::-1]).rolling(w, min_periods=1).median().to_numpy()[::-1]  # noqa: E731
    zl = ahead(body.real) + 1j * ahead(body.imag)
    dev = np.abs(body - zl) / abs(zf)
    scatter = np.abs(tail - zf) / abs(zf)
    tol = max(tol, 5.0 * float(np.median(scatter)))
    moving = np.flatnonzero(~(dev <= tol))
    if moving.size == 0:
        return a, "impedance constant from the first high-current cycle"
    return a + int(moving[-1]) + 1, f"impedance settled to its standstill value (within {100 * tol:.0f} %)"


def pull_out_index(inp: DetectionInput, a: int, rise_frac: float = 0.02, lookback_s: float = 10.0) -> int | None:
    """Cycle at which the motor could no longer carry its load: its current starts rising towards locked rotor.

    Looks back from ``a`` (the first cycle in the locked-rotor region) over the
    cycles energised in the same way (three-phase or single-phased on the same
    lines), at most ``lookback_s``: the running level is the median largest-line
    current over its first second (after 0.2 s of settling; the lowest one if it
    is shorter); pull-out is the cycle after the last one within ``rise_frac``
    of the rise (running level to the current at ``a``) above it.  None when
    the motor was not running before (our rule, like the relays' slowdown
    bounds; common practice, no source).

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 1.0, 10.0, 60.0))

    >>> pull_out_index(inp, 51)
    49
    """
    if a <= 0:
        return None
    i = inp.i_max
    lo = max(0, a - int(round(lookback_s / inp.cycle_s)))
    same = inp.energised[lo:a] & (inp.dead_line[lo:a] == inp.dead_line[a]).all(axis=1)
    bad = np.flatnonzero(~same)
    if bad.size:
        lo = lo + int(bad[-1]) + 1
    if a - lo < 3:
        return None
    seg = i[lo:a]
    skip, span = int(round(0.2 / inp.cycle_s)), int(round(1.0 / inp.cycle_s))
    settled = seg[skip : skip + span] if seg.size > skip + span else seg
    floor = float(np.nanmedian(settled)) if seg.size > skip + span else float(np.nanmin(seg))
    rise = float(i[a]) - floor
    if not (np.isfinite(floor) and rise > 0):
        return None
    low = np.flatnonzero(seg <= floor + rise_frac * rise)
    return lo + int(low[-1]) + 1 if low.size else None


def _running_before(inp: DetectionInput, a: int) -> float | None:
    """Median largest line current over the energised, same-state cycles before ``a`` (at most 10 s) [A], or None."""
    lo = max(0, a - int(round(10.0 / inp.cycle_s)))
    same = inp.energised[lo:a] & (inp.dead_line[lo:a] == inp.dead_line[a]).all(axis=1)
    bad = np.flatnonzero(~same)
    if bad.size:
        lo = lo + int(bad[-1]) + 1
    seg = inp.i_max[lo:a]
    seg = seg[np.isfinite(seg)]
    return float(np.median(seg)) if seg.size >= 3 else None


def _dip_just_before(inp: DetectionInput, a: int) -> bool:
    v = inp.v_ll_max_ratio[max(0, a - int(round(2.0 / inp.cycle_s))) : a + 2]
    return bool(v.size and np.nanmin(v) < 0.9)


def rotor_line_db(x_a: np.ndarray, fs_hz: float, f_hz: float) -> tuple[float, float, float]:
    """Strongest current line away from the supply harmonics: (level, floor, frequency).

    ``level`` and ``floor`` in dB relative to the fundamental (the floor is the median of the
    searched band), ``frequency`` in Hz.  Welch spectrum (segments of at most 4 s, half
    overlap; scipy.signal.welch); searched 5 Hz to min(0.45 fs, 1500 Hz), leaving out
    max(2 Hz, 6 bins) around every multiple of ``f_hz``.  Blackman-Harris window (sidelobes
    below -92 dB, Harris 1978), so that the fundamental's leakage is not taken for a line.

    Examples
    --------
    >>> import numpy as np
    >>> fs = 5000.0
    >>> t = np.arange(int(3 * fs)) / fs
    >>> x = 100 * np.sin(2 * np.pi * 60 * t) + 0.3 * np.sin(2 * np.pi * 89 * t)
    >>> level, floor, f = rotor_line_db(x, fs, 60.0)
    >>> round(f), round(level)   # 20 log10(0.3 / 100) = -50.5 dB
    (89, -50)
    """
    x = np.asarray(x_a, float)
    x = np.where(np.isfinite(x), x, 0.0)
    nper = int(min(x.size, 4 * fs_hz))
    fr, p = welch(x, fs_hz, window="blackmanharris", nperseg=nper, noverlap=nper // 2, detrend="constant", scaling="spectrum")
    df = float(fr[1] - fr[0])
    k1 = int(np.argmin(np.abs(fr - f_hz)))
    p1 = float(p[max(0, k1 - 4) : k1 + 5].sum())  # the fundamental's power, its main lobe included
    h = np.round(fr / f_hz)
    band = (fr >= 5.0) & (fr <= min(0.45 * fs_hz, 1500.0)) & ~(np.abs(fr - h * f_hz) <= max(2.0, 6 * df))
    if not band.any() or not p1 > 0:
        return math.nan, math.nan, math.nan
    k = int(np.flatnonzero(band)[int(np.argmax(p[band]))])
    pk = float(p[max(0, k - 4) : k + 5].sum())  # the line's main lobe, as for the fundamental
    return (10 * math.log10(max(pk, 1e-300) / p1), 10 * math.log10(max(float(np.median(p[band])), 1e-300) / p1),
            float(fr[k]))


def stalled_from_start(inp: DetectionInput) -> tuple[Event | None, str | None]:
    """Without a nameplate, a capture that begins with the rotor already locked: (event, note).

    No pre-event running current exists to compare with, so the waveforms alone are judged:
    energised from the first cycle to (nearly) the end at a steady current, a median power factor
    at most `LOCKED_ROTOR_PF_MAX` (locked-rotor-like) and no rotor-speed line in the current
    spectrum (`rotor_line_db`: slip 1).  A stall "judged without a nameplate" when all hold; a
    "not assessed" note when the power factor looks locked but the spectrum cannot be read;
    (None, None) when it is not this case (the current varies, or a rotor line shows the rotor turns).
    The impedance V/I against a rated value (about 1 / (locked-rotor multiple) pu, 0.15-0.2 pu,
    common practice, no source) needs a rating, so it is not used.
    """
    p = inp.params
    on = inp.energised
    if inp.rated or inp.n < 8 or not on[:3].all():
        return None, None
    stop = np.flatnonzero(~on)
    b = int(stop[0]) if stop.size else inp.n
    a = min(b, int(math.ceil(SPECTRUM_SKIP_S / inp.cycle_s)))
    t0, t1 = float(inp.t_start_s[0]), float(inp.t_end_s[b - 1])
    if t1 - t0 < max(p.min_stall_s, 1.0) or b - a < 8:
        return None, None
    seg = inp.i_max[a:b]
    seg = seg[np.isfinite(seg)]
    if seg.size < 8 or not float(np.min(seg)) > 0 or float(np.max(seg)) > 1.15 * float(np.min(seg)):
        return None, None  # the current moves: a start, a load change, an event the other rules judge
    pf = inp.col("PF")
    pf_med = float(np.nanmedian(np.abs(pf[a:b]))) if pf is not None and np.isfinite(pf[a:b]).any() else math.nan
    if not pf_med <= LOCKED_ROTOR_PF_MAX:
        return None, None  # a loaded running motor (or no power factor to judge by)
    med = np.nanmedian(np.where(np.isfinite(inp.i_rms[a:b]), inp.i_rms[a:b], -1.0), axis=0)
    line = max((c for c in inp.current_channels if c in LINES), key=lambda c: float(med[LINES.index(c)]), default=None)
    if inp.capture is None or line is None:
        return None, (f"already-stalled check (no nameplate): not assessed: power factor {pf_med:.2f} is locked-rotor-like, "
                      "but the samples for the rotor-line spectrum are not at hand")
    fs = float(inp.capture.sample_rate_hz)
    lo = int(round(t0 * fs)) + int(round(SPECTRUM_SKIP_S * fs))
    hi = min(inp.capture.n_samples, int(round(t1 * fs)))
    if hi - lo < int(fs):  # under 1 s: too coarse a spectrum to tell a sideband from the fundamental
        return None, "already-stalled check (no nameplate): not assessed: under 1 s of steady current for the spectrum"
    x = inp.capture.read(lo, hi, [inp.current_channels[line]])[0]
    level, floor, f_line = rotor_line_db(x, fs, 1.0 / inp.cycle_s)
    if not math.isfinite(level):
        return None, "already-stalled check (no nameplate): not assessed: no current spectrum"
    if level >= ROTOR_LINE_DB and level - floor >= ROTOR_LINE_ABOVE_FLOOR_DB:
        return None, None  # a rotor line: the rotor turns (a lightly loaded running motor)
    i_med = float(np.median(seg))
    figs = {"i_max_median_a": i_med, "power_factor_median": pf_med, "rotor_line_db": level, "spectrum_floor_db": floor,
            "rotor_line_hz": f_line, "basis": "judged without a nameplate: locked-rotor power factor, no rotor-speed line "
            "in the current spectrum (slip 1)", "judged_without_nameplate": True, "from_energisation": False,
            "present_at_capture_start": True, "single_phased": bool(inp.dead_line[a:b].any(axis=1).mean() > 0.5),
            "rest_s": t0, "pull_out_s": None,
            "ended_by": "capture end" if b >= inp.n else "de-energised"}
    figs.update(speed_summary(inp.speed, t0, None if b >= inp.n else float(inp.t_start_s[b])))
    end_s = None if b >= inp.n else float(inp.t_start_s[b])
    dur = t1 - t0
    ev = Event(kind="stall", phase=None, start_s=t0, end_s=end_s, detector="stall",
               summary=(f"motor already stalled when the capture began (judged without a nameplate): {i_med:.0f} A at power "
                        f"factor {pf_med:.2f}, no rotor-speed line in the current spectrum (strongest {level:.0f} dB, "
                        f"floor {floor:.0f} dB re the fundamental) for {dur:.2f} s"
                        + (" (still stalled at the end of the capture)" if end_s is None else "")),
               figures=figs)
    return ev, None


@register("stall")
def detect_stall(inp: DetectionInput, prior: dict) -> Findings:
    """Stalls (locked rotor) on a healthy or single-phased supply.

    Examples
    --------
    A motor at 10 A (its FLA) whose current rises to 60 A, its locked-rotor
    current, at 1.0 s and stays there:

    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input(i_rms_a=lambda t: np.where(t < 1.0, 10.0, 60.0))

    >>> e = detect_stall(inp, {}).events[0]
    >>> print(e.kind, round(e.start_s, 2), e.end_s, round(e.figures["i_max_median_pu_fla"], 1), round(e.figures["i_over_locked_rotor"], 2))
    stall 1.01 None 6.0 1.0
    """
    notes = inp.reference_notes(locked_rotor=True)
    if not np.isfinite(inp.i_max).any():
        return Findings(notes=(*notes, "no line currents: stall not assessed"))
    if not inp.rated and not np.isfinite(inp.running_ref_a):
        return Findings(notes=(*notes, "no nameplate and no running current: stall not assessed"))
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
        k0, basis = (a, "energised at locked rotor") if started else standstill_index(inp, a, b)
        stall_s = float(inp.t_start_s[k0])
        ch = [inp.current_channels[c] for c in sorted(inp.current_channels)]
        amp = math.sqrt(2.0) * float(np.nanmedian(seg))
        if started and inp.capture is not None and ch:
            t_on = refine_onset_s(inp.capture, ch, (float(inp.t_start_s[max(0, a - 1)]), float(inp.t_end_s[a])), 1.0 / inp.cycle_s, amp)
            if t_on is not None:
                stall_s = t_on
        end_x = float(inp.t_end_s[-1]) if end_s is None else end_s
        if end_x - stall_s < p.min_stall_s:
            continue  # high current, but the rotor kept turning: an overload, not a stall
        if end_s is not None and not ends_running and inp.capture is not None and ch:
            t_off = refine_onset_s(inp.capture, ch, (float(inp.t_start_s[max(0, b - 2)]), float(inp.t_end_s[min(inp.n - 1, b)])), 1.0 / inp.cycle_s, amp)
            if t_off is not None:
                end_s = t_off
        i_med = float(np.nanmedian(seg))
        if inp.rated:
            scale = {"i_max_median_pu_fla": i_med / float(inp.fla_a), "i_over_locked_rotor": i_med / inp.locked_rotor_ref_a,
                     "locked_rotor_a": inp.locked_rotor_ref_a}
        elif started:  # no rating: against the start's own inrush
            inrush = float(np.nanmax(inp.i_max[a : min(b, a + 5)]))
            scale = {"inrush_a": inrush, "i_over_inrush": i_med / inrush, "basis": "no nameplate: current against the start's inrush"}
        else:  # no rating: against the running current before the event
            run_a = _running_before(inp, a)
            scale = {"running_current_a": run_a, "i_over_running": i_med / run_a if run_a else None,
                     "basis": "no nameplate: current against the running current before the event"}
        figs = {
            "i_max_median_a": i_med, **scale, "threshold_a_median": float(np.median(thr[a:b])),
            "single_phased": single, "from_energisation": started,
            "high_current_from_s": float(inp.t_start_s[a]), "stall_onset_basis": basis,
            # issue 12: the two instants of a stall; start_s is the rest instant
            "pull_out_s": None if started or (k_po := pull_out_index(inp, a)) is None else float(inp.t_start_s[k_po]),
            "rest_s": stall_s,
            "ended_by": ("capture end" if end_s is None else "current fell, motor still energised" if ends_running else "de-energised"),
        }
        pf = inp.col("PF")
        if pf is not None and np.isfinite(pf[a:b]).any():
            figs["power_factor_median"] = float(np.nanmedian(np.abs(pf[a:b])))
        figs.update(speed_summary(inp.speed, stall_s, end_s))
        how = "single-phased" if single else "on a three-phase supply"
        cause = "failed to start (locked rotor from energisation)" if started else "stalled while running"
        dur = end_x - stall_s
        dur_txt = f"{dur:.2f} s" + (" (still stalled at the end of the capture)" if end_s is None else "")
        if inp.rated:
            level = f"{figs['i_max_median_pu_fla']:.1f} x FLA ({100 * figs['i_over_locked_rotor']:.0f} % of locked-rotor current)"
        elif started:
            level = f"{i_med:.0f} A, {100 * figs['i_over_inrush']:.0f} % of its initial inrush (no nameplate)"
        else:
            level = (f"{i_med:.0f} A, {figs['i_over_running']:.1f} x the running current before it (no nameplate)"
                     if figs.get("i_over_running") else f"{i_med:.0f} A (no nameplate)")
        out.append(Event(
            kind="stall", phase=None, start_s=stall_s, end_s=end_s, detector="stall",
            summary=f"motor {cause} {how}: {level} for {dur_txt}",
            figures=figs,
        ))
    if not inp.rated and not out:
        ev, note = stalled_from_start(inp)
        if ev is not None:
            out.append(ev)
        if note:
            notes = (*notes, note)
    return Findings(tuple(out), notes)
