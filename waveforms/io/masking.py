"""Broken samples are masked at import: non-finite (NaN, +/-inf) or out-of-range samples become missing.

A run of +/-inf, a stretch of 1e300 or a block of NaN in a file is not a
measurement: left in place, an infinite RMS reads as a swell and a missing
current as a lost line.  `mask_broken` makes one bounded-memory pass over the
capture, lists every stretch holding such samples as a `waveforms.capture.Gap`
(a data-quality stretch, reported by `waveforms.quality.quality_notes` and in
result.json), and wraps the sample source so that those samples read as NaN:
every later stage sees them as missing, never as a finding.  A capture with
no usable sample at all is refused.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence

import numpy as np

from ..capture import Capture, Gap, SampleSource
from ..errors import CaptureReadError

#: Largest magnitude taken as a real sample [V or A]: beyond this (10^8 V or A) a value is a broken
#: sample, not a measurement (common practice, no source: the highest transmission voltages and fault
#: currents are a few 10^6 V and 10^5 A).
MAX_ABS_SAMPLE = 1e8
#: Broken stretches closer than this many samples are reported as one.
MERGE_SAMPLES = 64


class MaskedSource:
    """A sample source whose non-finite or out-of-range samples read as NaN."""

    def __init__(self, inner: SampleSource, limit: float = MAX_ABS_SAMPLE) -> None:
        self.inner = inner
        self.limit = float(limit)

    @property
    def n_samples(self) -> int:
        return self.inner.n_samples

    @property
    def n_channels(self) -> int:
        return self.inner.n_channels

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        x = np.array(self.inner.read(start, stop, channel_indices), dtype=np.float64, copy=True)
        with np.errstate(invalid="ignore"):
            x[~(np.abs(x) <= self.limit)] = np.nan
        return x

    def close(self) -> None:
        close = getattr(self.inner, "close", None)
        if close is not None:
            close()


def _runs(bad: np.ndarray) -> np.ndarray:
    """``[start, stop)`` index pairs of the True runs of a 1-D boolean array, shape (n, 2)."""
    edges = np.flatnonzero(np.diff(np.concatenate(([False], bad, [False])).astype(np.int8)))
    return edges.reshape(-1, 2)


def _merge(pairs: list[tuple[int, int]], join: int) -> list[tuple[int, int]]:
    out: list[tuple[int, int]] = []
    for a, b in sorted(pairs):
        if out and a - out[-1][1] <= join:
            out[-1] = (out[-1][0], max(out[-1][1], b))
        else:
            out.append((a, b))
    return out


def mask_broken(capture: Capture, path: str = "", chunk_samples: int = 1 << 18) -> Capture:
    """``capture`` with its broken samples masked and listed as gaps (itself when there are none).

    Raises
    ------
    CaptureReadError
        When no sample of any channel is usable (all NaN, infinite or out of range).
    """
    n = capture.n_samples
    stretches: list[tuple[int, int]] = []
    per_channel = np.zeros(len(capture.channels), dtype=np.int64)
    kinds = np.zeros(3, dtype=np.int64)  # NaN, +/-inf, out of range
    good_total = 0
    pos = 0
    while pos < n:
        hi = min(n, pos + chunk_samples)
        x = np.asarray(capture.source.read(pos, hi, list(range(len(capture.channels)))), dtype=np.float64)
        with np.errstate(invalid="ignore"):
            nan = np.isnan(x)
            inf = np.isinf(x)
            big = np.abs(x) > MAX_ABS_SAMPLE
        bad = nan | inf | big
        good_total += int(bad.size - np.count_nonzero(bad))
        if bad.any():
            per_channel += np.count_nonzero(bad, axis=1)
            kinds += [np.count_nonzero(nan), np.count_nonzero(inf), np.count_nonzero(big & ~inf)]
            stretches += [(int(a) + pos, int(b) + pos) for a, b in _runs(bad.any(axis=0))]
        pos = hi
    if n and good_total == 0:
        raise CaptureReadError(path or capture.provenance.source_path, "",
                               "no usable sample in any channel (all NaN, infinite or out of range): nothing to analyse")
    if not stretches:
        return capture
    known = [(g.start_index, g.stop_index) for g in capture.gaps]
    new = [(a, b) for a, b in _merge(stretches, MERGE_SAMPLES)
           if not any(ga <= a and b <= gb for ga, gb in known)]
    if not new and not kinds[1] and not kinds[2]:
        return capture  # only the NaN of gaps the file already lists
    names = [c.name for c, k in zip(capture.channels, per_channel, strict=True) if k]
    what = ", ".join(f"{k} {label}" for k, label in zip(kinds.tolist(), ("NaN", "infinite", "out-of-range (|x| > 1e8)"), strict=True) if k)
    reason = f"non-finite or out-of-range samples in {', '.join(names)}, masked as missing"
    gaps = tuple(sorted(capture.gaps + tuple(Gap(a, b, reason) for a, b in new), key=lambda g: g.start_index))
    note = (f"broken samples masked as missing (non-finite or out of range): {what} in {', '.join(names)}; "
            f"{len(new)} stretch(es) listed as gaps")
    prov = dataclasses.replace(capture.provenance, notes=capture.provenance.notes + (note,))
    return capture.replace(source=MaskedSource(capture.source), gaps=gaps, provenance=prov)
