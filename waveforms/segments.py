"""Segments of a capture: the stretches of recorded samples between time-stamp gaps.

A gap in the time stamps (rows missing from the file) is a "no data" state:
nothing was observed there, so no measurement, event or timeline period may
span it.  This module holds the one rule for what splits a capture and the
helpers the chain uses:

* `GappedSource`: the rows of a file placed on the uniform grid without
  allocating the missing grid points (a one-hour gap at 5 kHz would be 18
  million NaN per channel); a read returns NaN inside a gap and allocates only
  the range read.
* `split_gaps`: the capture's gaps that split the analysis (time-stamp gaps of
  at least `SPLIT_MIN_S`).
* `clip_events`: events are cut at a gap; an event the gap's end would
  trigger (a start seen only because the samples resume) is dropped.
* `mark_no_data`: the per-cycle motor states inside a gap become ``"no data"``.

Our design, no source.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from .capture import Capture, Gap

#: A time-stamp gap at least this long splits the analysis [s]: one cycle of a 50 Hz system
#: (a shorter hole lies inside one cycle and is masked like any missing sample; our choice, no source).
SPLIT_MIN_S = 0.02
#: The reason text every time-stamp gap starts with (`waveforms.timebase.place_on_grid`).
STAMP_GAP_REASON = "no rows in the file"
#: State of the timeline inside a gap.
NO_DATA = "no data"
#: Events beginning within this many seconds after a gap's end were triggered by the samples resuming
#: (the detectors merge runs across up to 2 cycles: 3 cycles of 50 Hz; our choice, no source).
RESUME_TOLERANCE_S = 0.06
#: Event kinds defined by their onset: one beginning at a gap's end was not observed and is dropped.
ONSET_KINDS = ("start",)


class GappedSource:
    """Rows on a uniform grid with holes; missing grid points read as NaN and are never stored.

    Parameters
    ----------
    values : ndarray, shape (n_channels, n_rows)
        The rows in file order.
    grid_index : ndarray of int, shape (n_rows,)
        Grid position of every row, strictly increasing.
    """

    def __init__(self, values: np.ndarray, grid_index: Any) -> None:
        self._values = np.asarray(values, dtype=np.float64)
        idx = np.asarray(grid_index[:], dtype=np.int64)
        # runs of consecutive grid points: (grid start, grid stop, row start)
        brk = np.flatnonzero(np.diff(idx) != 1) + 1
        starts = np.r_[0, brk]
        stops = np.r_[brk, idx.size]
        self._g0 = idx[starts]
        self._g1 = idx[stops - 1] + 1
        self._r0 = starts
        self._n = int(idx[-1]) + 1 if idx.size else 0
        self._values.setflags(write=False)

    @property
    def n_samples(self) -> int:
        return self._n

    @property
    def n_channels(self) -> int:
        return int(self._values.shape[0])

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        rows = list(channel_indices)
        out = np.full((len(rows), max(0, stop - start)), np.nan)
        k0 = max(0, int(np.searchsorted(self._g1, start, side="right")))
        k1 = int(np.searchsorted(self._g0, stop, side="left"))
        for k in range(k0, k1):  # one copy per recorded run inside the range (a few), not per sample
            a, b = max(start, int(self._g0[k])), min(stop, int(self._g1[k]))
            if a < b:
                r = int(self._r0[k]) + a - int(self._g0[k])
                out[:, a - start : b - start] = self._values[rows, r : r + b - a]
        return out


def place_gapped(values: np.ndarray, report: Any) -> tuple[Any, tuple[Gap, ...]]:
    """`waveforms.timebase.place_on_grid` without allocating the gaps: (source, gaps).

    The source is an `ArraySource` when nothing is missing, else a `GappedSource`.
    """
    from .capture import ArraySource
    from .errors import InvalidParameterError

    if report.grid_index is None or report.first_duplicate is not None or report.first_backwards is not None or report.irregular:
        raise InvalidParameterError("irregular stamps (duplicates, backward steps, heavy jitter) cannot be placed on a grid")
    if not report.gaps:
        return ArraySource(values), ()
    period = report.period_s
    gaps = tuple(Gap(a, b, f"{STAMP_GAP_REASON} for {b - a} samples ({(b - a) * period:.6g} s) from t = {a * period:.6f} s")
                 for a, b in report.gaps)
    return GappedSource(values, report.grid_index), gaps


def split_gaps(capture: Capture) -> tuple[Gap, ...]:
    """The gaps that split the analysis: time-stamp gaps of at least `SPLIT_MIN_S`."""
    rate = capture.sample_rate_hz
    return tuple(g for g in capture.gaps if g.reason.startswith(STAMP_GAP_REASON) and g.n_samples >= SPLIT_MIN_S * rate)


def gap_spans_s(capture: Capture) -> list[tuple[float, float]]:
    """``(start_s, end_s)`` of every splitting gap, in capture seconds."""
    rate = capture.sample_rate_hz
    return [(g.start_index / rate, g.stop_index / rate) for g in split_gaps(capture)]


def clip_events(events: list, spans_s: list[tuple[float, float]]) -> tuple[list, list[str]]:
    """Events cut at the gaps: none spans one; returns (events, notes).

    An event beginning before a gap and reaching into it ends at the gap's
    start (figure ``cut_at_gap_s``).  An event beginning inside a gap or within
    `RESUME_TOLERANCE_S` after its end: of an onset kind (`ONSET_KINDS`) it is
    dropped (its onset was not observed, only the samples resuming); of any
    other kind it begins at the gap's end (figure ``present_when_data_resumed``).
    """
    if not spans_s:
        return list(events), []
    out: list = []
    dropped = 0
    for e in events:
        for g0, g1 in spans_s:
            end = math.inf if e.end_s is None else e.end_s
            if e.start_s < g0 < end:
                e = dataclasses.replace(e, end_s=g0, figures={**e.figures, "cut_at_gap_s": g0})
            elif g0 <= e.start_s < g1 + RESUME_TOLERANCE_S:
                if e.kind in ONSET_KINDS:
                    e = None
                    break
                e = dataclasses.replace(e, start_s=max(e.start_s, g1), figures={**e.figures, "present_when_data_resumed": True})
        if e is None:
            dropped += 1
        else:
            out.append(e)
    notes = [f"gaps: {len(spans_s)} time-stamp gap(s) split the analysis; no event spans one"]
    if dropped:
        notes.append(f"gaps: {dropped} event(s) seen only because the samples resumed after a gap were dropped")
    return out, notes


def mark_no_data(states: Any, spans_s: list[tuple[float, float]]) -> Any:
    """The per-cycle states (``t_start_s``, ``t_end_s``, ``state``) with ``"no data"`` for cycles inside a gap."""
    if not spans_s or len(states) == 0:
        return states
    out = states.copy()
    a, b = out["t_start_s"].to_numpy(float), out["t_end_s"].to_numpy(float)
    inside = np.zeros(len(out), bool)
    for g0, g1 in spans_s:
        inside |= (b > g0) & (a < g1)
    st = out["state"].to_numpy(object).copy()
    st[inside] = NO_DATA
    out["state"] = st
    return out
