"""Streamed conversion of a delimited-text capture to native HDF5, in bounded memory.

`waveforms.io.delimited.read_csv` holds a capture in memory (8 bytes per
sample and channel), which is fine for minutes of data but not for an hour
at 20 kS/s.  `convert_csv_to_native` reads the same files block by block with
pyarrow's streaming CSV reader and writes each block to the native layout
as it comes, so memory stays at a few blocks whatever the file's length.

The time base is checked as in `waveforms.timebase.analyse_stamps` on the first
block; later blocks are placed on the same grid with the period refined by a
running least-squares fit, and every block is checked for duplicated, backward
and irregular stamps and for gaps (NaN on the grid, listed as `Gap`).  The
fitted rate, gaps and provenance are written when the stream ends, before
the output is renamed into place.  Irregular stamps are an error here: use
the in-memory path with ``--resample``.
"""

from __future__ import annotations

import concurrent.futures
import datetime as _dt
import os
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv

from .. import timebase
from ..atomic import same_file
from ..capture import Capture, Gap, Provenance
from ..errors import CaptureReadError, WriteError
from ..hashing import sha256_file
from .common import EPOCH, system_values
from .delimited import Plan, iso_to_ns, ns_to_datetime, plan_read
from .hdf5_native import native_header, write_native_blocks
from .mapping import mapping_record, parse_mapping
from .registry import ReadOptions

BLOCK_BYTES = 1 << 22
NAN_BLOCK = 1 << 20
#: The first blocks are combined until they hold this many rows before the grid is fitted,
#: so that the period comes from enough stamps whatever the block size.
FIRST_ROWS = 4096


class _LengthOnly:
    """A sample source that only knows its size (to build the final metadata)."""

    def __init__(self, n_samples: int, n_channels: int) -> None:
        self.n_samples, self.n_channels = n_samples, n_channels

    def read(self, start: int, stop: int, channel_indices: Any) -> np.ndarray:  # pragma: no cover - never read
        raise NotImplementedError


class _Grid:
    """Places successive blocks of stamps [s from the first stamp] on one uniform grid."""

    def __init__(self, path: Path, where: str, line0: int) -> None:
        self.path, self.where, self.line0 = path, where, line0
        self.dt = np.nan
        self.offset = 0.0  # grid point 0 minus the first stamp [s]
        self.sums = np.zeros(5)  # n, sum(i), sum(t), sum(i*i), sum(i*t) in float64
        self.last_t = np.nan
        self.last_idx = -1
        self.jitter_max = 0.0
        self.gaps: list[tuple[int, int]] = []

    def _line(self, row: int) -> int:
        return self.line0 + row

    def place(self, t: np.ndarray, row0: int) -> np.ndarray:
        """Grid index of each stamp of a block whose first row is data row ``row0``."""
        if np.isnan(self.dt):
            if t.size < 2:
                raise CaptureReadError(self.path, f"line {self._line(0)}", "only one data row; cannot find a sample rate")
            rep = timebase.analyse_stamps(t)
            self.dt, self.offset = 1.0 / rep.sample_rate_hz, rep.start_offset_s
        prev = np.concatenate(([self.last_t], t)) if np.isfinite(self.last_t) else t
        d = np.diff(prev)
        off = 1 if np.isfinite(self.last_t) else 0  # d[k] is the step into row (k + 1 - off)
        back = np.flatnonzero(d < 0)
        if back.size:
            r = row0 + int(back[0]) + 1 - off
            raise CaptureReadError(self.path, f"line {self._line(r)}, {self.where}", f"time goes backwards (to {t[r - row0]:.9g} s after the first stamp)")
        dup = np.flatnonzero(d == 0)
        if dup.size:
            r = row0 + int(dup[0]) + 1 - off
            raise CaptureReadError(self.path, f"line {self._line(r)}, {self.where}", f"time stamp repeats the one on line {self._line(r - 1)}")
        idx = np.rint((t - self.offset) / self.dt).astype(np.int64)
        steps = np.diff(np.concatenate(([self.last_idx], idx)))
        resid = np.abs(t - self.offset - idx * self.dt)
        jit = float(resid.max())
        if np.any(steps <= 0) or jit > timebase.IRREGULAR_FRACTION * self.dt:
            raise CaptureReadError(
                self.path, self.where,
                f"irregular time stamps near line {self._line(row0)} (jitter up to {jit * 1e6:.3g} us, sample period "
                f"{self.dt * 1e6:.4g} us); convert with --resample (reads the file into memory)",
            )
        self.jitter_max = max(self.jitter_max, jit)
        for k in np.flatnonzero(steps > 1):
            a = int(idx[k - 1] + 1) if k > 0 else self.last_idx + 1
            self.gaps.append((a, int(idx[k])))
        fi = idx.astype(np.float64)
        self.sums += (fi.size, fi.sum(), t.sum(), np.dot(fi, fi), np.dot(fi, t))
        n, si, st, sii, sit = self.sums
        var = sii - si * si / n  # float64 sums: integer sum(i*i) overflows beyond ~3 M rows
        if var > 0:  # least-squares line over (grid index, stamp), as timebase.analyse_stamps (common practice, no source)
            self.dt = (sit - si * st / n) / var
            self.offset = (st - self.dt * si) / n
        self.last_t, self.last_idx = float(t[-1]), int(idx[-1])
        return idx


def _batches(path: Path, plan: Plan) -> Iterator[pa.RecordBatch]:
    lay = plan.layout
    try:
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(skip_rows=lay.header_index + 1, column_names=list(lay.headers),
                                           encoding=lay.encoding, use_threads=False, block_size=BLOCK_BYTES),
            parse_options=pacsv.ParseOptions(delimiter=lay.delimiter, ignore_empty_lines=True),
            convert_options=pacsv.ConvertOptions(include_columns=plan.columns, column_types=plan.types, decimal_point=lay.decimal,
                                                 strings_can_be_null=True, quoted_strings_can_be_null=True),
        )
        pending: list[pa.RecordBatch] | None = []
        for batch in reader:
            if not batch.num_rows:
                continue
            if pending is None:
                yield batch
                continue
            pending.append(batch)
            if sum(b.num_rows for b in pending) >= FIRST_ROWS:
                yield pa.concat_batches(pending)
                pending = None
        if pending:
            yield pa.concat_batches(pending)
    except pa.ArrowInvalid as e:
        raise _arrow_error(path, plan, str(e)) from None
    except (OSError, UnicodeDecodeError, pa.ArrowException) as e:
        raise CaptureReadError(path, "", f"cannot be read as delimited text ({e})") from None


def _arrow_error(path: Path, plan: Plan, msg: str) -> CaptureReadError:
    import re

    m = re.search(r"Row #(\d+): Expected (\d+) columns, got (\d+)", msg)
    if m:
        return CaptureReadError(path, f"line {m.group(1)}", f"{m.group(3)} fields, but the header row (line {plan.layout.header_index + 1}) has {m.group(2)}")
    m = re.search(r"column #(\d+): Row #(\d+): CSV conversion error to (\w+): invalid value '(.*)'", msg)
    if m:
        col = plan.layout.headers[int(m.group(1))]
        what = "a time stamp in seconds" if col == plan.time_col else "a number"
        return CaptureReadError(path, f"line {m.group(2)}, column {col!r}", f"{m.group(4)!r} is not {what}")
    return CaptureReadError(path, "", f"cannot be parsed ({msg})")


def convert_csv_to_native(
    source: str | os.PathLike[str],
    target: str | os.PathLike[str],
    options: ReadOptions | None = None,
    dtype: str = "float64",
    compression: str | None = "gzip",
    history: tuple[str, ...] = (),
) -> dict[str, Any]:
    """Convert a delimited-text capture to native HDF5 block by block (bounded memory).

    Parameters
    ----------
    source, target : path-like
        The CSV (read-only) and the ``.h5`` to write atomically.
    options : ReadOptions
        As for `waveforms.io.read_capture`; ``resample`` is not supported here.
    dtype, compression
        As for `waveforms.io.hdf5_native.write_native`.
    history : tuple of str
        Steps to record in the output's provenance history.

    Returns
    -------
    dict
        ``n_samples``, ``sample_rate_hz``, ``n_channels``, ``gaps`` of what was written.

    Raises
    ------
    CaptureReadError
        As `read_csv` does, with the line of the first bad row.
    """
    options = options or ReadOptions()
    src_path, out = Path(source), Path(target)
    if options.resample:
        raise CaptureReadError(src_path, "", "resampling needs the whole capture in memory; use read_capture + write_native")
    if same_file(src_path, out):
        raise WriteError(f"{out}: refusing to overwrite the input capture")
    mapping = parse_mapping(options.mapping, options.mapping_source or "mapping")
    plan = plan_read(src_path, options, mapping)
    lay, specs = plan.layout, plan.specs
    scales = plan.scales
    n_ch = len(specs)
    state: dict[str, Any] = {"rows": 0, "first_values": None, "t_first_s": 0.0, "start": plan.start, "tz": None, "ns0": None}
    grid = _Grid(src_path, f"column {plan.time_col!r}", lay.header_index + 2) if plan.time_col else None
    notes = list(plan.notes)
    if plan.time_col is None:
        rate = plan.given_rate
        if rate is None and "sample_rate_hz" in plan.meta:
            rate = float(plan.meta["sample_rate_hz"])
        if rate is None:
            raise CaptureReadError(src_path, f"line {lay.header_index + 1}", "no time column and no sample rate; give --rate HZ (or [capture] sample_rate_hz)")
        state["rate"] = rate

    def blocks() -> Iterator[np.ndarray]:
        pos = 0
        for batch in _batches(src_path, plan):
            m = batch.num_rows
            values = np.vstack([batch.column(s.source_label).to_numpy(zero_copy_only=False).astype(np.float64) for s in specs])
            if np.any(scales != 1.0):
                values *= scales[:, None]
            have = 0 if state["first_values"] is None else state["first_values"].shape[1]
            if have < 1 << 16:  # the first 65536 samples, for inferring the nominal frequency
                head = values[:, : (1 << 16) - have].copy()
                state["first_values"] = head if state["first_values"] is None else np.hstack([state["first_values"], head])
            if grid is None:
                idx = np.arange(pos, pos + m)
            else:
                col = batch.column(plan.time_col)
                row0 = state["rows"]
                if plan.time_format == "iso8601":
                    s = pd.Series(col.to_numpy(zero_copy_only=False), dtype=object)
                    ns, tz = iso_to_ns(s, mapping, src_path, plan.time_col, lambda r, r0=row0: lay.header_index + 2 + r0 + r)
                    if state["ns0"] is None:
                        state["ns0"], state["tz"] = int(ns[0]), tz
                    t = (ns - state["ns0"]).astype(np.float64) * 1e-9
                else:
                    raw = col.to_numpy(zero_copy_only=False).astype(np.float64)
                    if np.isnan(raw).any():
                        r = row0 + int(np.flatnonzero(np.isnan(raw))[0])
                        raise CaptureReadError(src_path, f"line {lay.header_index + 2 + r}, column {plan.time_col!r}", "time stamp missing")
                    from .mapping import time_header_unit, time_unit_factor

                    unit = mapping.time.get("unit", time_header_unit(plan.time_col))
                    tabs = raw * time_unit_factor(unit, src_path, f"column {plan.time_col!r}")
                    if row0 == 0:
                        state["t_first_s"] = float(tabs[0])
                    t = tabs - state["t_first_s"]
                idx = grid.place(t, row0)
            state["rows"] += m
            while pos < idx[0]:  # a gap before this block: NaN, in bounded pieces
                k = int(min(idx[0] - pos, NAN_BLOCK))
                yield np.full((n_ch, k), np.nan)
                pos += k
            span = int(idx[-1] + 1 - pos)
            if span == m:
                yield values
            else:
                block = np.full((n_ch, span), np.nan)
                block[:, idx - pos] = values
                yield block
            pos = int(idx[-1]) + 1

    def finalize(n_written: int) -> dict[str, Any]:
        if state["rows"] == 0:
            raise CaptureReadError(src_path, f"line {lay.header_index + 1}", "header row but no data rows")
        timebase_record: dict[str, Any] = {}
        if grid is not None:
            rate = timebase._nice_rate(1.0 / grid.dt)
            given = plan.given_rate
            if given is not None:
                if abs(given - rate) > 1e-3 * given:
                    raise CaptureReadError(src_path, f"column {plan.time_col!r}", f"time stamps give {rate:.6g} Hz but {given:g} Hz was given; drop --rate or add --resample")
                rate = given
            period = 1.0 / rate
            if grid.jitter_max > 0.01 * period:
                notes.append(f"time stamps jitter by up to {grid.jitter_max * 1e6:.3g} us ({100 * grid.jitter_max * rate:.2g} % of a sample period); samples placed on the nearest point of a uniform {rate:g} Hz grid")
            notes.append(f"sample rate {rate:g} Hz from the time stamps")
            timebase_record["time"] = {"column": plan.time_col, "format": plan.time_format}
            if plan.time_format == "iso8601":
                start = plan.start or ns_to_datetime(state["ns0"], state["tz"])
            else:
                base = plan.start or EPOCH
                if plan.start is None:
                    notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 plus the first time stamp (times are relative)")
                start = base + _dt.timedelta(seconds=state["t_first_s"])
        else:
            rate = state["rate"]
            notes.append(f"no time column; samples taken as uniform at {rate:g} Hz")
            start = plan.start or EPOCH
            if plan.start is None:
                notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 (times are relative)")
        period = 1.0 / rate
        gaps = tuple(Gap(a, b, f"no rows in the file for {b - a} samples ({(b - a) * period:.6g} s) from t = {a * period:.6f} s")
                     for a, b in (grid.gaps if grid else ()))
        if gaps:
            notes.append(f"{len(gaps)} gap(s) in the time stamps, {sum(g.n_samples for g in gaps)} missing samples kept as NaN (first at t = {gaps[0].start_index * period:.6f} s)")
        system = system_values(options, mapping, plan.meta, plan.src, src_path, specs, state["first_values"], rate, notes)
        notes.append("converted block by block (streamed; the capture was never held in memory whole)")
        record = mapping_record(specs, {
            "csv": {"delimiter": lay.delimiter, "decimal": lay.decimal, "header_line": lay.header_index + 1, "encoding": lay.encoding},
            **timebase_record, "source": mapping.source if options.mapping else "recognised from the header",
        })
        prov = Provenance(source_path=str(src_path), sha256=digest.result(), importer="csv", mapping=record,
                          notes=tuple(notes), history=tuple(history))
        cap = Capture(channels=tuple(s.channel() for s in specs), source=_LengthOnly(n_written, n_ch), sample_rate_hz=float(rate),
                      start_time=start, provenance=prov, gaps=gaps, **system)
        state["summary"] = {"n_samples": n_written, "sample_rate_hz": float(rate), "n_channels": n_ch, "gaps": len(gaps)}
        return {k: v for k, v in native_header(cap).items() if k != "n_samples"}

    provisional = {"sample_rate_hz": float("nan"), "start_time": "", "provenance": "{}", "gaps": "[]", "nameplate": ""}
    with concurrent.futures.ThreadPoolExecutor(max_workers=1) as pool:
        digest = pool.submit(sha256_file, src_path)
        try:
            write_native_blocks(out, [s.channel() for s in specs], provisional, blocks(), None, dtype, compression, finalize=finalize)
        finally:
            digest.cancel()
    return state["summary"]
