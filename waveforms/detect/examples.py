"""Small synthetic detector inputs for the numpydoc Examples of `waveforms.detect`.

`example_input` builds what `waveforms.analysis` would hand the detectors for a
balanced 400 V, 50 Hz motor circuit (line-to-neutral voltages, line currents
lagging by ``lag_rad``) whose RMS voltage and current follow envelopes of your
choice, measured by `waveforms.measure.measure`.  It is the long way round of
`waveforms.detect.registry.detect`'s example, kept in one place so that each
detector's example shows only what is particular to it.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

import numpy as np

Envelope = float | np.ndarray | Callable[[np.ndarray], Any]


def _envelope(x: Envelope, t: np.ndarray) -> np.ndarray:
    return np.asarray(x(t) if callable(x) else x, dtype=float)


def example_input(v_rms_v: Envelope = 230.0, i_rms_a: Envelope = 10.0, *, duration_s: float = 3.0,
                  fs_hz: float = 5000.0, lag_rad: float = 0.5, currents_a: Callable[[np.ndarray], np.ndarray] | None = None,
                  fla_a: float | None = 10.0, locked_rotor_a: float | None = 60.0):
    """A `waveforms.detect.DetectionInput` of a synthetic 400 V, 50 Hz A-B-C motor circuit.

    Parameters
    ----------
    v_rms_v, i_rms_a : float, ndarray or callable
        Line-to-neutral voltage and line current RMS [V], [A]: a number, an array
        broadcasting against ``(3, n)`` (per phase and/or per sample), or a function
        of the sample times ``t`` [s] returning one.
    duration_s, fs_hz : float
        Length [s] and sample rate [Hz].
    lag_rad : float
        Current lag behind its voltage [rad].
    currents_a : callable, optional
        ``currents_a(t)`` -> line current samples (3, n) [A], replacing the
        ``i_rms_a`` sinusoids (e.g. a line that opens).
    fla_a, locked_rotor_a : float or None
        Nameplate full-load and locked-rotor currents [A].

    Examples
    --------
    >>> inp = example_input()
    >>> print(len(inp.cycles), round(float(inp.cycles["Va_rms"].median()), 1), round(float(inp.cycles["Ia_rms"].median()), 1))
    149 230.0 10.0
    """
    from ..capture import from_arrays, standard_channels
    from ..measure import measure
    from .context import DetectionInput

    t = np.arange(int(round(duration_s * fs_hz))) / fs_hz
    ph = np.array([0.0, -2.0, 2.0])[:, None] * np.pi / 3
    wt = 2 * np.pi * 50 * t[None] + ph
    v = _envelope(v_rms_v, t) * np.sqrt(2) * np.cos(wt)
    i = currents_a(t) if currents_a is not None else _envelope(i_rms_a, t) * np.sqrt(2) * np.cos(wt - lag_rad)
    cap = from_arrays(np.vstack([np.broadcast_to(v, (3, t.size)), np.broadcast_to(i, (3, t.size))]), standard_channels(),
                      fs_hz, nominal_frequency_hz=50.0, nominal_voltage_v=400.0)
    m = measure(cap)
    return DetectionInput(m.cycles, m.half_cycles, fla_a=fla_a, locked_rotor_a=locked_rotor_a,
                          declared_voltage_ll_v=400.0, capture=cap)


def line_a_opens(t: np.ndarray, *, open_at_s: float = 1.0, before_a: float = 10.0, after_a: float = 17.3,
                 lag_rad: float = 0.5) -> np.ndarray:
    """Line currents (3, n) [A] of a loaded motor whose line A opens at ``open_at_s``.

    Before: a balanced A-B-C set of ``before_a`` RMS lagging ``lag_rad``.  After: ``Ia = 0``
    and ``Ib = -Ic`` of ``after_a`` RMS (single phasing: the remaining two lines in series,
    in antiphase; the rise of about sqrt 3 is common practice, no source), in phase with
    the line-to-line voltage Vbc less the lag.

    Examples
    --------
    At 0.5 s (a whole number of cycles) Ia = 10 sqrt 2 cos(-0.5) = 12.41 A; at 1.5 s Ia = 0 and
    Ib = -Ic = 17.3 sqrt 2 cos(-pi/2 - 0.5) = -11.73 A:

    >>> t = np.array([0.5, 1.5])
    >>> np.round(line_a_opens(t), 2).tolist()
    [[12.41, 0.0], [-12.08, -11.73], [-0.33, 11.73]]
    """
    ph = np.array([0.0, -2.0, 2.0])[:, None] * np.pi / 3
    i = before_a * np.sqrt(2) * np.cos(2 * np.pi * 50 * t[None] + ph - lag_rad)
    i_bc = after_a * np.sqrt(2) * np.cos(2 * np.pi * 50 * t - np.pi / 2 - lag_rad)
    lost = t >= open_at_s
    i[0, lost], i[1, lost], i[2, lost] = 0.0, i_bc[lost], -i_bc[lost]
    return i
