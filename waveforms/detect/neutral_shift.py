"""Neutral shift: a zero-sequence voltage with balanced line-to-line voltages, not a dip or swell the motor saw.

On an ungrounded or resistance-grounded (3-wire) system a ground fault on any
feeder moves the whole system against earth: the faulted line's voltage to
earth falls towards zero and the two others rise towards sqrt(3) times their
normal value, while the line-to-line voltages -- all a three-phase motor is
connected to -- do not change.  In symmetrical components that is a
zero-sequence voltage ``V0 = (Va + Vb + Vc) / 3`` added to every line-to-neutral
voltage with the positive- and negative-sequence voltages unchanged.  The
same picture on a 4-wire capture (a reference point that moved: a lost or
shifted neutral) is reported the same way.

A cycle is a *neutral-shift* cycle when, from the per-cycle fundamental
phasors of the line-to-neutral channels,

- ``|V0|`` is at least `V0_MIN_PCT` % of the declared line-to-neutral voltage, and
- the line-to-line voltages ``Va - Vb``, ``Vb - Vc``, ``Vc - Va`` all lie
  between the dip and swell thresholds (no dip or swell on them), and
- they are balanced: no line-to-line voltage differs from their mean by more
  than `LL_BALANCE_MAX_PCT` %.

A single-line dip on a solidly grounded 4-wire system is not one: a dip of Va
to 70 % gives ``|V0|`` = 10 % but ``|Vab| = |Vca|`` = 85 % of nominal (a dip on
the line-to-line voltages too), and a shallower one gives less than 10 %
zero-sequence voltage; so a real single-phase dip stays a dip.

References
----------
.. [1] Fortescue's symmetrical components: ``V0 = (Va + Vb + Vc) / 3``; line-to-line voltages carry no
   zero-sequence component.  Any power-systems text, e.g. Blackburn, *Symmetrical Components for
   Power Systems Engineering*, ungrounded systems: a bolted ground fault puts the neutral at ``-Ea``
   and the healthy lines at sqrt(3) x their line-to-neutral voltage (from memory).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .context import LINES, DetectionInput, runs

#: Smallest zero-sequence voltage of a neutral shift [% of the declared line-to-neutral voltage] (our choice:
#: well above the 1-2 % a healthy grounded system shows, at or below what a high-resistance ground fault gives).
V0_MIN_PCT = 10.0
#: Largest deviation of a line-to-line voltage from their mean for "balanced" [%] (our choice, no source).
LL_BALANCE_MAX_PCT = 3.0
#: Shortest neutral shift reported [cycles] (our choice).
MIN_CYCLES = 2


def neutral_shift_cycles(inp: DetectionInput) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Per cycle: True where the line-to-neutral voltages show a neutral shift (module docstring); and the figures.

    Returns
    -------
    (mask, figures)
        ``mask`` (n_cycles,) bool, all False without three line-to-neutral
        channels; ``figures``: ``v0_pct`` (|V0| [% of declared LN]),
        ``ll_pct`` (3, n) line-to-line [% of declared], ``ln_pct`` (3, n).
    """
    n = inp.n
    none = np.zeros(n, dtype=bool)
    if inp.voltage_reference != "LN" or len(inp.voltage_channels) != 3:
        return none, {}
    ph = [inp.v_phasor(c) for c in LINES]
    if any(p is None for p in ph):
        return none, {}
    va, vb, vc = ph
    ll = np.abs(np.vstack([va - vb, vb - vc, vc - va]))
    decl_ll = inp.declared_voltage_ll_v
    if not decl_ll and np.isfinite(ll).any():
        decl_ll = float(np.nanmedian(ll))
    if not decl_ll:
        return none, {}
    decl_ln = decl_ll / math.sqrt(3.0)
    v0_pct = 100.0 * np.abs((va + vb + vc) / 3.0) / decl_ln
    ll_pct = 100.0 * ll / decl_ll
    ln_pct = 100.0 * np.abs(np.vstack([va, vb, vc])) / decl_ln
    p = inp.params
    with np.errstate(invalid="ignore"):
        mean = ll_pct.mean(axis=0)
        dev = 100.0 * np.max(np.abs(ll_pct - mean), axis=0) / mean
        mask = ((v0_pct >= V0_MIN_PCT) & np.all(ll_pct >= p.dip_threshold_pct, axis=0)
                & np.all(ll_pct <= p.swell_threshold_pct, axis=0) & (dev <= LL_BALANCE_MAX_PCT))
    return np.where(np.isfinite(v0_pct), mask, False), {"v0_pct": v0_pct, "ll_pct": ll_pct, "ln_pct": ln_pct,
                                                         "ll_dev_pct": dev}


def neutral_shifts(inp: DetectionInput) -> list[dict[str, Any]]:
    """The neutral-shift stretches: ``start_s``, ``end_s`` (None: to the end) and their figures, with a sentence.

    Examples
    --------
    A 400 V system whose neutral moves to line A's voltage from 1.0 s to 2.0 s (a bolted ground fault on an
    ungrounded system: Va to earth 0, Vb and Vc sqrt(3) x 230 V, the line-to-line voltages unchanged):

    >>> import numpy as np
    >>> from waveforms.detect.examples import example_input
    >>> inp = example_input()
    >>> cyc = inp.cycles.copy()
    >>> t = cyc["t_s"].to_numpy()
    >>> e = 230.0 * np.exp(1j * np.deg2rad([0.0, -120.0, 120.0]))[:, None] * np.ones(t.size)
    >>> e = np.where((t >= 1.0) & (t < 2.0), e - e[0], e)
    >>> for k, lab in enumerate(("Va", "Vb", "Vc")):
    ...     cyc[f"{lab}_mag"], cyc[f"{lab}_ang_deg"] = np.abs(e[k]), np.degrees(np.angle(e[k]))
    >>> import dataclasses
    >>> [(round(s["start_s"], 2), round(s["end_s"], 2), round(s["v0_pct"]), s["lowest_line"]) for s in neutral_shifts(dataclasses.replace(inp, cycles=cyc))]
    [(0.99, 2.0, 100, 'A')]
    """
    mask, fig = neutral_shift_cycles(inp)
    out: list[dict[str, Any]] = []
    n = inp.n
    for a, b in runs(mask, min_len=MIN_CYCLES):
        sl = slice(a, b)
        v0 = float(np.nanmedian(fig["v0_pct"][sl]))
        ln = np.nanmedian(fig["ln_pct"][:, sl], axis=1)
        ll = np.nanmedian(fig["ll_pct"][:, sl], axis=1)
        low = LINES[int(np.nanargmin(ln))]
        start = float(inp.t_start_s[a])
        end = None if b >= n else float(inp.t_end_s[b - 1])
        labels = [inp.voltage_channels[c] for c in LINES]
        to = "the end of the capture" if end is None else f"{end:.3f} s"
        sentence = (f"neutral shift from {start:.3f} s to {to}: zero-sequence voltage V0 {v0:.0f} % of the declared "
                    f"line-to-neutral voltage with balanced line-to-line voltages ({', '.join(f'{x:.0f}' for x in ll)} % of "
                    f"declared); the line-to-neutral voltages {', '.join(labels)} at {', '.join(f'{x:.0f}' for x in ln)} % "
                    f"(lowest on line {low}): the system moved against earth, as a ground fault (on line {low}, here or on "
                    "another feeder) does on an ungrounded or resistance-grounded system; the motor, connected line to "
                    "line, saw no dip or swell, and none is reported on the line-to-neutral channels")
        out.append({"start_s": start, "end_s": end, "v0_pct": v0, "ll_pct": [float(x) for x in ll],
                    "ln_pct": [float(x) for x in ln], "lowest_line": low, "sentence": sentence})
    return out


def shift_mask(shifts: list[dict[str, Any]], t_s: np.ndarray, cycle_s: float) -> np.ndarray:
    """True at the time stamps ``t_s`` within a cycle of a neutral-shift stretch (for the Urms(1/2) values)."""
    out = np.zeros(t_s.size, dtype=bool)
    for s in shifts:
        end = math.inf if s["end_s"] is None else s["end_s"] + cycle_s
        out |= (t_s > s["start_s"] - cycle_s) & (t_s < end)
    return out


__all__ = ["LL_BALANCE_MAX_PCT", "MIN_CYCLES", "V0_MIN_PCT", "neutral_shift_cycles", "neutral_shifts", "shift_mask"]
