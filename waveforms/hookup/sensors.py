"""A dead or disconnected current sensor told apart from a real open line, by the physics.

In a window where one line's current is (almost) nothing:

* **open line** -- with one line of a three-wire motor open, the remaining two
  lines are in series through the machine, so their currents are equal and
  opposite (Kirchhoff's current law: ``I_j = -I_l``, 180 deg apart, zero-sum
  residual ``|I_j + I_l|`` about 0); at the same shaft power they rise by
  about sqrt(3) (the same power carried by one line-to-line voltage instead of
  three phases), the more so as the single-phased motor slips further
  (machines textbooks' treatment of single phasing, e.g. Fitzgerald, Kingsley
  & Umans, *Electric Machinery*, chapter on single-phase and unbalanced
  operation of induction motors -- from memory; REFERENCES.md "running
  single-phased ... line current rises about sqrt(3) [derived]").
* **dead clamp** -- the motor still draws three balanced currents, so the two
  that are recorded stay about 120 deg apart at unchanged magnitude, and their
  zero-sum residual ``|I_j + I_l|`` equals the missing current (about one line
  current).

The windows are told apart by the angle between the two recorded currents:
within ``ANTIPHASE_TOL_DEG`` of 180 deg an open line, within
``THREE_PHASE_TOL_DEG`` of 120 deg a dead sensor, anything else unclear
(our thresholds, common practice, no source).  A dead sensor is a
data-quality finding, never an open phase.
"""

from __future__ import annotations

import numpy as np

from .finding import Finding
from .missing import CURRENT_ASSUMPTION
from .phasor_math import LINES, Terms, added, scaled, wrap_deg

SILENT_FRAC = 0.10
ANTIPHASE_TOL_DEG = 20.0
THREE_PHASE_TOL_DEG = 25.0


def classify(i_line: list[np.ndarray], floor_a: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per window: the silent line (-1: none), the angle between the other two [deg, 0-180], the kind.

    Kind: "three" (all carry current), "open" (one silent, the others in
    antiphase), "dead" (one silent, the others about 120 deg apart), "unclear"
    or "" (no current).
    """
    m = np.vstack([np.abs(x) for x in i_line])
    n = m.shape[1]
    silent = np.full(n, -1)
    angle = np.full(n, np.nan)
    kind = np.full(n, "", dtype=object)
    for w in range(n):
        col = m[:, w]
        if not np.all(np.isfinite(col)) or col.max() <= floor_a:
            continue
        low = np.flatnonzero(col < SILENT_FRAC * col.max())
        if low.size == 0:
            kind[w] = "three"
            continue
        if low.size != 1:
            kind[w] = "unclear"
            continue
        j = int(low[0])
        o = [k for k in range(3) if k != j]
        if min(col[o]) < 0.5 * max(col[o]):
            kind[w] = "unclear"
            continue
        d = abs(float(wrap_deg(np.degrees(np.angle(i_line[o[0]][w] / i_line[o[1]][w])))))
        silent[w], angle[w] = j, d
        kind[w] = ("open" if abs(d - 180.0) <= ANTIPHASE_TOL_DEG else
                   "dead" if abs(d - 120.0) <= THREE_PHASE_TOL_DEG else "unclear")
    return silent, angle, kind


def dead_sensors(work: dict[str, Terms], names: list[str], i_line: list[np.ndarray], t_s: np.ndarray, floor_a: float,
                 three_phase_level_a: float | None, assume_three_wire: bool, wiring: str
                 ) -> tuple[dict[str, Terms], list[Finding]]:
    """Dead sensors found in the windows, with the missing current derived where the zero sum holds.

    ``three_phase_level_a`` is the median line current of the windows where all
    three carried current (None: none did), for the "unchanged magnitude" evidence.
    """
    silent, angle, kind = classify(i_line, floor_a)
    out = dict(work)
    found: list[Finding] = []
    for j, line in enumerate(LINES):
        dead = (silent == j) & (kind == "dead")
        if not dead.any():
            continue
        o = [k for k in range(3) if k != j]
        live = np.vstack([np.abs(i_line[k][dead]) for k in o])
        residual = np.abs(i_line[o[0]][dead] + i_line[o[1]][dead])
        first = float(t_s[np.flatnonzero(dead)[0]])
        before = np.flatnonzero(kind == "three")
        from_start = not (before.size and before[0] < np.flatnonzero(dead)[0])
        ev = {"windows_dead": int(dead.sum()), "windows_open_line": int(np.sum((silent == j) & (kind == "open"))), "first_seen_s": first, "from_start": bool(from_start),
              "angle_between_recorded_deg": float(np.median(angle[dead])),
              "recorded_currents_a": [float(np.median(x)) for x in live],
              "silent_current_a": float(np.median(np.abs(i_line[j][dead]))),
              "zero_sum_residual_a": float(np.median(residual)),
              "residual_over_line_current": float(np.median(residual / live.mean(axis=0)))}
        if three_phase_level_a:
            ev["recorded_over_three_phase_level"] = float(np.median(live.mean(axis=0)) / three_phase_level_a)
        when = "from the start of the capture" if from_start else f"from about {first:.1f} s (first window seen)"
        name = names[j]
        what = (f"current sensor {name} dead or disconnected {when}: the other two stay "
                f"{ev['angle_between_recorded_deg']:.0f} deg apart (an open line would put them at 180 deg) "
                "-- a sensor problem, not an open phase")
        if assume_three_wire:
            out[line] = added(scaled(work[LINES[o[0]]], -1.0), scaled(work[LINES[o[1]]], -1.0))
            o_names = " + ".join(names[k] for k in o)
            if wiring != "3-wire":
                ev["assumption"] = CURRENT_ASSUMPTION
            found.append(Finding("dead_sensor", what, (name,), ev, "high" if wiring == "3-wire" else "medium",
                                 f"corrected: {name} = -({o_names}) over the whole capture", True,
                                 short=f"current sensor {name} dead"))
        else:
            found.append(Finding("dead_sensor", what, (name,), ev, "medium", "none: the zero sum cannot be assumed", False,
                                 short=f"current sensor {name} dead"))
    return out, found
