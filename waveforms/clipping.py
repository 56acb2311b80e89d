"""Clipped voltage cycles: flat tops at the converter's or the range's limit are no dip.

A voltage input driven past its range records flat tops: runs of equal samples
at the top (and bottom) of the wave.  Its RMS then reads low, 83-90 % of the
declared voltage for a moderate overdrive, which the dip detector would report
as a dip.  This module finds the flat-top runs of each voltage channel named by
a dip or swell event (a chunked pass over those channels only, so a capture
without such events costs nothing), marks the cycles that hold them, drops the
events whose own cycles are mostly clipped, and reports each clipped stretch
as a data-quality warning.

Rule (common practice, no source): a flat top is a run of at least
`CLIP_MIN_RUN` equal consecutive samples whose magnitude is at least
`PEAK_SHARE` of the block's largest magnitude (equal samples near a zero
crossing are a slow or coarse signal, not a clipped one).  A real dip lowers
the peaks below the limit, so its cycles are not clipped and it is kept.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .capture import Capture
from .quality import CLIP_MIN_RUN

#: Equal samples at or above this share of the block's peak magnitude are a flat top (our choice, no source).
PEAK_SHARE = 0.5
#: An event is dropped when at least this share of its cycles on its channel are clipped (our choice, no source).
EVENT_SHARE = 0.5
#: Samples per block of the pass.
CHUNK = 1 << 18
EVENT_KINDS = ("dip", "swell")


def flat_top_runs(x: np.ndarray, min_run: int = CLIP_MIN_RUN, peak_share: float = PEAK_SHARE) -> np.ndarray:
    """``[start, stop)`` of every flat-top run in ``x``, shape (k, 2).

    >>> x = np.array([0.0, 0.9, 1.0, 1.0, 1.0, 0.9, 0.0, -0.9, -1.0, -1.0, -1.0, -0.9])
    >>> flat_top_runs(x).tolist()
    [[2, 5], [8, 11]]
    """
    x = np.asarray(x, dtype=np.float64)
    fin = np.isfinite(x)
    if x.size < min_run or not fin.any():
        return np.empty((0, 2), dtype=np.int64)
    peak = float(np.max(np.abs(x[fin])))
    same = np.zeros(x.size, dtype=bool)
    same[1:] = (x[1:] == x[:-1]) & fin[1:] & (np.abs(x[1:]) >= peak_share * peak) & (peak > 0)
    # a run of m equal samples has m - 1 "same as before" flags, starting one sample later
    edges = np.diff(np.concatenate(([0], same.astype(np.int8), [0])))
    a, b = np.flatnonzero(edges == 1) - 1, np.flatnonzero(edges == -1)
    keep = (b - a) >= min_run
    return np.stack([a[keep], b[keep]], axis=1).astype(np.int64)


def channel_flat_tops(capture: Capture, channel: str) -> np.ndarray:
    """Flat-top runs of one channel over the whole capture (chunked; runs cut by a block edge join up)."""
    out: list[np.ndarray] = []
    for chunk in capture.iter_chunks(CHUNK, overlap_samples=CLIP_MIN_RUN, channels=[channel]):
        r = flat_top_runs(chunk.data[0]) + chunk.start_index
        own0 = chunk.owned_start_index
        own1 = own0 + chunk.owned.shape[1]
        out.append(r[(r[:, 0] >= own0) & (r[:, 0] < own1)] if r.size else r)
    return np.concatenate(out) if out else np.empty((0, 2), dtype=np.int64)


def clipped_cycles(t_start_s: np.ndarray, t_end_s: np.ndarray, runs: np.ndarray, rate_hz: float) -> np.ndarray:
    """Per cycle: True when a flat-top run lies (partly) inside ``[t_start_s, t_end_s)``."""
    a, b = np.asarray(t_start_s, float), np.asarray(t_end_s, float)
    if runs.size == 0:
        return np.zeros(a.size, bool)
    mid = 0.5 * (runs[:, 0] + runs[:, 1]) / rate_hz
    mid.sort()
    return np.searchsorted(mid, b, side="left") > np.searchsorted(mid, a, side="left")


def _stretches(t0: np.ndarray, t1: np.ndarray, flag: np.ndarray) -> list[tuple[float, float, int]]:
    edges = np.diff(np.concatenate(([0], flag.astype(np.int8), [0])))
    return [(float(t0[i]), float(t1[j - 1]), int(j - i)) for i, j in zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1), strict=True)]


def drop_clipped_events(capture: Capture, cycles: Any, events: list) -> tuple[list, list[dict], list[str]]:
    """Dips and swells built from clipped cycles removed: (events, data-quality entries, notes)."""
    wanted = sorted({c for e in events if e.kind in EVENT_KINDS for c in (e.figures.get("channels") or [])
                     if c in capture.channel_names and capture.channel(c).kind == "voltage"})
    if not wanted or cycles is None or len(cycles) == 0 or "t_start_s" not in cycles:
        return list(events), [], []
    t0 = cycles["t_start_s"].to_numpy(float)
    t1 = cycles["t_end_s"].to_numpy(float) if "t_end_s" in cycles else np.r_[t0[1:], t0[-1]]
    flags = {c: clipped_cycles(t0, t1, channel_flat_tops(capture, c), capture.sample_rate_hz) for c in wanted}
    quality: list[dict] = []
    for c, f in flags.items():
        for s0, s1, n in _stretches(t0, t1, f):
            quality.append({"check": "clipping_stretch", "channel": c, "severity": "warning",
                            "message": (f"{c}: flat tops (clipping at the input's range) in {n} cycle(s) from t = {s0:.3f} s to "
                                        f"{s1:.3f} s: the RMS reads low there; no dip or swell is built from those cycles"),
                            "start_s": s0, "duration_s": s1 - s0, "cycles": n})
    kept, dropped = [], 0
    for e in events:
        chans = [c for c in (e.figures.get("channels") or []) if c in flags]
        if e.kind in EVENT_KINDS and chans:
            end = math.inf if e.end_s is None else e.end_s
            inside = (t1 > e.start_s) & (t0 < end)
            share = max(float(flags[c][inside].mean()) if inside.any() else 0.0 for c in chans)
            if share >= EVENT_SHARE:
                dropped += 1
                continue
        kept.append(e)
    notes = [f"clipping: {dropped} dip/swell event(s) built from clipped cycles dropped (flat tops at the input's range)"] if dropped else []
    return kept, quality, notes
