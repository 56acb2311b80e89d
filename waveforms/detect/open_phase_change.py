"""Open phase found from what changes at its onset, where no line current goes dead (issue 19).

`waveforms.detect.open_phase` needs one line current to fall to nothing.  At a
real site another load often keeps current on the open line: a capacitor bank
between the logger and the open point, a second motor on the logged feeder, or
an open line on a transformer's primary, which leaves three live secondary
lines.  What still gives the open phase away is the *change* across its onset,
in one-cycle phasors taken from the samples just before and just after it
(`waveforms.detect.open_phase.window_phasors`, one common frame):

1. **Onset.**  The negative-sequence current ``|I2|`` (Fortescue) steps up and
   stays up: a motor that loses one line runs on one line-to-line voltage, and
   its current then has ``I2 = -I1`` (one line at zero, the other two equal
   and opposite, Kirchhoff's current law), a step of the order of its whole
   current.  A steady load, a load step or a start changes ``I1`` but barely
   ``I2``.
2. **Who made the change: the negative-sequence impedance seen at the logger.**
   ``z2 = dV2 / dI2`` (change of the negative-sequence voltage over the change
   of the negative-sequence current, currents counted towards the load).  A
   change drawn *below* the logger (an open line there) pulls ``V2`` only
   through the supply's impedance: ``dV2 = -Zs dI2``, small, with a negative
   reactance part (``Zs`` is inductive).  A change imposed from *above* (a
   supply unbalance, a dip, an open line upstream) drives the passive motor:
   ``dV2 = +Z2 dI2``, with ``Z2`` the motor's negative-sequence impedance
   (about its locked-rotor impedance), inductive.  This is the reasoning of a
   negative-sequence directional element (Fortescue's components with the
   sign convention of protection practice; common practice, no source).
3. **Below the logger: the lost branch.**  Kirchhoff's current law at the
   logger point: ``I_logger = I_lost_branch + I_other``.  With the other load
   unchanged across the onset (its voltages barely move: step 2), the change of
   the logged currents *is* the change of the lost branch: before, a balanced
   motor current ``m (1, a^2, a)``; after, zero on the open line ``X`` and
   ``+s, -s`` on the other two.  So ``m = -dI_X / e_X`` (the branch's current
   before the onset on the open line, inferred from the change of the logged
   current there) and ``s`` follows from the next line.  The open line is the
   one for which ``m`` is a motoring current (lagging its voltage by 0-90 deg)
   and ``s`` a motoring single-phase current (lagging the line-to-line voltage
   that drives it) of about ``sqrt(3)`` times ``m`` (1-3.5 accepted).  The
   current left on line ``X``, ``I_X`` after the onset, is the other load's,
   unchanged at its own impedance: its angle to ``V_X`` says capacitive,
   inductive (a motor) or resistive.
4. **Above the logger.**  Either one line's current falls to the reactive
   current of what lies beyond the open point (a capacitor bank at the motor
   terminals circulating through the open lead: the line carries less than
   half the others' current and almost no real power), or the currents split
   about 2:1:1 with the two small ones in phase -- the open line is on the
   primary of a delta-wye (or wye-delta) transformer (no dead line; the
   secondary line carrying the double current is named; which primary line
   opened depends on the vector group).  A change imposed from above that
   shows neither is a supply disturbance (a dip or an unbalance), left to
   those detectors, and never an open phase.

Without voltage channels step 2 cannot be made and the lags of step 3
cannot be judged: the three lines' solutions then differ only by 120 deg
rotations of ``m``, and the right one is the one within 60 deg of the logged
current on that line before the onset (the lost branch was part of it); the
location is "cannot be told".  All thresholds are our
choices (common practice, no source).

References
----------
.. [1] C. L. Fortescue, "Method of symmetrical co-ordinates applied to the
   solution of polyphase networks", AIEE Transactions 37 (1918): the sequence
   components (operator ``a = 1 /120 deg``).
.. [2] Kirchhoff's current law at a node (any circuits textbook, e.g.
   Alexander & Sadiku, *Fundamentals of Electric Circuits*; chapter from memory).
"""

from __future__ import annotations

import cmath
import math

import numpy as np
import pandas as pd

from ..measure.sequence import A as _A
from ..measure.sequence import sequence_components
from .context import LINES, DetectionInput, runs
from .pointonwave import refine_onset_s

#: Negative-sequence current step that marks an onset, as a fraction of the positive-sequence current before [-] (our choice)
I2_STEP_FRAC = 0.25
#: Cycles averaged on each side of a step in the per-cycle scan (our choice)
SCAN_CYCLES = 6
#: |z2| below this (per unit of V1/I1 before) counts as "V2 did not move": the change was drawn below the logger (our choice)
Z2_STIFF_PU = 0.03
#: Accepted ratio of the lost branch's single-phase current to its three-phase current before (sqrt 3 at the same
#: shaft power, more as the slip grows; our band, common practice, no source)
SINGLE_PHASE_RATIO = (1.0, 3.5)
#: Lag band of a motoring current behind its driving voltage [deg] (0-90, with a margin; common practice)
MOTORING_LAG_DEG = (-15.0, 100.0)
#: Without voltages: the lost branch's current before the onset within this angle of the logged current [deg] (our choice)
BRANCH_VS_LOGGED_DEG = 60.0
#: Upstream open line: its current below this fraction of the larger other one, its real power below this share [-]
UPSTREAM_CURRENT_FRAC = 0.35
UPSTREAM_POWER_SHARE = 0.1
#: Transformer primary: the large current over each small one, and the small ones' angle apart [-], [deg] (2:1:1 ideal)
SPLIT_RATIO = (1.6, 2.5)
SPLIT_ANGLE_DEG = 25.0
SPLIT_SMALL_RATIO = 1.25
#: An upstream open line leaves V2/V1 at least this high at the logger [%] (our choice; a supply unbalance of this
#: size is beyond what NEMA MG-1 allows a motor to run on)
UPSTREAM_V2_PCT = 5.0
#: Upstream calls need the condition to last this long [s]: a dip passes, an open line stays (our choice)
UPSTREAM_MIN_S = 0.5


def _sequence(x: np.ndarray, op: complex) -> tuple[complex, complex, complex]:
    """Zero, positive and negative sequence of three phasors (Fortescue [1]); ``op`` = a (A-B-C) or a^2 (A-C-B)."""
    xa, xb, xc = complex(x[0]), complex(x[1]), complex(x[2])
    # an A-C-B rotation is the standard matrix with lines B and C swapped
    z, p, n = sequence_components(xa, xb, xc) if op == _A else sequence_components(xa, xc, xb)
    return complex(z), complex(p), complex(n)


def step_candidates(inp: DetectionInput) -> list[tuple[int, int]]:
    """Cycles where ``|I2|`` steps up by more than `I2_STEP_FRAC` of ``|I1|`` before and stays up (vectorised scan).

    The step at cycle ``k`` compares the median of ``SCAN_CYCLES`` cycles from
    ``k + 2`` with the median of ``SCAN_CYCLES`` cycles ending at ``k - 1``;
    each run ``[a, b)`` of qualifying cycles is returned: the onset lies in
    cycles ``a .. b + 1``.

    Examples
    --------
    A balanced cycle table whose negative-sequence current jumps from 0 to
    10 A at cycle 50 (positive sequence 10 A throughout):

    >>> import numpy as np
    >>> import pandas as pd
    >>> n = 100
    >>> t = np.arange(n) / 50.0
    >>> cyc = pd.DataFrame({"t_s": t, "I1": np.full(n, 10.0), "I2": np.where(np.arange(n) >= 50, 10.0, 0.0),
    ...                     **{f"I{c}_mag": np.full(n, 10.0) for c in "abc"}})
    >>> step_candidates(DetectionInput(cyc, fla_a=10.0))
    [(45, 54)]
    """
    i1, i2 = inp.col("I1"), inp.col("I2")
    if i1 is None or i2 is None or inp.n < 2 * SCAN_CYCLES + 4:
        return []
    w = SCAN_CYCLES
    s2, s1 = pd.Series(i2), pd.Series(i1)
    before2 = s2.rolling(w, min_periods=w // 2).median().shift(1).to_numpy()
    before1 = s1.rolling(w, min_periods=w // 2).median().shift(1).to_numpy()
    after2 = s2[::-1].rolling(w, min_periods=w // 2).median()[::-1].shift(-2).to_numpy()
    with np.errstate(invalid="ignore"):
        step = after2 - before2
        hot = np.isfinite(step) & (step > I2_STEP_FRAC * before1) & (before1 > inp.params.energised_frac_fla * inp.current_ref_a)
    return runs(hot)


def _read_phasors(inp: DetectionInput, onset_s: float, n_post: int = 4) -> dict | None:
    """Phasors before (3 cycles, ending a cycle before the onset) and after (``n_post`` cycles from 2 cycles after).

    Voltages are returned line-to-neutral (LL channels: their line-to-neutral
    equivalent with no zero sequence, ``Va = (Vab - Vca) / 3``).
    """
    from .open_phase import window_phasors

    cap = inp.capture
    if cap is None or not inp.has_three_currents:
        return None
    fs, f = float(cap.sample_rate_hz), 1.0 / inp.cycle_s
    n_cyc = int(round(fs / f))
    k0 = int(round(onset_s * fs))
    pre_first, post_first = k0 - 4 * n_cyc, k0 + 2 * n_cyc
    lo, hi = pre_first, post_first + n_post * n_cyc
    if lo < 0 or hi > cap.n_samples:
        return None
    ilab = [inp.current_channels[c] for c in LINES]
    have_v = len(inp.voltage_channels) == 3
    vlab = [inp.voltage_channels[c] for c in LINES] if have_v else []
    x = cap.read(lo, hi, vlab + ilab)
    if not np.isfinite(x).all():
        return None
    pre = window_phasors(x, fs, f, 0, 3)
    post = window_phasors(x, fs, f, post_first - lo, n_post)
    out = {"i_pre": pre[-3:].mean(axis=1), "i_post": post[-3:].mean(axis=1), "v_pre": None, "v_post": None}
    if have_v:
        vp, vq = pre[:3].mean(axis=1), post[:3].mean(axis=1)
        if inp.voltage_reference == "LL":
            vp, vq = (vp - np.roll(vp, 1)) / 3, (vq - np.roll(vq, 1)) / 3  # Va = (Vab - Vca) / 3 (no zero sequence)
        out["v_pre"], out["v_post"] = vp, vq
    return out


def _lag_deg(v: complex, i: complex) -> float:
    return math.degrees(cmath.phase(v / i)) if abs(i) > 0 and abs(v) > 0 else math.nan


def lost_branch(i_pre: np.ndarray, i_post: np.ndarray, v_pre: np.ndarray | None, op: complex) -> list[dict]:
    """For each line X: the branch that lost X as the change of the logged currents implies (Kirchhoff [2]).

    Model: ``dI = s w_X - m e`` with ``e = (1, op^2, op)`` the balanced set
    (``op`` = a for A-B-C) and ``w_X`` = 0 on X, +1 on the next line, -1 on the
    one after.  ``m = -dI_X / e_X``; ``s = dI_Y + m e_Y``.  Returned per line:
    ``branch_current_before_a`` (``|m|``), ``single_phase_current_a`` (``|s|``),
    their ratio, the lags (with voltages), the current left on X
    (``remaining_current_a``, the other load's) and ``plausible``.

    Examples
    --------
    A balanced 10 A motor current lagging 30 deg, plus a 5 A capacitor current
    leading 90 deg; line C of the motor opens and its other two lines carry
    17 A in antiphase, lagging V_AB by 40 deg:

    >>> import numpy as np
    >>> a = np.exp(2j * np.pi / 3)
    >>> e = np.array([1, a * a, a])
    >>> v = 230 * e
    >>> cap = 5 * 1j * e
    >>> motor_pre = 10 * np.exp(-1j * np.radians(30)) * e
    >>> s = 17 * np.exp(-1j * np.radians(40)) * (v[0] - v[1]) / abs(v[0] - v[1])
    >>> motor_post = np.array([s, -s, 0])
    >>> fits = lost_branch(cap + motor_pre, cap + motor_post, v, a)
    >>> [f["line"] for f in fits if f["plausible"]]
    ['C']
    >>> c = fits[2]
    >>> print(round(c["branch_current_before_a"], 2), round(c["single_phase_current_a"], 2), round(c["remaining_current_a"], 2))
    10.0 17.0 5.0
    """
    e = np.array([1.0, op * op, op])
    di = i_post - i_pre
    out = []
    for j, line in enumerate(LINES):
        y, z = (j + 1) % 3, (j + 2) % 3
        m = complex(-di[j] / e[j])  # the lost branch's current on line A before the onset (balanced set)
        s = complex(di[y] + m * e[y])
        ratio = abs(s) / abs(m) if abs(m) > 0 else math.inf
        fig: dict = {"line": line, "branch_current_before_a": abs(m), "single_phase_current_a": abs(s),
                     "single_phase_ratio": ratio, "remaining_current_a": float(abs(i_post[j]))}
        ok = SINGLE_PHASE_RATIO[0] <= ratio <= SINGLE_PHASE_RATIO[1]
        if v_pre is None:
            # no voltage to judge the lags by: the three lines' solutions differ by 120 deg rotations of m, and the
            # right one is the lost branch's share of the logged current before the onset, so near it in angle
            rel = math.degrees(cmath.phase(m * e[j] / complex(i_pre[j]))) if abs(i_pre[j]) > 0 and abs(m) > 0 else math.nan
            fig["branch_vs_logged_deg"] = rel
            ok = ok and abs(rel) <= BRANCH_VS_LOGGED_DEG
        if v_pre is not None:
            lag_m = _lag_deg(complex(v_pre[j]), m * e[j])
            lag_s = _lag_deg(complex(v_pre[y] - v_pre[z]), s)
            fig["branch_lag_deg"], fig["single_phase_lag_deg"] = lag_m, lag_s
            ok = ok and MOTORING_LAG_DEG[0] <= lag_m <= MOTORING_LAG_DEG[1] and MOTORING_LAG_DEG[0] <= lag_s <= MOTORING_LAG_DEG[1]
            if abs(i_post[j]) > 0:
                fig["remaining_lag_deg"] = _lag_deg(complex(v_pre[j]), complex(i_post[j]))
        fig["plausible"] = bool(ok)
        out.append(fig)
    return out


def _remaining_kind(lag_deg: float | None) -> str:
    if lag_deg is None or not math.isfinite(lag_deg):
        return "unknown"
    if lag_deg < -60:
        return "capacitive (a capacitor bank)"
    if lag_deg > 20:
        return "inductive (another motor or inductive load)"
    return "mainly resistive"


def _two_one_one(i: np.ndarray) -> tuple[int, list[float], float] | None:
    """The 2:1:1 split: (index of the large line, magnitudes over the smaller small one, the small ones' angle apart [deg]).

    Two currents about equal (within `SPLIT_SMALL_RATIO`) and in phase (within
    `SPLIT_ANGLE_DEG`), the third about twice as large (`SPLIT_RATIO`) -- and,
    by Kirchhoff's current law, their sum reversed.  None when no line fits.
    """
    mags = np.abs(i)
    for j in range(3):
        k, m = (j + 1) % 3, (j + 2) % 3
        small, big = min(mags[k], mags[m]), max(mags[k], mags[m])
        if small <= 0:
            continue
        apart = abs(math.degrees(cmath.phase(complex(i[k]) / complex(i[m]))))
        if SPLIT_RATIO[0] <= mags[j] / big and mags[j] / small <= SPLIT_RATIO[1] and big / small <= SPLIT_SMALL_RATIO and apart <= SPLIT_ANGLE_DEG:
            return j, [float(x / small) for x in mags], apart
    return None


def assess_change(inp: DetectionInput, onset_s: float, ph: dict) -> dict | None:
    """The open-phase call at one onset: the line, the location and the figures behind it; None when it is not one."""
    op = _A
    if "phase_sequence" in inp.cycles:
        vals = inp.cycles["phase_sequence"].astype(str)
        if (vals == "ACB").sum() > (vals == "ABC").sum():
            op = _A.conjugate()
    i_pre, i_post, v_pre, v_post = ph["i_pre"], ph["i_post"], ph["v_pre"], ph["v_post"]
    di = i_post - i_pre
    _, i1p, i2p = _sequence(i_pre, op)
    _, i1q, i2q = _sequence(i_post, op)
    figs: dict = {"detection": "change at onset", "i2_i1_pct_before": 100 * abs(i2p) / abs(i1p) if abs(i1p) else math.nan,
                  "i2_i1_pct_after": 100 * abs(i2q) / abs(i1q) if abs(i1q) else math.nan,
                  "delta_i_a": [float(abs(x)) for x in di], "delta_i_ang_deg": [float(np.degrees(np.angle(x))) for x in di]}
    direction = None
    if v_pre is not None:
        _, v1p, v2p = _sequence(v_pre, op)
        _, v1q, v2q = _sequence(v_post, op)
        d_i2, d_v2 = i2q - i2p, v2q - v2p
        z_base = abs(v1p) / abs(i1p) if abs(i1p) > 0 else math.nan
        z2 = d_v2 / d_i2 if abs(d_i2) > 0 else complex(math.nan, math.nan)
        z2_pu = z2 / z_base
        figs.update({"v2_v1_pct_before": 100 * abs(v2p) / abs(v1p), "v2_v1_pct_after": 100 * abs(v2q) / abs(v1q),
                     "negative_sequence_impedance_pu": [z2_pu.real, z2_pu.imag],
                     "negative_sequence_impedance_basis": "dV2/dI2 across the onset, per unit of V1/I1 before"})
        below = abs(z2_pu) < Z2_STIFF_PU or z2_pu.imag < 0
        direction = "below" if below else "above"
        figs["change_drawn"] = "below the logger" if below else "above the logger (imposed on the motor)"
    fits = lost_branch(i_pre, i_post, v_pre, op)
    figs["lost_branch_fits"] = [{k: v for k, v in f.items() if k != "line"} | {"line": f["line"]} for f in fits]
    if direction in (None, "below"):
        good = [f for f in fits if f["plausible"]]
        if len(good) != 1:
            return None
        f = good[0]
        line = f["line"]
        j = LINES.index(line)
        live = max(abs(i_post[(j + 1) % 3]), abs(i_post[(j + 2) % 3]))
        figs["inferred_branch_current_a"] = f["branch_current_before_a"]
        figs["single_phase_current_a"] = f["single_phase_current_a"]
        figs["remaining_current_a"] = f["remaining_current_a"]
        kind = _remaining_kind(f.get("remaining_lag_deg"))
        figs["remaining_load"] = kind
        figs["branch_inferred"] = (
            f"line {line} still carries {f['remaining_current_a']:.1f} A after the onset ({100 * f['remaining_current_a'] / live:.0f} % "
            f"of the other lines): the current of other equipment on the logged circuit, {kind}, unchanged at its own impedance; "
            f"the lost branch's current before the onset, {f['branch_current_before_a']:.1f} A on each line, is the change of the "
            f"logged line-{line} current (Kirchhoff's current law at the logger point, the other load unchanged), and it then "
            f"carries {f['single_phase_current_a']:.1f} A single-phased on the other two lines "
            f"({f['single_phase_ratio']:.2f} x, a single-phased motor draws about sqrt 3 x)")
        split = _two_one_one(i_post)
        if split is not None:
            # the change drawn below the logger, yet the 2:1:1 split of a transformer primary: the winding currents of a
            # delta motor with one line open (the two windings in series carry 1/3, the third 2/3 of the line current)
            figs["current_split"] = split[1]
            figs["winding_current_pattern"] = (
                "the currents split 2:1:1 while the change was drawn below the logger: the pattern of a delta motor's winding "
                "currents with one line open; if the clamps are on the six leads of the windings, the channels are winding "
                "currents, not line currents, and the branch figures above do not apply")
        if direction is None:
            figs.update({"location": "unknown", "location_reason": "cannot be told: no voltage channels, so the change cannot "
                         "be placed above or below the logger; the current change alone fits a branch losing line " + line})
        else:
            z = figs["negative_sequence_impedance_pu"]
            figs.update({"location": "downstream", "location_reason": (
                f"the negative-sequence current jumped (I2/I1 {figs['i2_i1_pct_before']:.0f} -> {figs['i2_i1_pct_after']:.0f} %) "
                f"while the negative-sequence voltage barely moved (V2/V1 {figs['v2_v1_pct_before']:.1f} -> "
                f"{figs['v2_v1_pct_after']:.1f} %, dV2/dI2 = {z[0]:.3f}{z[1]:+.3f}j pu, the supply's impedance seen backwards): "
                "the unbalance is drawn below the logger, by the lost branch")})
        return figs | {"line": line}
    # imposed from above: an open line upstream (the logger sees what lies beyond it) or on a transformer primary
    if figs["v2_v1_pct_after"] < UPSTREAM_V2_PCT:
        return None
    return imposed_from_above(figs, i_post, v_post)


def imposed_from_above(figs: dict, i_post: np.ndarray, v_post: np.ndarray) -> dict | None:
    """The open-line calls for an unbalance imposed from above the logger: a transformer primary or an upstream line.

    ``figs`` must hold ``v2_v1_pct_after`` [%]; ``i_post`` and ``v_post`` are
    the current and line-to-neutral voltage phasors [A, V] with the line open.
    ``figs["detection"]`` says what is judged (the change at an onset, or the
    steady currents at the start of a stretch) and words the reasons.
    Returns ``figs`` updated with ``location``, ``line`` and the reasons, or
    None when neither pattern fits (a supply disturbance, left to the dip and
    unbalance detectors).
    """
    what = "the change was" if figs.get("detection") == "change at onset" else "the unbalance is"
    mags = np.abs(i_post)
    p = np.array([(complex(v_post[k]) * complex(i_post[k]).conjugate()).real for k in range(3)])
    p_tot = float(p.sum())
    split = _two_one_one(i_post)
    if split is not None:
        j, ratios, apart = split
        line, k, m = LINES[j], LINES[(j + 1) % 3], LINES[(j + 2) % 3]
        figs.update({"location": "transformer_primary", "line": line, "current_split": ratios,
                     "location_reason": (
                         f"no line went dead, {what} imposed from above the logger (V2/V1 "
                         f"{figs['v2_v1_pct_after']:.1f} % with the line open), and the currents split "
                         f"{':'.join(f'{x:.1f}' for x in ratios)} with lines {k} and {m} in phase "
                         f"({apart:.0f} deg apart) and line {line} carrying their sum: a line open on the primary of a "
                         "delta-wye or wye-delta transformer feeding the motor (the 2:1:1 split; which primary line "
                         "opened depends on the vector group)")})
        return figs
    for j, line in enumerate(LINES):
        others = [k for k in range(3) if k != j]
        if mags[j] < UPSTREAM_CURRENT_FRAC * mags[others].max() and p_tot > 0 and abs(p[j]) < UPSTREAM_POWER_SHARE * p_tot:
            figs.update({"location": "upstream", "line": line, "open_line_current_a": float(mags[j]),
                         "open_line_power_share": float(p[j] / p_tot),
                         "location_reason": (
                             f"{what} imposed on the motor from above the logger (V2/I2 is the motor's own "
                             f"negative-sequence impedance, V2/V1 {figs['v2_v1_pct_after']:.1f} % with the line open), and line {line} "
                             f"carries {mags[j]:.1f} A with {100 * p[j] / p_tot:.1f} % of the real power: only the "
                             "reactive current of the equipment between the open point and the motor (e.g. a capacitor bank "
                             "at its terminals) circulates through it")})
            return figs
    return None


def change_open_phases(inp: DetectionInput, taken: list[tuple[float, float]]) -> list[tuple[str, float, float | None, dict]]:
    """Open phases found from the change at onset, outside the stretches ``taken`` (already found by a dead line).

    Returns ``(line, start_s, end_s, figures)`` per open phase; the caller
    (`waveforms.detect.open_phase`) adds what the motor did and builds the event.
    """
    if not inp.has_three_currents or inp.capture is None:
        return []
    out = []
    f_hz = 1.0 / inp.cycle_s
    ch = [inp.current_channels[c] for c in LINES]
    i2 = inp.col("I2")
    min_upstream = max(1, int(round(UPSTREAM_MIN_S / inp.cycle_s)))
    busy_until = -math.inf
    for a, b in step_candidates(inp):
        k = a
        t0 = float(inp.t_start_s[k])
        if t0 < busy_until or any(a - 3 * inp.cycle_s <= t0 <= (math.inf if b is None else b) + 3 * inp.cycle_s for a, b in taken):
            continue
        if inp.dead_line[a : b + 2 * SCAN_CYCLES].any():
            continue
        amp = math.sqrt(2.0) * float(np.nanmax(inp.i_mag[max(0, k - SCAN_CYCLES) : k]))
        lo, hi = float(inp.t_start_s[a]), float(inp.t_end_s[min(inp.n - 1, b + 1)])
        onset = refine_onset_s(inp.capture, ch, (lo, hi), f_hz, amp)
        refined = onset is not None
        onset = t0 if onset is None else onset
        ph = _read_phasors(inp, onset)
        if ph is None:
            continue
        figs = assess_change(inp, onset, ph)
        if figs is None:
            continue
        # the stretch: while |I2| stays above halfway between before and after, and current flows
        w, ko = SCAN_CYCLES, int(np.searchsorted(inp.t_end_s, onset))
        before = float(np.nanmedian(i2[max(0, ko - w - 1) : max(1, ko - 1)]))
        after = float(np.nanmedian(i2[ko + 2 : ko + 2 + w]))
        held = (i2 > 0.5 * (before + after)) & inp.energised
        held[: ko + 2] = True
        stop = int(np.argmin(held)) if not held.all() else inp.n
        if figs["location"] in ("upstream", "transformer_primary") and stop - ko < min_upstream and stop < inp.n:
            continue  # imposed from above and gone again: a dip, not an open line
        end_s, ended_by = None, None
        if stop < inp.n:
            ended_by = "phase returned" if inp.energised[stop : stop + 3].all() else "de-energised"
            end_s = float(inp.t_start_s[stop])
            t_ret = refine_onset_s(inp.capture, ch, (float(inp.t_start_s[max(0, stop - 2)]), float(inp.t_end_s[min(inp.n - 1, stop)])), f_hz, amp)
            if t_ret is not None:
                end_s = t_ret
        figs.update({"onset_refined_to_sample": refined, "present_at_capture_start": False, "present_at_energisation": False,
                     "ended_by": ended_by})
        line = figs.pop("line")
        out.append((line, onset, end_s, figs))
        busy_until = math.inf if end_s is None else end_s
    return out
