"""A dead or disconnected voltage lead, told apart from a real open phase upstream of the logger.

In a steady window where the motor draws three healthy currents (all three
carry current, `waveforms.hookup.sensors.classify` "three"), its terminals
have three healthy voltages: a motor cannot draw balanced three-phase
current from a set with one phase missing.  A voltage channel that reads
(almost) nothing there -- below ``SILENT_FRAC`` of the largest voltage while
the other two are of about equal size -- is a lead that is off, unplugged or
broken: a data-quality finding, never a dip, an interruption or an open phase.

A real open phase upstream of the logger looks different on both counts: the
open line's *current* is the one that stops (the two others go into
antiphase, Kirchhoff's current law), and the open terminal's *voltage* does not
fall to zero -- a running induction motor regenerates a voltage on its open
terminal from the rotating field (machines textbooks' treatment of single
phasing, e.g. Fitzgerald, Kingsley & Umans, *Electric Machinery*; from memory),
and even a stalled one holds it at about half the phase voltage through its
windings.  So such windows are never "three"-current windows and are not
judged here.  A voltage that is really (almost) zero at the motor -- one
phase to ground on a four-wire supply, say -- leaves a set with V2/V1 of
50 % (line-to-neutral) or 100 % (line-to-line, Fortescue), and the motor,
whose negative-sequence impedance is close to its locked-rotor impedance
(machines textbooks, from memory), draws a negative-sequence current of the
order of half its positive-sequence current or more (0.45-0.68 in the
simulated pump motor of ``dip_one_phase`` with phase B held at zero, against
0.17 for the 2.2 % voltage unbalance of ``unbalanced_supply``); a dead lead
leaves the currents as balanced as the supply.  So the currents must also be balanced
(smaller over larger of |I1|, |I2| below ``MAX_CURRENT_UNBALANCE``, the
best over the clamps' polarities so that a reversed clamp does not hide it).  Without current channels the two cannot be told apart (a
static load on an open line also reads nothing) and nothing is said.

The dead channel is derived from the other two:

* line-to-line channels always sum to zero (Kirchhoff's voltage law), so a
  dead ``Vbc`` is exactly ``-(Vab + Vca)``;
* line-to-neutral channels sum to three times the zero-sequence voltage
  (Fortescue), which is small on a motor supply but not zero: the derived
  ``Vb = -(Va + Vc)`` assumes it negligible (stated in the finding,
  confidence "medium"); the derived set has no zero sequence, so its
  negative-sequence component differs from the true one by at most |V0|
  (``V2' = V2 - a^2 V0``), V2/V1 by at most V0/V1.

Thresholds are ours (common practice, no source).
"""

from __future__ import annotations

import numpy as np

from .finding import Finding
from .phasor_math import Terms

SILENT_FRAC = 0.10
EQUAL_FRAC = 0.85
MAX_CURRENT_UNBALANCE = 0.3
LN_ASSUMPTION = ("no zero-sequence voltage: Va + Vb + Vc = 3 V0 (Fortescue) is taken as 0, so the derived "
                 "line-to-neutral voltage is exact only on a supply without zero-sequence unbalance, and V2/V1 may be "
                 "off by up to the supply's V0/V1")


def dead_voltage_leads(names: list[str], reference: str, phasors: dict[str, np.ndarray], three_phase: np.ndarray,
                       t_s: np.ndarray, current_unbalance: np.ndarray) -> tuple[dict[str, Terms], list[Finding]]:
    """Dead voltage channels in the windows where the motor draws three currents, with their derivation.

    Parameters
    ----------
    names : list of str
        The three voltage channels in line order (``Va, Vb, Vc`` or ``Vab, Vbc, Vca``).
    reference : {"LN", "LL"}
    phasors : dict name -> ndarray (n_win,), complex
        Window phasors [V].
    three_phase : ndarray (n_win,) bool
        Steady windows where all three line currents carry current.
    t_s : ndarray (n_win,)
        Window centres [s].
    current_unbalance : ndarray (n_win,)
        Smaller over larger of |I1|, |I2| of the line currents [-].

    Returns
    -------
    derived : dict name -> Terms
        The dead channel as terms of the other two (empty: none found).
    findings : list of Finding
    """
    if not three_phase.any():
        return {}, []
    vm = np.vstack([np.abs(phasors[n]) for n in names])  # (3, n_win)
    vmax = np.nanmax(vm, axis=0)
    derived: dict[str, Terms] = {}
    found: list[Finding] = []
    for j, n in enumerate(names):
        o = [k for k in range(3) if k != j]
        others = vm[o]
        dead = (three_phase & np.isfinite(vmax) & (vmax > 0) & (vm[j] < SILENT_FRAC * vmax)
                & (current_unbalance < MAX_CURRENT_UNBALANCE)
                & (others.min(axis=0) >= EQUAL_FRAC * others.max(axis=0)))
        if reference == "LN":
            # the two live line-to-neutral voltages of a healthy set are 120 deg apart, so the derived one
            # -(Vb + Vc) is of their size; a neutral shift (a ground fault on an ungrounded or resistance-grounded
            # system: Va to earth ~0, Vb and Vc sqrt(3) larger and 60 deg apart, waveforms.detect.neutral_shift)
            # gives sqrt(3) x their size: the lead is not dead, the system moved against earth (issue 19)
            derived_size = np.abs(sum(phasors[names[k]] for k in o)) / others.mean(axis=0)
            dead &= (derived_size >= EQUAL_FRAC) & (derived_size <= 1.0 / EQUAL_FRAC)
        if not dead.any():
            continue
        if derived:  # two dead leads leave one voltage: nothing can be derived
            return {}, [Finding("dead_sensor", "two voltage leads read nothing while the motor draws three currents",
                                tuple(names), {"windows": int(dead.sum())}, "medium", "none: one voltage cannot give three",
                                False, short="voltage leads dead")]
        live = np.flatnonzero(three_phase & ~dead)
        first = float(t_s[np.flatnonzero(dead)[0]])
        before = live[live < np.flatnonzero(dead)[0]]
        last_live = float(t_s[before[-1]]) if before.size else 0.0
        from_start = not (live.size and live[0] < np.flatnonzero(dead)[0])
        a, b = (names[k] for k in o)
        ev = {"windows_dead": int(dead.sum()), "windows_three_phase": int(three_phase.sum()), "first_seen_s": first,
              "last_seen_live_s": last_live, "from_start": bool(from_start), "silent_voltage_v": float(np.median(vm[j][dead])),
              "other_voltages_v": [float(np.median(x[dead])) for x in others],
              "silent_over_others": float(np.median(vm[j][dead] / others.mean(axis=0)[dead])),
              "currents": "three-phase (all three lines carry current) and balanced",
              "current_unbalance": float(np.median(current_unbalance[dead])),
              "rule": f"{n} = -({a} + {b})"}
        if reference == "LN":
            ev["assumption"] = LN_ASSUMPTION
        when = "from the start of the capture" if from_start else f"from about {first:.1f} s (first window seen)"
        what = (f"voltage lead {n} dead or disconnected {when}: it reads {100 * ev['silent_over_others']:.0f} % of the "
                "other two while the motor draws three-phase current (an open phase would stop a current, and a "
                "running motor regenerates voltage on its open terminal) -- a sensor problem, not a dip, "
                "interruption or open phase")
        derived[n] = {a: -1.0, b: -1.0}
        found.append(Finding("dead_sensor", what, (n,), ev, "high" if reference == "LL" else "medium",
                             f"corrected: {n} = -({a} + {b}) over the whole capture", True,
                             short=f"voltage lead {n} dead"))
    return derived, found
