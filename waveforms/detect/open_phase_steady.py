"""Open phase already present where a stretch begins, with no dead line and no onset to see.

`waveforms.detect.open_phase` finds an open line by a line current that has
fallen to nothing, and `waveforms.detect.open_phase_change` one whose current
other equipment keeps up by the change at its onset.  A logger is often hooked
up *because* a motor hums or runs hot, so the line may have been open long
before the capture began (or the motor may be energised on an open line): no
dead channel, no onset.  What is left are the steady phasors at the start of
the stretch, judged by circuit theory alone:

1. **A load between two lines.**  Kirchhoff's current law at the logger point:
   ``I_logger = I_branch + I_other``.  A branch that lost line ``X`` carries
   ``+s, -s`` on the other two lines ``Y, Z`` and nothing on ``X``; its
   positive- and negative-sequence currents (Fortescue) are equal in size.  If
   the other equipment is balanced, it adds positive sequence only, so the
   logged negative-sequence current is the branch's alone:
   ``I2 = s w2(X)`` and ``I_other = I1 - s w1(X)`` (``w1, w2`` the sequence
   components of the unit set ``(0, +1, -1)`` rotated to ``X``).  The three
   choices of ``X`` give currents ``s`` that differ by 120 deg against their
   own driving voltage ``V_YZ``, so at most one lags it as a motoring current
   does (0-90 deg); that one names the open line.  The other load must take
   real power or be capacitive (it is a load, not a source).
2. **Drawn below the logger, not imposed from above.**  A supply unbalance
   drives the passive motor: ``V2 = Z2 I2`` with ``Z2`` the motor's own
   negative-sequence impedance (inductive, about its locked-rotor impedance);
   an unbalance drawn below the logger pulls ``V2`` only through the supply's
   impedance (``V2 = -Zs I2``, small, with a negative reactance part).  This is
   the reasoning of a negative-sequence directional element (common practice,
   no source), on absolute rather than incremental quantities, so a standing
   supply unbalance adds to ``V2``: the call is made only where ``|I2|/|I1|``
   is at least `MIN_I2_I1` and ``V2/I2`` points below.
3. **Imposed from above** with ``V2/V1`` above 5 %: the same patterns as at an
   onset (`waveforms.detect.open_phase_change.imposed_from_above`): one line
   carrying only the reactive current of equipment beyond the open point, or
   the 2:1:1 split of an open transformer primary.

A large line-to-line load (a welder, a furnace, a single-phase transformer)
looks exactly like a branch on two lines (step 1); the event says so.  Without
voltage channels neither the side nor the lag can be judged, and nothing is
called.  All thresholds are our choices (common practice, no source).

References
----------
.. [1] C. L. Fortescue, "Method of symmetrical co-ordinates applied to the
   solution of polyphase networks", AIEE Transactions 37 (1918).
.. [2] Kirchhoff's current law at a node (any circuits textbook, e.g.
   Alexander & Sadiku, *Fundamentals of Electric Circuits*; chapter from memory).
"""

from __future__ import annotations

import cmath
import math

import numpy as np

from ..measure.sequence import A as _A
from .context import LINES, DetectionInput, runs
from .open_phase_change import MOTORING_LAG_DEG, UPSTREAM_V2_PCT, Z2_STIFF_PU, _remaining_kind, _sequence, imposed_from_above

#: Current unbalance |I2|/|I1| at the start of a stretch that calls for the test [-] (our choice: a supply unbalance
#: of the 5 % NEMA MG-1 limit drives about 0.3 into a loaded motor, and is imposed from above anyway)
MIN_I2_I1 = 0.35
#: Zero-sequence current above this share of the positive sequence: the three currents do not sum to zero (a dead
#: or missing clamp leaves a third of a line current; Kirchhoff), so the split is not judged [-] (our choice)
MAX_I0_I1 = 0.1
#: The other equipment's current may lead its voltage by up to this much [deg] (a capacitor bank: 90; our margin)
OTHER_LOAD_MAX_LEAD_DEG = 95.0
#: Cycles skipped after the stretch begins (a start's inrush and the DC offset decay) and cycles averaged [-]
SKIP_CYCLES, AVERAGE_CYCLES = 3, 4
#: The call holds while |I2| stays above this fraction of its value at the start [-] (our choice)
HOLD_FRAC = 0.5


def _lag_deg(v: complex, i: complex) -> float:
    return math.degrees(cmath.phase(v / i)) if abs(i) > 0 and abs(v) > 0 else math.nan


def line_to_line_fits(i: np.ndarray, v: np.ndarray, op: complex = _A) -> list[dict]:
    """For each line X: the branch on the other two lines and the balanced other load that make up ``i`` (Kirchhoff [2]).

    Parameters
    ----------
    i, v : ndarray, complex, shape (3,)
        Line current and line-to-neutral voltage phasors [A, V] (RMS), lines A, B, C.
    op : complex
        ``a`` for an A-B-C rotation, ``a^2`` for A-C-B.

    Returns
    -------
    list of dict
        Per line: ``line``, ``single_phase_current_a`` (``|s|``), ``single_phase_lag_deg``
        (behind ``V_YZ``), ``other_load_current_a`` and ``other_load_lag_deg`` (behind
        ``V1``), and ``plausible`` (a motoring ``s`` and a consuming or capacitive other load).

    Examples
    --------
    A 17 A branch between lines A and B lagging V_AB by 40 deg, and a balanced
    5 A capacitor current: the fit names line C, the branch and the bank:

    >>> import numpy as np
    >>> a = np.exp(2j * np.pi / 3)
    >>> e = np.array([1, a * a, a])
    >>> v = 230 * e
    >>> s = 17 * np.exp(-1j * np.radians(40)) * (v[0] - v[1]) / abs(v[0] - v[1])
    >>> fits = line_to_line_fits(np.array([s, -s, 0]) + 5j * e, v)
    >>> [f["line"] for f in fits if f["plausible"]]
    ['C']
    >>> c = fits[2]
    >>> print(round(c["single_phase_current_a"], 2), round(c["single_phase_lag_deg"], 1), round(c["other_load_current_a"], 2),
    ...       round(c["other_load_lag_deg"], 1))
    17.0 40.0 5.0 -90.0
    """
    _, i1, i2 = _sequence(i, op)
    _, v1, _ = _sequence(v, op)
    out = []
    for j, line in enumerate(LINES):
        y, z = (j + 1) % 3, (j + 2) % 3
        w = np.zeros(3, dtype=complex)
        w[y], w[z] = 1.0, -1.0
        _, w1, w2 = _sequence(w, op)
        s = i2 / w2  # the branch alone carries negative sequence (the other load is balanced)
        other = i1 - s * w1  # the rest of the positive sequence, as line A's current
        lag_s = _lag_deg(complex(v[y] - v[z]), s)
        lag_o = _lag_deg(v1, other)
        ok = (MOTORING_LAG_DEG[0] <= lag_s <= MOTORING_LAG_DEG[1]
              and (abs(other) < 1e-9 * abs(s) or -OTHER_LOAD_MAX_LEAD_DEG <= lag_o <= 90.0 + 5.0))
        out.append({"line": line, "single_phase_current_a": float(abs(s)), "single_phase_lag_deg": lag_s,
                    "other_load_current_a": float(abs(other)), "other_load_lag_deg": lag_o, "plausible": bool(ok)})
    return out


def assess_steady(i: np.ndarray, v: np.ndarray | None, op: complex = _A) -> dict | None:
    """The open-phase call from the steady phasors at the start of a stretch (module docstring); None when it is not one.

    Examples
    --------
    A 30 A branch on lines B and C lagging V_BC by 60 deg, and a balanced 12 A
    of another motor lagging 35 deg, on a stiff supply (no V2):

    >>> import numpy as np
    >>> a = np.exp(2j * np.pi / 3)
    >>> e = np.array([1, a * a, a])
    >>> v = 230 * e
    >>> s = 30 * np.exp(-1j * np.radians(60)) * (v[1] - v[2]) / abs(v[1] - v[2])
    >>> got = assess_steady(np.array([0, s, -s]) + 12 * np.exp(-1j * np.radians(35)) * e, v)
    >>> print(got["line"], got["location"], got["remaining_load"])
    A downstream inductive (another motor or inductive load)

    A dead clamp on line B of a balanced motor (the currents do not sum to zero): no call, a sensor problem:

    >>> assess_steady(np.array([10, 0, 10 * a]) * np.exp(-0.5j), v) is None
    True

    A motor on a 3 % supply unbalance draws I2 from above (V2 = Z2 I2, inductive): no call:

    >>> z2 = 1.2 * np.exp(1j * np.radians(75))
    >>> v2 = 0.03 * 230 * np.array([1, a, a * a])
    >>> i_m = 8 * np.exp(-1j * np.radians(35)) * e + v2 / z2
    >>> assess_steady(i_m, v + v2) is None
    True
    """
    if v is None or not (np.all(np.isfinite(i)) and np.all(np.isfinite(v))):
        return None
    i0, i1, i2 = _sequence(i, op)
    _, v1, v2 = _sequence(v, op)
    if abs(i1) == 0 or abs(v1) == 0 or abs(i2) < MIN_I2_I1 * abs(i1):
        return None
    if abs(i0) > MAX_I0_I1 * abs(i1):
        return None  # the currents do not sum to zero: a clamp missing or dead, or a neutral load -- not judged here
    figs: dict = {"detection": "steady currents at the start", "i2_i1_pct_after": 100 * abs(i2) / abs(i1),
                  "v2_v1_pct_after": 100 * abs(v2) / abs(v1)}
    z_pu = (v2 / i2) / (v1 / i1)
    figs["negative_sequence_impedance_pu"] = [z_pu.real, z_pu.imag]
    figs["negative_sequence_impedance_basis"] = "V2/I2 at the start of the stretch, per unit of V1/I1"
    below = abs(z_pu) < Z2_STIFF_PU or z_pu.imag < 0
    if not below:
        if figs["v2_v1_pct_after"] < UPSTREAM_V2_PCT:
            return None
        return imposed_from_above(figs, i, v)
    fits = line_to_line_fits(i, v, op)
    figs["line_to_line_fits"] = fits
    good = [f for f in fits if f["plausible"]]
    if len(good) != 1:
        return None
    f = good[0]
    line = f["line"]
    y, z = LINES[(LINES.index(line) + 1) % 3], LINES[(LINES.index(line) + 2) % 3]
    kind = _remaining_kind(f["other_load_lag_deg"]) if f["other_load_current_a"] > 0.02 * f["single_phase_current_a"] else "none"
    figs.update({"single_phase_current_a": f["single_phase_current_a"], "remaining_current_a": float(abs(i[LINES.index(line)])),
                 "other_load_current_a": f["other_load_current_a"], "remaining_load": kind, "location": "downstream",
                 "alternative": f"a load of {f['single_phase_current_a']:.1f} A connected between lines {y} and {z} "
                                "(a welder, a furnace, a single-phase transformer) draws the same currents",
                 "branch_inferred": (
                     f"the currents are a single-phase current of {f['single_phase_current_a']:.1f} A between lines {y} and "
                     f"{z}, lagging V{y}{z} by {f['single_phase_lag_deg']:.0f} deg as a motoring current does, plus a "
                     f"balanced {f['other_load_current_a']:.1f} A of other equipment"
                     + (f", {kind}" if kind != "none" else "")
                     + f" (Kirchhoff's current law at the logger point; the only split in which the single-phase current "
                       f"motors): a branch below the logger with line {line} open"),
                 "location_reason": (
                     f"the current unbalance is large (I2/I1 {figs['i2_i1_pct_after']:.0f} %) while the voltage unbalance is "
                     f"small (V2/V1 {figs['v2_v1_pct_after']:.1f} %, V2/I2 = {z_pu.real:.3f}{z_pu.imag:+.3f}j pu): the "
                     "unbalance is drawn below the logger, not imposed on the motor from the supply"),
                 "line": line})
    return figs


def _stretch_starts(inp: DetectionInput) -> list[int]:
    """First cycle of each energised stretch: the capture start when energised, and every energisation."""
    en = inp.energised
    return [a for a, _ in runs(en)] if en.any() else []


def steady_open_phases(inp: DetectionInput, taken: list[tuple[float, float | None]]) -> list[tuple[str, float, float | None, dict]]:
    """Open phases present where an energised stretch begins, outside the stretches ``taken``.

    Returns ``(line, start_s, end_s, figures)`` per open phase, as
    `waveforms.detect.open_phase_change.change_open_phases` does.
    """
    from .open_phase import window_phasors

    cap = inp.capture
    if cap is None or not inp.has_three_currents or len(inp.voltage_channels) != 3:
        return []
    op = _A
    if "phase_sequence" in inp.cycles:
        vals = inp.cycles["phase_sequence"].astype(str)
        if (vals == "ACB").sum() > (vals == "ABC").sum():
            op = _A.conjugate()
    fs, f_hz = float(cap.sample_rate_hz), 1.0 / inp.cycle_s
    n_cyc = int(round(fs / f_hz))
    ilab = [inp.current_channels[c] for c in LINES]
    vlab = [inp.voltage_channels[c] for c in LINES]
    i2 = inp.col("I2")
    out = []
    for a in _stretch_starts(inp):
        t0 = float(inp.t_start_s[a])
        if any(lo - 3 * inp.cycle_s <= t0 <= (math.inf if hi is None else hi) + 3 * inp.cycle_s for lo, hi in taken):
            continue
        if a + SKIP_CYCLES + AVERAGE_CYCLES > inp.n or not inp.energised[a : a + SKIP_CYCLES + AVERAGE_CYCLES].all():
            continue
        if inp.dead_line[a : a + SKIP_CYCLES + AVERAGE_CYCLES].any():
            continue
        lo = int(round(float(inp.t_start_s[a + SKIP_CYCLES]) * fs))
        hi = lo + AVERAGE_CYCLES * n_cyc
        if lo < 0 or hi > cap.n_samples:
            continue
        x = cap.read(lo, hi, vlab + ilab)
        if not np.isfinite(x).all():
            continue
        ph = window_phasors(x, fs, f_hz, 0, AVERAGE_CYCLES).mean(axis=1)
        v, i = ph[:3], ph[3:]
        if inp.voltage_reference == "LL":
            v = (v - np.roll(v, 1)) / 3  # Va = (Vab - Vca) / 3 (no zero sequence)
        figs = assess_steady(i, v, op)
        if figs is None:
            continue
        # the stretch: while |I2| stays above HOLD_FRAC of its value at the start, and current flows
        start_i2 = float(np.nanmedian(i2[a + SKIP_CYCLES : a + SKIP_CYCLES + AVERAGE_CYCLES]))
        with np.errstate(invalid="ignore"):
            held = (i2[a:] > HOLD_FRAC * start_i2) & inp.energised[a:]
        stop = a + (int(np.argmin(held)) if not held.all() else inp.n - a)
        end_s, ended_by = None, None
        if stop < inp.n:
            ended_by = "phase returned" if inp.energised[stop : stop + 3].all() else "de-energised"
            end_s = float(inp.t_start_s[stop])
        figs.update({"onset_refined_to_sample": False, "present_at_capture_start": a == 0,
                     "present_at_energisation": a > 0, "ended_by": ended_by})
        line = figs.pop("line")
        out.append((line, t0, end_s, figs))
    return out
