"""Two-CT and two-PT (open-delta) hook-ups: the third channel derived by the zero sum.

On a three-wire circuit the line currents sum to zero (Kirchhoff's current
law) and the three line-to-line voltages always do (Kirchhoff's voltage law),
so a missing third channel is ``-(first + second)``.  For currents this needs
the motor's star point not to be connected to a neutral -- true of the
three-wire feeders of induction motors (common practice, no source) -- and is
stated as an assumption when the capture does not say it is three-wire.
"""

from __future__ import annotations

from ..capture import LL_PAIR, Capture, Channel
from .finding import Finding
from .phasor_math import LINES, Terms

CURRENT_ASSUMPTION = "the motor's star point is not connected to a neutral, so the line currents sum to zero (Kirchhoff)"


def missing_currents(capture: Capture) -> tuple[dict[str, Terms], list[Finding], list[Channel]]:
    """Working current terms per line, findings for a derived current, and the new channels.

    Returns ``({}, [], [])`` with fewer than two line currents.
    """
    ich = capture.phase_channels("current")
    work = {c: {ch.name: 1.0} for c, ch in ich.items()}
    if len(ich) != 2:
        return (work if len(ich) == 3 else {}), [], []
    (gone,) = [c for c in LINES if c not in ich]
    a, b = (ich[c].name for c in LINES if c in ich)
    name = f"I{gone.lower()}"
    work[gone] = {a: -1.0, b: -1.0}
    three = capture.wiring == "3-wire"
    f = Finding(
        check="missing_channel", what=f"two-CT hook-up: {name} not recorded, derived as -({a} + {b})",
        channels=(a, b), evidence={"recorded": [a, b], "derived": name, "wiring": capture.wiring,
                                   "assumption": "" if three else CURRENT_ASSUMPTION},
        confidence="high" if three else "medium", action=f"corrected: {name} = -({a} + {b})", corrects=True,
        short=f"two-CT hook-up ({name} derived)")
    return work, [f], [Channel(name, "current", gone, "line", "A", source_label=f"derived: -({a} + {b})")]  # type: ignore[arg-type]


def missing_line_voltage(capture: Capture) -> tuple[list[Finding], list[tuple[Channel, Terms]]]:
    """Open-delta (two PT) hook-up: the third line-to-line voltage from the other two (always exact, KVL)."""
    if capture.find("voltage", reference="LN"):
        return [], []
    ll = {c.conductor: c for c in capture.find("voltage", reference="LL") if c.conductor in LINES}
    if len(ll) != 2:
        return [], []
    (gone,) = [c for c in LINES if c not in ll]
    a, b = (ll[c].name for c in LINES if c in ll)
    name = f"V{LL_PAIR[gone].lower()}"
    f = Finding(
        check="missing_channel", what=f"open-delta (two-PT) hook-up: {name} not recorded, derived as -({a} + {b})",
        channels=(a, b), evidence={"recorded": [a, b], "derived": name, "rule": "Vab + Vbc + Vca = 0 (Kirchhoff)"},
        confidence="high", action=f"corrected: {name} = -({a} + {b})", corrects=True,
        short=f"open-delta hook-up ({name} derived)")
    ch = Channel(name, "voltage", gone, "LL", "V", source_label=f"derived: -({a} + {b})")  # type: ignore[arg-type]
    return [f], [(ch, {a: -1.0, b: -1.0})]
