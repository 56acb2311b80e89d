"""Phase sequence as labelled, and a reversed voltage channel.

* **Sequence.**  With the standard Fortescue matrix, an A-B-C set has a large
  positive-sequence and a small negative-sequence component and an A-C-B set
  the reverse [1]_; a set is called A-C-B as labelled when ``|X2| > 2 |X1|``
  in most windows (the factor 2 is `waveforms.measure.sequence.phase_sequence`'s,
  common practice, no source).  The correction relabels lines B and C, so that
  every sequence component, unbalance figure and negative-sequence weight is
  computed in the supply's own rotation; lines keep their labelled names in
  the findings.
* **Reversed voltage channel.**  One channel of a balanced set reversed leaves
  ``|X0| = |X2| = 2/3`` and ``|X1| = 1/3`` of the phase voltage (the residual
  ``|Xa + Xb + Xc|`` is twice a phase voltage; Fortescue [1]_ applied to
  ``Xa, -Xb, Xc``); line-to-line channels must sum to zero (Kirchhoff), so a
  reversed one leaves a residual of twice a line voltage.  The channel whose
  reversal restores a balanced set is named when exactly one does
  (balance below 10 % against above 35 % as recorded; our thresholds).

References
----------
.. [1] C. L. Fortescue, "Method of Symmetrical Co-ordinates Applied to the
       Solution of Polyphase Networks", Trans. AIEE 37, 1918.
"""

from __future__ import annotations

import numpy as np

from .finding import Finding
from .phasor_math import LINES, Terms, added, combine, scaled, sequences, unbalance

#: Line-to-line channel of each conductor and its line-to-neutral equivalent (no zero sequence).
LL_NAMES = {"A": "Vab", "B": "Vbc", "C": "Vca"}
_LL_EQUIV = {"A": {"Vab": 1 / 3, "Vca": -1 / 3}, "B": {"Vbc": 1 / 3, "Vab": -1 / 3}, "C": {"Vca": 1 / 3, "Vbc": -1 / 3}}
UNBALANCED_AS_RECORDED = 0.35
BALANCED_WHEN_FLIPPED = 0.10
SEQUENCE_MARGIN = 2.0


def line_equivalents(reference: str, chan: dict[str, Terms]) -> dict[str, Terms]:
    """Line-to-neutral (equivalent) voltage of each line as terms of the recorded channels."""
    if reference == "LN":
        return {c: dict(chan[f"V{c.lower()}"]) for c in LINES}
    return {c: added(*(scaled(chan[n], k) for n, k in _LL_EQUIV[c].items())) for c in LINES}


def voltage_polarity(names: list[str], reference: str, phasors: dict, live: np.ndarray) -> tuple[dict[str, Terms], list[Finding]]:
    """Channel terms with a reversed channel undone, and its finding (see the module text)."""
    chan = {n: {n: 1.0} for n in names}
    if live.sum() == 0:
        return chan, []
    x = [phasors[n][live] for n in names]
    if reference == "LL":
        mean = np.mean([np.abs(v) for v in x], axis=0)
        score = lambda s: np.median(np.abs(s[0] * x[0] + s[1] * x[1] + s[2] * x[2]) / mean)  # noqa: E731  (KVL: 0)
        limit_bad, limit_good = 0.5, 0.1
    else:
        score = lambda s: np.median(unbalance(s[0] * x[0], s[1] * x[1], s[2] * x[2]))  # noqa: E731
        limit_bad, limit_good = UNBALANCED_AS_RECORDED, BALANCED_WHEN_FLIPPED
    base = float(score((1, 1, 1)))
    flips = [float(score(tuple(-1 if k == j else 1 for k in range(3)))) for j in range(3)]
    good = [j for j, v in enumerate(flips) if v < limit_good]
    if base <= limit_bad or len(good) != 1:
        return chan, []
    j = good[0]
    n = names[j]
    chan[n] = {n: -1.0}
    xs = [v if k != j else -v for k, v in enumerate(x)]
    res = np.median(np.abs(x[0] + x[1] + x[2]) / np.mean([np.abs(v) for v in x], axis=0))
    ev = {"residual_as_recorded_pu": float(res), "residual_reversed_pu": float(np.median(np.abs(sum(xs)) / np.mean([np.abs(v) for v in x], axis=0))),
          "balance_as_recorded": base, "balance_with_reversal": flips[j], "windows": int(live.sum())}
    return chan, [Finding("voltage_polarity", f"voltage channel {n} reversed", (n,), ev, "high", f"corrected: {n} = -{n}", True,
                         short=f"voltage channel {n} reversed")]


def phase_sequence(xa: np.ndarray, xb: np.ndarray, xc: np.ndarray, what: str) -> tuple[str, dict]:
    """"ABC", "ACB" or "" for the windows given, with the evidence."""
    if xa.size == 0:
        return "", {}
    _, m1, m2 = sequences(xa, xb, xc)  # Fortescue 1918
    abc = int(np.sum(m1 > SEQUENCE_MARGIN * m2))
    acb = int(np.sum(m2 > SEQUENCE_MARGIN * m1))
    ev = {"basis": what, "windows": int(xa.size), "windows_abc": abc, "windows_acb": acb,
          "x1_median": float(np.median(m1)), "x2_median": float(np.median(m2)),
          "angle_b_from_a_deg": float(np.degrees(np.median(np.angle(xb / xa)))),
          "angle_c_from_a_deg": float(np.degrees(np.median(np.angle(xc / xa))))}
    if acb >= max(1, int(np.ceil(2 * xa.size / 3))):
        return "ACB", ev
    if abc >= max(1, int(np.ceil(2 * xa.size / 3))):
        return "ABC", ev
    return "", ev


def relabel_voltages(reference: str, chan: dict[str, Terms]) -> dict[str, Terms]:
    """Voltage channel terms with lines B and C exchanged (as analysed <- as labelled)."""
    if reference == "LN":
        return {"Va": chan["Va"], "Vb": chan["Vc"], "Vc": chan["Vb"]}
    # V(A,B)' = V(A,C) = -Vca; V(B,C)' = V(C,B) = -Vbc; V(C,A)' = V(B,A) = -Vab
    return {"Vab": scaled(chan["Vca"], -1.0), "Vbc": scaled(chan["Vbc"], -1.0), "Vca": scaled(chan["Vab"], -1.0)}


def evaluate(terms: Terms, phasors: dict) -> np.ndarray:
    return combine(terms, phasors)
