"""Data-quality notes on a capture, computed chunk by chunk in bounded memory.

One pass over the samples gathers, per channel: count, NaNs, min, max, mean,
RMS, and the runs of consecutive samples sitting exactly at the channel's
maximum or minimum (clipping / flat-topping: an input range exceeded, a
saturated CT).  From those figures `quality_notes` derives plain notes:
clipping, flat (constant) channels, dead channels (RMS far below the others of
the same kind), NaNs, gaps, and DC offset relative to RMS.

Everything returned is plain data (a DataFrame and a list of dicts); printing
is the CLI's business.
"""

from __future__ import annotations

import dataclasses
from typing import Any

from typing import TYPE_CHECKING

import numpy as np

from .capture import Capture

if TYPE_CHECKING:  # pandas is imported where a table is made, not at start-up (issue 10 item 5)
    import pandas as pd

#: A run of at least this many equal samples at the max/min counts as flat-topping.
CLIP_MIN_RUN = 3
#: Number of such runs before clipping is reported.
CLIP_MIN_RUNS = 3
#: A channel whose RMS is below this fraction of the largest RMS of its kind is "dead".
DEAD_FRACTION = 0.02
#: DC offset reported above this fraction of the AC RMS.
OFFSET_FRACTION = 0.05


@dataclasses.dataclass
class _Extreme:
    """Runs of samples equal to the running extreme (max or min) of one channel."""

    value: float = np.nan
    runs: int = 0  # finished runs of >= CLIP_MIN_RUN samples
    longest: int = 0
    at_value: int = 0  # samples equal to the extreme, in runs >= CLIP_MIN_RUN
    open_run: int = 0  # run touching the end of the previous chunk (not yet counted)

    def _close(self, length: int) -> None:
        if length >= CLIP_MIN_RUN:
            self.runs += 1
            self.at_value += length
        self.longest = max(self.longest, length)

    def update(self, x: np.ndarray, sign: float, extreme: float | None = None) -> None:
        """Add the next samples ``x`` of the channel; ``extreme`` is their max (sign +1) or min (-1), NaN if none is finite."""
        if extreme is None:
            finite = x[np.isfinite(x)]
            extreme = float(np.max(finite * sign)) * sign if finite.size else np.nan
        if np.isnan(extreme):
            self._close(self.open_run)
            self.open_run = 0
            return
        cm = float(extreme)
        if np.isnan(self.value) or cm * sign > self.value * sign:
            self.value, self.runs, self.longest, self.at_value, self.open_run = cm, 0, 0, 0, 0
        elif cm != self.value:
            self._close(self.open_run)
            self.open_run = 0
            return
        mask = np.concatenate(([False], x == self.value, [False]))
        edges = np.diff(mask.astype(np.int8))
        starts = np.flatnonzero(edges == 1)
        stops = np.flatnonzero(edges == -1)
        lengths = stops - starts
        if starts.size and starts[0] == 0:
            lengths[0] += self.open_run
        else:
            self._close(self.open_run)
        self.open_run = 0
        if stops.size and stops[-1] == x.size:
            self.open_run = int(lengths[-1])
            lengths = lengths[:-1]
        long = lengths[lengths >= CLIP_MIN_RUN]
        self.runs += int(long.size)
        self.at_value += int(long.sum())
        if lengths.size:
            self.longest = max(self.longest, int(lengths.max()))

    def finish(self) -> None:
        self._close(self.open_run)
        self.open_run = 0


class StatsAccumulator:
    """The per-channel figures of `channel_stats`, gathered from owned blocks fed in time order.

    The shared pass of the measurement engine (`waveforms.measure.engine.measure`) feeds it the
    same blocks it measures, so the survey needs no read of its own.
    """

    def __init__(self, capture: Capture) -> None:
        self.capture = capture
        n_ch = len(capture.channels)
        self.count = np.zeros(n_ch)
        self.nans = np.zeros(n_ch, dtype=np.int64)
        self.s1 = np.zeros(n_ch)
        self.s2 = np.zeros(n_ch)
        self.hi = [_Extreme() for _ in range(n_ch)]
        self.lo = [_Extreme() for _ in range(n_ch)]
        self.shift = np.full(n_ch, np.nan)  # first finite value: sums taken about it (numerically stable)

    def feed(self, x: np.ndarray) -> None:
        """Add the samples ``x`` (n_channels, n), the next ones after those fed before."""
        if x.shape[1] == 0:
            return
        fin = np.isfinite(x)
        all_fin = bool(fin.all())
        if all_fin:  # the usual case: no masks needed (same sums as the masked ones)
            self.count += x.shape[1]
            if np.isnan(self.shift).any():
                self.shift = np.where(np.isnan(self.shift), x[:, 0] if x.shape[1] else np.nan, self.shift)
            d = x - np.nan_to_num(self.shift)[:, None]
            hi, lo = x.max(axis=1), x.min(axis=1)
        else:
            self.nans += (~fin).sum(axis=1)
            self.count += fin.sum(axis=1)
            need = np.isnan(self.shift) & fin.any(axis=1)
            if need.any():
                first = np.argmax(fin, axis=1)
                self.shift[need] = x[need, first[need]]
            d = np.where(fin, x - np.nan_to_num(self.shift)[:, None], 0.0)
        self.s1 += d.sum(axis=1)
        self.s2 += (d * d).sum(axis=1)
        for i in range(x.shape[0]):  # per channel, not per sample
            self.hi[i].update(x[i], 1.0, float(hi[i]) if all_fin else None)
            self.lo[i].update(x[i], -1.0, float(lo[i]) if all_fin else None)

    def records(self) -> dict[str, dict[str, Any]]:
        """The statistics as plain data: channel name -> the columns of `channel_stats` (no pandas)."""
        capture, count, shift = self.capture, self.count, self.shift
        hi, lo = self.hi, self.lo
        for e in hi + lo:
            e.finish()
        with np.errstate(invalid="ignore", divide="ignore"):
            mean_d = self.s1 / count
            var = np.maximum(self.s2 / count - mean_d**2, 0.0)
            mean = mean_d + np.nan_to_num(shift)
            rms = np.sqrt(var + mean**2)
        cols = {
            "kind": [c.kind for c in capture.channels],
            "reference": [c.reference for c in capture.channels],
            "unit": [c.unit for c in capture.channels],
            "n": count.astype(np.int64),
            "n_nan": self.nans,
            "min": [e.value for e in lo],
            "max": [e.value for e in hi],
            "mean": np.where(count > 0, mean, np.nan),
            "rms": np.where(count > 0, rms, np.nan),
            "ac_rms": np.where(count > 0, np.sqrt(var), np.nan),
            "max_runs": [e.runs for e in hi],
            "min_runs": [e.runs for e in lo],
            "max_longest": [e.longest for e in hi],
            "min_longest": [e.longest for e in lo],
            "at_extremes": [a.at_value + b.at_value for a, b in zip(hi, lo, strict=True)],
        }
        return {name: {k: _scalar(v[i]) for k, v in cols.items()} for i, name in enumerate(capture.channel_names)}

    def frame(self) -> pd.DataFrame:
        """The statistics table (see `channel_stats`)."""
        import pandas as pd

        recs = self.records()
        return pd.DataFrame.from_dict(recs, orient="index").rename_axis("channel")


def _scalar(v: Any) -> Any:
    """A numpy scalar as the plain Python number (int or float), text as it is."""
    return v.item() if isinstance(v, np.generic) else v


def channel_stat_records(capture: Capture, chunk_samples: int = 1 << 18) -> dict[str, dict[str, Any]]:
    """`channel_stats` as plain data (channel name -> figures), without importing pandas (for a fast ``inspect``)."""
    acc = StatsAccumulator(capture)
    for chunk in capture.iter_chunks(chunk_samples):
        acc.feed(chunk.owned)
    return acc.records()


def channel_stats(capture: Capture, chunk_samples: int = 1 << 18) -> pd.DataFrame:
    """Per-channel statistics in one chunked pass (memory bounded by ``chunk_samples``).

    Returns
    -------
    DataFrame
        Index: channel name.  Columns: ``kind``, ``reference``, ``unit``, ``n``, ``n_nan``,
        ``min``, ``max``, ``mean``, ``rms``, ``ac_rms`` (RMS about the mean),
        ``max_runs``/``min_runs`` (runs of >= `CLIP_MIN_RUN` samples at the
        maximum/minimum), ``max_longest``/``min_longest``, ``at_extremes``
        (samples in such runs).  Values in V or A.
    """
    acc = StatsAccumulator(capture)
    for chunk in capture.iter_chunks(chunk_samples):
        acc.feed(chunk.owned)
    return acc.frame()


def quality_notes(capture: Capture, stats: pd.DataFrame | dict[str, dict[str, Any]] | None = None) -> list[dict[str, Any]]:
    """Data-quality notes: one dict per finding.

    Each dict has ``check`` (``"clipping"``, ``"flat"``, ``"dead"``, ``"nan"``,
    ``"gap"``, ``"offset"``, ``"empty"``), ``channel`` (name or None),
    ``severity`` (``"warning"`` or ``"info"``), ``message`` (one line) and the
    figures behind it.  Thresholds: `CLIP_MIN_RUN`, `CLIP_MIN_RUNS`,
    `DEAD_FRACTION`, `OFFSET_FRACTION` (common practice, no source).
    """
    if stats is None:
        st = channel_stat_records(capture)
    elif isinstance(stats, dict):
        st = stats
    else:  # a `channel_stats` table
        st = {name: dict(row) for name, row in stats.to_dict(orient="index").items()}
    notes: list[dict[str, Any]] = []
    rate = capture.sample_rate_hz
    for g in capture.gaps:
        notes.append({
            "check": "gap", "channel": None, "severity": "warning",
            "message": f"gap of {g.n_samples} samples ({g.n_samples / rate:.6g} s) at t = {g.start_index / rate:.6f} s: {g.reason}",
            "start_s": g.start_index / rate, "duration_s": g.n_samples / rate,
        })
    kind_max: dict[str, float] = {}
    for r in st.values():
        if r["reference"] != "neutral":  # a neutral is small by design: not compared
            v = r["ac_rms"]
            if not np.isnan(v):  # NaN skipped, as a pandas max does
                kind_max[r["kind"]] = max(kind_max.get(r["kind"], -np.inf), v)
    gap_samples = sum(g.n_samples for g in capture.gaps)
    coarse = capture.provenance.mapping.get("stored_resolution") or {}  # small-integer datasets (waveforms.io.hdf5_native)
    for name, r in st.items():
        u = r["unit"]
        if r["n"] == 0:
            notes.append({"check": "empty", "channel": name, "severity": "warning", "message": f"{name}: no finite samples at all"})
            continue
        extra_nan = int(r["n_nan"]) - gap_samples
        if extra_nan > 0:
            notes.append({
                "check": "nan", "channel": name, "severity": "warning",
                "message": f"{name}: {extra_nan} NaN samples outside the listed gaps ({100 * extra_nan / (r['n'] + r['n_nan']):.3g} %)",
                "n_nan": extra_nan,
            })
        if r["max"] == r["min"]:
            notes.append({
                "check": "flat", "channel": name, "severity": "warning",
                "message": f"{name}: constant at {r['max']:.6g} {u} over the whole capture (disconnected input or a stuck channel?)",
                "value": float(r["max"]),
            })
            continue
        biggest = kind_max.get(r["kind"], np.nan)
        if r["reference"] != "neutral" and np.isfinite(biggest) and biggest > 0 and r["ac_rms"] < DEAD_FRACTION * biggest:
            notes.append({
                "check": "dead", "channel": name, "severity": "warning",
                "message": (f"{name}: RMS {r['ac_rms']:.4g} {u} is under {100 * DEAD_FRACTION:g} % of the largest {r['kind']} RMS "
                            f"({biggest:.4g} {u}): a lost phase, or a probe or CT not connected"),
                "rms": float(r["ac_rms"]), "largest_rms": float(biggest),
            })
        runs = int(r["max_runs"] + r["min_runs"])
        if runs >= CLIP_MIN_RUNS:
            notes.append({
                "check": "clipping", "channel": name, "severity": "warning",
                "message": (f"{name}: {runs} runs of >= {CLIP_MIN_RUN} samples flat at the extremes ({r['max']:.6g} / {r['min']:.6g} {u}), "
                            f"longest {int(max(r['max_longest'], r['min_longest']))} samples: clipping or flat-topping, peaks and RMS may read low"),
                "runs": runs, "samples": int(r["at_extremes"]),
            })
        res = coarse.get(name)
        if res is not None:  # stored as small integers: say how fine a change can be seen
            peak = max(abs(float(r["max"])), abs(float(r["min"])))
            pct = 100.0 * float(res["step"]) / peak if peak > 0 else float("inf")
            notes.append({
                "check": "resolution", "channel": name, "severity": "warning",
                "message": (f"{name}: stored as {res['dtype']} ({res['levels']} levels, step {float(res['step']):.4g} {u} = "
                            f"{pct:.3g} % of the peak, range {res['range'][0]} to {res['range'][1]} {u}): changes smaller "
                            "than a few steps (shallow dips, low harmonics, small unbalance) are not resolved"),
                "dtype": res["dtype"], "levels": int(res["levels"]), "step": float(res["step"]), "step_pct_of_peak": pct,
            })
        if r["ac_rms"] > 0 and abs(r["mean"]) > OFFSET_FRACTION * r["ac_rms"]:
            notes.append({
                "check": "offset", "channel": name, "severity": "info",
                "message": f"{name}: DC offset {r['mean']:.4g} {u} ({100 * abs(r['mean']) / r['ac_rms']:.3g} % of the AC RMS {r['ac_rms']:.4g} {u})",
                "offset": float(r["mean"]), "ac_rms": float(r["ac_rms"]),
            })
    return notes
