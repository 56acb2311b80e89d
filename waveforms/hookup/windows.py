"""Fundamental phasors over a handful of short windows spread across a capture.

The hook-up checks look at the capture in a few places only: ``n_windows``
short blocks of ``cycles`` nominal cycles, evenly spread, read with
`Capture.read` (a few thousand samples each, never the whole capture).  In
each block the one-cycle fundamental phasors of every phase channel come
from `waveforms.speed.direction.cycle_phasors` (a DFT bin over whole cycles);
they are turned to a common reference (the first voltage channel, else the
largest current) cycle by cycle, so a supply a little off nominal frequency
does not smear them, and averaged.  A block is *steady* when no channel's
relative phasor moves by more than ``steady_tol`` of its kind's largest
magnitude from cycle to cycle (a start, a stall onset or an opening line is
not steady).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from ..capture import Capture
from ..errors import InvalidParameterError
from ..speed.direction import cycle_phasors


@dataclasses.dataclass(frozen=True)
class WindowPhasors:
    """Mean relative phasors of each phase channel in each window.

    Attributes
    ----------
    t_s : ndarray (n_win,)
        Window centres [s from the capture start].
    phasors : dict str -> ndarray (n_win,), complex
        Channel name -> RMS phasor [V or A], angle relative to the window's reference.
    steady : ndarray (n_win,) bool
    spread : ndarray (n_win,)
        Largest cycle-to-cycle deviation, as a fraction of its kind's largest magnitude [-].
    frequency_hz : float
        Frequency the phasors were taken at [Hz].
    """

    t_s: np.ndarray
    phasors: dict[str, np.ndarray]
    steady: np.ndarray
    spread: np.ndarray
    frequency_hz: float

    @property
    def n(self) -> int:
        return int(self.t_s.size)


def window_starts(n_samples: int, block: int, n_windows: int) -> np.ndarray:
    """Start indices of ``n_windows`` blocks of ``block`` samples spread evenly over the capture (ends kept clear)."""
    if n_samples < block:
        return np.zeros(0, dtype=int)
    margin = min(block, max(0, n_samples - block) // 2)
    lo, hi = margin // 2, n_samples - block - margin // 2
    if hi <= lo:
        return np.array([max(0, (n_samples - block) // 2)])
    k = min(n_windows, max(1, (hi - lo) // block + 1))
    return np.unique(np.linspace(lo, hi, k).round().astype(int))


def window_phasors(capture: Capture, channels: list[str], f_hz: float, n_windows: int = 16, cycles: int = 6,
                   steady_tol: float = 0.05) -> WindowPhasors:
    """Phasors of ``channels`` in ``n_windows`` blocks of ``cycles`` cycles (see the module text).

    Raises
    ------
    InvalidParameterError
        The capture is shorter than one block.
    """
    fs = capture.sample_rate_hz
    per = int(round(fs / f_hz))
    block = per * cycles
    starts = window_starts(capture.n_samples, block, n_windows)
    if starts.size == 0:
        raise InvalidParameterError(f"{capture.n_samples} samples are fewer than one hook-up window of {cycles} cycles")
    kinds = np.array([capture.channel(c).kind for c in channels])
    volt = [i for i, k in enumerate(kinds) if k == "voltage"]
    out = np.full((len(channels), starts.size), np.nan + 0j)
    spread = np.full(starts.size, np.inf)
    for w, a in enumerate(starts):  # a handful of blocks, each vectorised over channels and cycles
        x = capture.read(int(a), int(a) + block, channels)
        if not np.isfinite(x).all():
            continue
        _, ph = cycle_phasors(x, fs, fs / per, window_cycles=1)  # (n_ch, cycles)
        mags = np.abs(ph)
        ref_row = volt[int(np.argmax(mags[volt].mean(axis=1)))] if volt else int(np.argmax(mags.mean(axis=1)))
        ref = ph[ref_row]
        if not np.all(np.abs(ref) > 0):
            continue
        rel = ph * (np.abs(ref) / ref)[None, :]
        mean = rel.mean(axis=1)
        dev = np.abs(rel - mean[:, None]).max(axis=1)
        scale = np.ones(len(channels))
        for kind in ("voltage", "current"):
            sel = kinds == kind
            if sel.any():
                scale[sel] = max(float(np.abs(mean[sel]).max()), 1e-12)
        out[:, w] = mean
        spread[w] = float((dev / scale).max())
    t = (starts + 0.5 * block) / fs
    return WindowPhasors(t_s=t, phasors={c: out[i] for i, c in enumerate(channels)}, steady=spread <= steady_tol,
                         spread=spread, frequency_hz=fs / per)
