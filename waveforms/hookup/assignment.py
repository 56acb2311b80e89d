"""Which current clamp is on which line, and which way round: the current-to-voltage angles.

An induction motor *motoring* draws a current that lags its own line-to-neutral
voltage by roughly 0 to 90 degrees (power factor lagging, P > 0 and Q > 0; it
always draws magnetising reactive power).  An overhauling load makes it
regenerate: P < 0, the lag goes beyond 90 degrees.  Assumed here: the motor
is motoring in the steady windows (stated in every finding).

Every assignment of the three recorded currents to the lines (6 orders x 8
polarities) is tried; an assignment fits when, median over the steady
three-phase windows, every line's lag lies within ``LAG_RANGE_DEG`` widened by
``LAG_MARGIN_DEG`` and the three lags agree within ``LAG_SPREAD_DEG``
(a three-phase motor draws about the same power factor on every line); all
thresholds are our choices (common practice, no source).  Each assignment
costs the number of mistakes it implies (a reversed clamp 1, clamps moved one
line along or two swapped 1); the cheapest fitting one wins when it is the
only one of its cost and costs at most 3.  Otherwise (none fits, or a tie)
nothing is corrected and a warning says why.  Clamps moved one line along
"forwards" put every current about 120 deg further behind its voltage, where
a regenerating motor's current could also sit: the motoring assumption
decides, and the finding says so (confidence "medium").
"""

from __future__ import annotations

import itertools

import numpy as np

from .finding import Finding
from .phasor_math import LINES, Terms, lag_deg, scaled

LAG_RANGE_DEG = (0.0, 90.0)
LAG_MARGIN_DEG = 15.0
LAG_SPREAD_DEG = 30.0
MAX_COST = 3
ASSUMPTION = ("motoring assumed: each current lags its own line-to-neutral voltage by roughly 0-90 deg "
              "(an overhauling load that makes the motor regenerate puts it beyond 90 deg)")


def _perm_cost(p: tuple[int, ...]) -> int:
    return 0 if p == (0, 1, 2) else 1


def _describe(p: tuple[int, ...], s: tuple[int, ...], names: list[str]) -> tuple[str, list[str]]:
    """Plain words for an assignment: line k's current = s[k] * recorded names[p[k]]."""
    parts, chans = [], []
    if p != (0, 1, 2):
        if p in ((1, 2, 0), (2, 0, 1)):
            # p[k] = recorded index that belongs to line k; recorded names[p[k]] is on line LINES[k]
            moved = ", ".join(f"{names[p[k]]} on line {LINES[k]}" for k in range(3))
            # the same waveforms come from the voltage leads moved one line the other way (every current-to-voltage
            # angle is the same): which set was moved cannot be told, lines are named by the voltage leads
            parts.append(f"current clamps moved one line along ({moved}), or the voltage leads moved one line the "
                         "other way (the waveforms cannot tell which; lines named by the voltage leads)")
            chans += names
        else:
            k = [i for i in range(3) if p[i] != i]
            parts.append(f"current clamps {names[p[k[0]]]} and {names[p[k[1]]]} swapped")
            chans += [names[p[k[0]]], names[p[k[1]]]]
    rev = [names[p[k]] for k in range(3) if s[k] < 0]
    if len(rev) == 3:
        parts.append("all three current clamps reversed (or all three voltage leads)")
    elif rev:
        parts.append(f"current clamp{'s' if len(rev) > 1 else ''} {' and '.join(rev)} reversed")
    chans += [n for n in rev if n not in chans]
    return "; ".join(parts), chans


def _open_line_fit(v_line: dict[str, np.ndarray], i_rec: list[np.ndarray]) -> dict | None:
    """The open line that the recorded currents fit in most windows, or None (`waveforms.detect.open_phase_steady`)."""
    from ..detect.open_phase_steady import assess_steady

    calls = []
    for w in range(i_rec[0].size):
        got = assess_steady(np.array([x[w] for x in i_rec]), np.array([v_line[c][w] for c in LINES]))
        if got is not None:
            calls.append((got["line"], got["location"]))
    if not calls:
        return None
    best = max(set(calls), key=calls.count)
    if 2 * calls.count(best) < i_rec[0].size:
        return None
    return {"line": best[0], "location": best[1], "windows": calls.count(best)}


def search(work: dict[str, Terms], names: list[str], v_line: dict[str, np.ndarray], i_rec: list[np.ndarray]
           ) -> tuple[dict[str, Terms] | None, Finding | None, dict]:
    """The best assignment, as new working terms (None: keep), its finding, and the evidence.

    Parameters
    ----------
    work : dict line -> Terms
        Working current terms as recorded (line k's current is ``work[k]``).
    names : list of str
        Labels of ``work`` in line order (for the words).
    v_line : dict line -> ndarray
        Voltage phasor of each line (line-to-neutral or its equivalent), steady three-phase windows.
    i_rec : list of ndarray
        ``work``'s phasors in line order, the same windows.
    """
    lo, hi = LAG_RANGE_DEG[0] - LAG_MARGIN_DEG, LAG_RANGE_DEG[1] + LAG_MARGIN_DEG
    fits = []
    base_lags = None
    for p in itertools.permutations(range(3)):
        for s in itertools.product((1, -1), repeat=3):
            lags = np.array([float(np.median(lag_deg(v_line[LINES[k]], s[k] * i_rec[p[k]]))) for k in range(3)])
            if p == (0, 1, 2) and s == (1, 1, 1):
                base_lags = lags
            spread = float(lags.max() - lags.min())
            if np.all(lags >= lo) and np.all(lags <= hi) and spread <= LAG_SPREAD_DEG:
                cost = _perm_cost(p) + sum(1 for v in s if v < 0)
                fits.append((cost, spread, p, s, lags))
    ev = {"lag_as_recorded_deg": {LINES[k]: float(base_lags[k]) for k in range(3)}, "assumption": ASSUMPTION,
          "lag_range_deg": list(LAG_RANGE_DEG), "windows": int(i_rec[0].size)}
    fits.sort(key=lambda f: (f[0], f[1]))
    if fits and fits[0][2] == (0, 1, 2) and fits[0][3] == (1, 1, 1):
        return None, None, ev
    base_spread = float(base_lags.max() - base_lags.min())
    regen = base_spread <= LAG_SPREAD_DEG and bool(np.all(base_lags > LAG_RANGE_DEG[1] + LAG_MARGIN_DEG))
    if not fits:
        open_line = _open_line_fit(v_line, i_rec)
        if open_line is not None:
            # the angles are those of an open line that other equipment keeps live (no dead channel): a finding for the
            # open-phase detector (waveforms.detect.open_phase_steady), not a hook-up error
            ev["currents_fit_open_line"] = open_line
            return None, None, ev
        return None, Finding("current_assignment", "current-to-voltage angles not as a motoring motor draws: "
                             "no assignment of the clamps to the lines fits", tuple(names), ev, "low",
                             "none: ambiguous, analysed as recorded", False, short="clamps do not fit a motoring motor"), ev
    best = fits[0]
    ties = [f for f in fits[1:] if f[0] == best[0]]
    cost, spread, p, s, lags = best
    words, chans = _describe(p, s, names)
    ev.update({"lag_as_corrected_deg": {LINES[k]: float(lags[k]) for k in range(3)}, "lag_spread_deg": spread,
               "alternatives": len(fits) - 1})
    if ties or cost > MAX_COST:
        alt = "; ".join(_describe(f[2], f[3], names)[0] for f in [best] + ties)
        return None, Finding("current_assignment", f"current clamps not where labelled, but which way cannot be told ({alt})",
                             tuple(names), ev, "low", "none: ambiguous, analysed as recorded", False,
                             short="clamp assignment ambiguous"), ev
    new = {LINES[k]: scaled(work[LINES[p[k]]], float(s[k])) for k in range(3)}
    if any(v < 0 for v in s):  # a reversed clamp also shows in the zero sum: about twice a line current (Fortescue)
        level = np.mean([np.abs(x) for x in i_rec], axis=0)
        ev["residual_as_recorded_pu"] = float(np.median(np.abs(i_rec[0] + i_rec[1] + i_rec[2]) / level))
        ev["residual_as_corrected_pu"] = float(np.median(np.abs(sum(s[k] * i_rec[p[k]] for k in range(3))) / level))
    rule = ", ".join(f"I{LINES[k].lower()} = {'-' if s[k] < 0 else ''}{names[p[k]]}" for k in range(3)
                     if not (p[k] == k and s[k] > 0))
    conf = "high" if cost <= 2 and not regen else "medium"
    short = words.split(", or the voltage leads")[0]
    if p in ((1, 2, 0), (2, 0, 1)) and all(n == f"I{c.lower()}" for n, c in zip(names, LINES)):
        # line as analysed -> the line it is if the clamps were right and the voltage leads were moved
        ev["line_if_voltage_leads_moved"] = {LINES[k]: LINES[p[k]] for k in range(3)}
    if regen:  # as recorded, a regenerating motor would look the same: the motoring assumption decides
        words += " (as recorded the currents would fit a regenerating motor; motoring assumed)"
        ev["regenerating_alternative"] = True
    return new, Finding("current_assignment", words, tuple(chans), ev, conf, f"corrected: {rule}", True, short=short), ev
