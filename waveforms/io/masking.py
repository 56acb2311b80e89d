"""Broken samples are masked at import: non-finite (NaN, +/-inf) or out-of-range samples become missing.

A run of +/-inf, a stretch of 1e300 or a block of NaN in a file is not a
measurement: left in place, an infinite RMS reads as a swell and a missing
current as a lost line.  `mask_broken` makes one bounded-memory pass over the
capture, lists every stretch holding such samples as a `waveforms.capture.Gap`
(a data-quality stretch, reported by `waveforms.quality.quality_notes` and in
result.json), and wraps the sample source so that those samples read as NaN:
every later stage sees them as missing, never as a finding.  A capture with
no usable sample at all is refused.

The chain (`waveforms.recipe`, issue 10: one pass over the samples) does not
make that pass of its own: `defer_masking` refuses a capture without a usable
sample (reading only up to its first usable one), wraps the source at once and
returns a `BrokenScan`, which the measurement engine's pass feeds with the
blocks it measures; `BrokenScan.apply` then lists the stretches and the note,
the same ones `mask_broken` gives.
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
        x = np.asarray(self.inner.read(start, stop, channel_indices), dtype=np.float64)
        # the usual block has no broken sample: two reductions, no copy (a NaN fails both tests)
        if x.size == 0 or (x.min() >= -self.limit and x.max() <= self.limit):
            return x
        x = np.array(x, dtype=np.float64, copy=True)
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


class _Tally:
    """The broken samples of blocks handed in any order of whole blocks: stretches, per-channel and per-kind counts."""

    def __init__(self, n_channels: int) -> None:
        self.stretches: list[tuple[int, int]] = []
        self.per_channel = np.zeros(n_channels, dtype=np.int64)
        self.kinds = np.zeros(3, dtype=np.int64)  # NaN, +/-inf, out of range
        self.good_total = 0

    def add(self, x: np.ndarray, pos: int) -> None:
        """Add the raw samples ``x`` (n_channels, n), sample ``pos`` first."""
        with np.errstate(invalid="ignore"):
            nan = np.isnan(x)
            inf = np.isinf(x)
            big = np.abs(x) > MAX_ABS_SAMPLE
        bad = nan | inf | big
        self.good_total += int(bad.size - np.count_nonzero(bad))
        if bad.any():
            self.per_channel += np.count_nonzero(bad, axis=1)
            self.kinds += [np.count_nonzero(nan), np.count_nonzero(inf), np.count_nonzero(big & ~inf)]
            self.stretches += [(int(a) + pos, int(b) + pos) for a, b in _runs(bad.any(axis=0))]

    def masked(self, capture: Capture, source: SampleSource | None) -> Capture:
        """``capture`` with the stretches listed as gaps and the note added (itself when there is nothing to list).

        ``source``: the masking source to put in, or None when the capture already reads through one.
        """
        if not self.stretches:
            return capture
        kinds, per_channel = self.kinds, self.per_channel
        known = [(g.start_index, g.stop_index) for g in capture.gaps]
        new = [(a, b) for a, b in _merge(self.stretches, MERGE_SAMPLES)
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
        changes: dict = {"gaps": gaps, "provenance": prov}
        if source is not None:
            changes["source"] = source
        return capture.replace(**changes)


def _refuse(capture: Capture, path: str) -> CaptureReadError:
    return CaptureReadError(path or capture.provenance.source_path, "",
                            "no usable sample in any channel (all NaN, infinite or out of range): nothing to analyse")


def mask_broken(capture: Capture, path: str = "", chunk_samples: int = 1 << 18) -> Capture:
    """``capture`` with its broken samples masked and listed as gaps (itself when there are none).

    Raises
    ------
    CaptureReadError
        When no sample of any channel is usable (all NaN, infinite or out of range).
    """
    n = capture.n_samples
    tally = _Tally(len(capture.channels))
    rows = list(range(len(capture.channels)))
    pos = 0
    while pos < n:
        hi = min(n, pos + chunk_samples)
        tally.add(np.asarray(capture.source.read(pos, hi, rows), dtype=np.float64), pos)
        pos = hi
    if n and tally.good_total == 0:
        raise _refuse(capture, path)
    return tally.masked(capture, MaskedSource(capture.source))


class BrokenScan:
    """The scan of `mask_broken`, fed by a pass that reads the samples anyway (see `defer_masking`).

    `feed` takes the owned blocks of the masked capture in time order (the signature of
    `waveforms.measure.engine.measure`'s ``feed``); a block holding a NaN is read again
    raw to tell NaN, infinite and out-of-range samples apart (broken blocks only).
    `apply` lists what was found on the capture, as `mask_broken` does.
    """

    def __init__(self, raw: Capture, masked_source: MaskedSource) -> None:
        self.raw = raw
        self.source = masked_source  # the source the scanned capture reads through
        self.tally = _Tally(len(raw.channels))
        self.pos = 0
        self._rows = list(range(len(raw.channels)))

    def fits(self, capture: Capture) -> bool:
        """True when a pass over ``capture`` reads the samples this scan is about (no derived channels)."""
        return capture.source is self.source

    def feed(self, x: np.ndarray) -> None:
        """Add the next owned block ``x`` (n_channels, n) of the masked capture."""
        n = int(x.shape[1])
        if n and np.isnan(np.add.reduce(x, axis=None)):  # masked samples are finite and at most 1e8: no overflow
            self.tally.add(np.asarray(self.raw.source.read(self.pos, self.pos + n, self._rows), dtype=np.float64), self.pos)
        self.pos += n

    def run(self, chunk_samples: int = 1 << 18) -> None:
        """Scan the samples not fed yet with a pass of its own (when no pass can carry the scan)."""
        n = self.raw.n_samples
        while self.pos < n:
            hi = min(n, self.pos + chunk_samples)
            self.tally.add(np.asarray(self.raw.source.read(self.pos, hi, self._rows), dtype=np.float64), self.pos)
            self.pos = hi

    def apply(self, capture: Capture) -> Capture:
        """``capture`` (the scanned one, or the same after later stages) with the broken stretches listed."""
        self.run()  # whatever the pass did not cover (nothing after a whole pass)
        return self.tally.masked(capture, None)


def defer_masking(capture: Capture, path: str = "", probe_samples: int = 4096,
                  chunk_samples: int = 1 << 18) -> tuple[Capture, BrokenScan]:
    """``capture`` reading through `MaskedSource`, and the `BrokenScan` a later pass is to feed.

    The refusal of `mask_broken` is kept here, at import: the samples are read only up to
    the first usable one (the first ``probe_samples`` of an ordinary capture).

    Raises
    ------
    CaptureReadError
        When no sample of any channel is usable (all NaN, infinite or out of range).
    """
    n = capture.n_samples
    rows = list(range(len(capture.channels)))
    pos, step, usable = 0, max(1, probe_samples), n == 0
    while pos < n and not usable:
        hi = min(n, pos + step)
        x = np.asarray(capture.source.read(pos, hi, rows), dtype=np.float64)
        with np.errstate(invalid="ignore"):
            usable = bool((np.abs(x) <= MAX_ABS_SAMPLE).any())
        pos, step = hi, chunk_samples
    if not usable:
        raise _refuse(capture, path)
    src = MaskedSource(capture.source)
    return capture.replace(source=src), BrokenScan(capture, src)
