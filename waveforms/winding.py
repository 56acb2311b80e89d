"""Delta winding currents (a six-lead hook-up) turned into the line currents the analysis works on.

On a delta-connected motor with six leads (a star-delta starter, or clamps on
the winding leads in the terminal box) the logger can see the winding
currents ``Iab``, ``Ibc``, ``Ica`` instead of the line currents.  Our
orientation convention: ``Iab`` flows in the winding between terminals A and B
from A to B (``Ibc`` B -> C, ``Ica`` C -> A), the same order as the
line-to-line voltages Vab, Vbc, Vca.  Kirchhoff's current law at the delta's
corners then gives the line currents flowing into the motor::

    I_A = I_AB - I_CA,   I_B = I_BC - I_AB,   I_C = I_CA - I_BC

(the current entering terminal A leaves through winding A-B and arrives
through winding C-A).  The sum is zero by construction: a current circulating
in the delta (zero sequence, from unequal windings or triplen harmonics)
flows in no line and drops out.  With one line open the windings carry 2/3
and 1/3 of the other lines' current, so no winding channel goes dead, but the
derived line current of the open line is zero, as on a line-current capture.

The conversion is lazy (`waveforms.hookup.transform.TransformSource`: every
block read is converted), so a long HDF5-backed capture is not loaded.  It
needs all three winding currents and a delta connection: the "A-B" naming
of the channels says delta, so only a nameplate that says otherwise stops it.

References
----------
.. [1] Kirchhoff's current law at a node; any circuits textbook, e.g. Nilsson & Riedel, *Electric
   Circuits*, balanced three-phase circuits (delta load: I_line = sqrt(3) I_phase lagging by 30 deg,
   from memory).
"""

from __future__ import annotations

import numpy as np

from .capture import LL_PAIR, Capture, Channel
from .errors import InvalidParameterError

#: Line current = winding current out of the terminal minus the one into it: conductor -> (+winding, -winding).
KCL_TERMS = {"A": ("A", "C"), "B": ("B", "A"), "C": ("C", "B")}


def winding_channels(capture: Capture) -> dict[str, Channel]:
    """The capture's winding-current channels, by first terminal (``{"A": Iab channel, ...}``)."""
    return {c.conductor: c for c in capture.find("current", reference="winding") if c.conductor in LL_PAIR}


def declare_windings(capture: Capture) -> Capture:
    """The capture with its line currents Ia, Ib, Ic re-declared as the winding currents Iab, Ibc, Ica.

    For a file recorded on the six leads but labelled as line currents (the
    ``--currents winding`` option, import key ``currents = "winding"``):
    channel Ia becomes winding A-B (A -> B), Ib B-C, Ic C-A.  Samples are not touched.

    Raises
    ------
    InvalidParameterError
        The capture has not the three line currents A, B, C, or already has winding currents.
    """
    if winding_channels(capture):
        raise InvalidParameterError("currents = 'winding': the capture already has winding-current channels")
    lines = capture.phase_channels("current")
    if sorted(lines) != ["A", "B", "C"]:
        raise InvalidParameterError(f"currents = 'winding': needs the three line currents Ia, Ib, Ic; the capture has {sorted(c.label for c in lines.values())}")
    new = tuple(
        Channel(f"I{LL_PAIR[c.conductor].lower()}", "current", c.conductor, "winding", c.unit, c.source_label or c.name, c.scale)
        if c.kind == "current" and c.reference == "line" else c
        for c in capture.channels)
    return capture.replace(channels=new).with_history(
        "current channels Ia, Ib, Ic declared as the delta winding currents Iab, Ibc, Ica (six-lead hook-up, as told)")


def line_currents_from_windings(capture: Capture, connection: str | None = None) -> tuple[Capture, list[str]]:
    """Replace the three winding currents by the line currents they give (Kirchhoff, module docstring).

    Parameters
    ----------
    capture : Capture
    connection : {"delta", "star", None}
        The motor's connection from its nameplate, when known.

    Returns
    -------
    (capture, notes)
        The capture unchanged (and no note) when it has no winding channel;
        else the capture with Ia, Ib, Ic derived (placed where the winding
        channels were) and a note saying so, or, when the conversion cannot be
        made, the capture unchanged with a note why.

    Examples
    --------
    A balanced delta: the line current is sqrt(3) times the winding current and lags it by 30 deg.

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, Channel
    >>> t = np.arange(1000) / 5000.0
    >>> w = [np.cos(2 * np.pi * 50 * t - k * 2 * np.pi / 3) for k in range(3)]
    >>> chans = [Channel(n, "current", c, "winding", "A") for n, c in zip(("Iab", "Ibc", "Ica"), "ABC")]
    >>> cap, notes = line_currents_from_windings(from_arrays(np.vstack(w), chans, 5000.0))
    >>> print(cap.channel_names, round(float(np.abs(cap.read()[0]).max()), 3))
    ('Ia', 'Ib', 'Ic') 1.732
    """
    wind = winding_channels(capture)
    if not wind:
        return capture, []
    have = [wind[c].label for c in "ABC" if c in wind]
    if len(wind) < 3:
        return capture, [f"winding currents {have}: the line currents need all three windings (Kirchhoff at the delta's "
                         "corners); currents not analysed"]
    if connection is not None and connection not in ("delta",):
        return capture, [f"winding currents {have} but the nameplate says the motor is {connection}-connected: the "
                         "winding currents A-B, B-C, C-A are a delta's; not converted, currents not analysed (check the "
                         "nameplate or the channel mapping)"]
    if capture.phase_channels("current"):
        raise InvalidParameterError(f"the capture has both line currents {sorted(capture.phase_channels('current'))} and winding "
                                    f"currents {have}: map one set only")
    names = list(capture.channel_names)
    out: list[Channel] = []
    rows: list[np.ndarray] = []
    for ch in capture.channels:
        row = np.zeros(len(names))
        if ch.kind == "current" and ch.reference == "winding" and ch.conductor in wind:
            plus, minus = KCL_TERMS[ch.conductor]
            row[names.index(wind[plus].name)] += 1.0
            row[names.index(wind[minus].name)] -= 1.0
            out.append(Channel(f"I{ch.conductor.lower()}", "current", ch.conductor, "line", ch.unit,
                               f"{wind[plus].name} - {wind[minus].name}", ch.scale))
        else:
            row[names.index(ch.name)] = 1.0
            out.append(ch)
        rows.append(row)
    from .hookup.transform import TransformSource

    names_out = [c.name for c in out]
    if len(set(names_out)) != len(names_out):
        raise InvalidParameterError(f"winding currents {have}: the derived line currents Ia, Ib, Ic clash with channels {names_out}")
    conv = capture.replace(channels=tuple(out), source=TransformSource(capture.source, np.vstack(rows)))
    rule = (f"Ia = {wind['A'].name} - {wind['C'].name}, Ib = {wind['B'].name} - {wind['A'].name}, "
            f"Ic = {wind['C'].name} - {wind['B'].name}")
    conv = conv.with_history(f"line currents from the delta winding currents (Kirchhoff): {rule}")
    return conv, [f"currents: the capture carries the delta winding currents {have} (six-lead hook-up; Iab from A to B); "
                  f"the line currents are derived by Kirchhoff's current law ({rule}); a current circulating in the delta "
                  "(zero sequence) flows in no line and is not seen"]


__all__ = ["KCL_TERMS", "declare_windings", "line_currents_from_windings", "winding_channels"]
