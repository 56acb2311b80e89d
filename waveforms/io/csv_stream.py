"""Streamed conversion of a delimited-text capture to native HDF5, in bounded memory.

`waveforms.io.delimited.read_csv` holds a capture in memory (8 bytes per
sample and channel), which is fine for minutes of data but not for an hour
at 20 kS/s.  `convert_csv_to_native` reads the same files block by block with
pyarrow's streaming CSV reader and writes each block to the native layout
as it comes, so memory stays at a few blocks whatever the file's length.

The time stamps are kept in a temporary file while the rows are written, and
checked at the end by `waveforms.timebase.analyse_stamps` over the whole file
exactly as the in-memory reader checks them (a `timebase.DiskArray` keeps the
stamps and the grid index out of memory).  When rows are missing (gaps) the
text is read a second time and each row written at its grid point (NaN where
rows are missing, listed as `Gap`).  The
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
from ..errors import CaptureReadError, InvalidParameterError, WriteError
from ..hashing import sha256_file
from .common import EPOCH, checked_capture, start_plus, system_values
from .delimited import Plan, iso_to_ns, line_of_row, ns_to_datetime, plan_read
from .hdf5_native import native_header, write_native_blocks
from .mapping import mapping_record, parse_mapping
from .registry import ReadOptions

BLOCK_BYTES = 1 << 22
NAN_BLOCK = 1 << 20
#: The first blocks are combined until they hold this many rows (a few stamps per block make
#: the per-block overhead dominate).
FIRST_ROWS = 4096


class _LengthOnly:
    """A sample source that only knows its size (to build the final metadata)."""

    def __init__(self, n_samples: int, n_channels: int) -> None:
        self.n_samples, self.n_channels = n_samples, n_channels

    def read(self, start: int, stop: int, channel_indices: Any) -> np.ndarray:  # pragma: no cover - never read
        raise NotImplementedError


def _batches(path: Path, plan: Plan, columns: list[str] | None = None) -> Iterator[pa.RecordBatch]:
    lay = plan.layout
    columns = plan.columns if columns is None else columns
    try:
        reader = pacsv.open_csv(
            path,
            read_options=pacsv.ReadOptions(skip_rows=lay.header_index + 1, column_names=list(lay.headers),
                                           encoding=lay.encoding, use_threads=False, block_size=BLOCK_BYTES),
            parse_options=pacsv.ParseOptions(delimiter=lay.delimiter, ignore_empty_lines=True),
            convert_options=pacsv.ConvertOptions(include_columns=columns, column_types={k: v for k, v in plan.types.items() if k in columns},
                                                 decimal_point=lay.decimal,
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


class _Regrid(Exception):
    """The rows are not the grid (gaps): write again, each row at its grid point."""


def _add_stamps(batch: pa.RecordBatch, src_path: Path, plan: Plan, mapping: Any, stamps: timebase.DiskArray,
                state: dict[str, Any]) -> None:
    """Append a block's time stamps to ``stamps`` as the in-memory reader computes them [s]."""
    lay = plan.layout
    col = batch.column(plan.time_col)
    row0 = state["rows"]
    if plan.time_format == "iso8601":
        sr = pd.Series(col.to_numpy(zero_copy_only=False), dtype=object)
        ns, tz = iso_to_ns(sr, mapping, src_path, plan.time_col, lambda r, r0=row0: line_of_row(src_path, lay, r0 + r))
        if state["ns0"] is None:
            state["ns0"], state["tz"] = int(ns[0]), tz
        t = (ns - state["ns0"]).astype(np.float64) * 1e-9  # seconds from the first stamp, as delimited._iso_stamps
    else:
        raw = col.to_numpy(zero_copy_only=False).astype(np.float64)
        if np.isnan(raw).any():
            r = row0 + int(np.flatnonzero(np.isnan(raw))[0])
            raise CaptureReadError(src_path, f"line {line_of_row(src_path, lay, r)}, column {plan.time_col!r}", "time stamp missing")
        from .mapping import time_header_unit, time_unit_factor

        unit = mapping.time.get("unit", time_header_unit(plan.time_col))
        state["unit"] = unit
        t = raw * time_unit_factor(unit, src_path, f"line {lay.header_index + 1}, column {plan.time_col!r}")
        if row0 == 0:
            state["t_first_s"] = float(t[0])
    stamps.append(t)
    state["rows"] += batch.num_rows


def _check_stamps(src_path: Path, plan: Plan, rep: timebase.TimebaseReport, stamps: Any) -> None:
    """Refuse what the in-memory reader refuses (`waveforms.io.delimited`), with the same words."""
    lay, where_t = plan.layout, f"column {plan.time_col!r}"
    if rep.first_backwards is not None:
        r = rep.first_backwards
        raise CaptureReadError(src_path, f"line {line_of_row(src_path, lay, r)}, {where_t}",
                               f"time goes backwards (from {stamps[r - 1]:.9g} s to {stamps[r]:.9g} s after the first stamp)")
    if rep.first_duplicate is not None:
        r = rep.first_duplicate
        raise CaptureReadError(src_path, f"line {line_of_row(src_path, lay, r)}, {where_t}",
                               f"time stamp repeats the one on line {line_of_row(src_path, lay, r - 1)}")
    given = plan.given_rate
    if given is not None and abs(given - rep.sample_rate_hz) > 1e-3 * given:
        raise CaptureReadError(src_path, where_t, f"time stamps give {rep.sample_rate_hz:.6g} Hz but {given:g} Hz was given; drop --rate or add --resample")
    if rep.irregular:
        raise CaptureReadError(
            src_path, where_t,
            f"irregular time stamps: jitter up to {rep.jitter_max_s * 1e6:.3g} us ({100 * rep.jitter_fraction:.3g} % of the "
            f"{rep.period_s * 1e6:.4g} us sample period); re-run with --resample to interpolate onto a uniform grid "
            "(reads the file into memory)",
        )


def convert_csv_to_native(
    source: str | os.PathLike[str],
    target: str | os.PathLike[str],
    options: ReadOptions | None = None,
    dtype: str = "float64",
    compression: str | None = "gzip",
    history: tuple[str, ...] = (),
    streamed_note: bool = True,
) -> dict[str, Any]:
    """Convert a delimited-text capture to native HDF5 block by block (bounded memory).

    One pass over the text writes the rows and keeps the stamps in a temporary
    file; `waveforms.timebase.analyse_stamps` then checks them over the whole file
    exactly as the in-memory reader does (the same period, grid, gaps and
    refusals).  With gaps a second pass writes each row at its grid point.

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
    streamed_note : bool
        Add the note "converted block by block" to the provenance.

    Returns
    -------
    dict
        ``n_samples``, ``sample_rate_hz``, ``n_channels``, ``gaps`` of what was written,
        and ``capture``: the written capture's metadata (a `Capture` whose source only knows its size).

    Raises
    ------
    CaptureReadError
        As `read_csv` does, with the line of the first bad row.
    """
    import tempfile

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
    value_cols = [s.source_label for s in specs]
    state: dict[str, Any] = {"rows": 0, "first_values": None, "t_first_s": 0.0, "start": plan.start, "tz": None, "ns0": None}
    notes = list(plan.notes)
    if plan.time_col is None:
        rate = plan.given_rate
        if rate is None and "sample_rate_hz" in plan.meta:
            rate = float(plan.meta["sample_rate_hz"])
        if rate is None:
            raise CaptureReadError(src_path, f"line {lay.header_index + 1}", "no time column and no sample rate; give --rate HZ (or [capture] sample_rate_hz)")
        state["rate"] = rate

    def blocks(grid_index: Any, stamps: timebase.DiskArray | None = None) -> Iterator[np.ndarray]:
        """The samples block by block: rows in file order (``grid_index`` None) or each at its grid point.

        With ``stamps``, the block's time stamps are gathered in the same pass.
        """
        pos = 0
        row0 = 0
        state["first_values"] = None
        cols = value_cols + ([plan.time_col] if stamps is not None else [])
        for batch in _batches(src_path, plan, cols):
            m = batch.num_rows
            if stamps is not None:
                _add_stamps(batch, src_path, plan, mapping, stamps, state)
            values = np.vstack([batch.column(s.source_label).to_numpy(zero_copy_only=False).astype(np.float64) for s in specs])
            if np.any(scales != 1.0):
                values *= scales[:, None]
            have = 0 if state["first_values"] is None else state["first_values"].shape[1]
            if have < 1 << 16:  # the first 65536 samples, for inferring the nominal frequency
                head = values[:, : (1 << 16) - have].copy()
                state["first_values"] = head if state["first_values"] is None else np.hstack([state["first_values"], head])
            idx = np.arange(row0, row0 + m) if grid_index is None else np.asarray(grid_index[row0 : row0 + m])
            row0 += m
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
        state["value_rows"] = row0

    def finalize(n_written: int, rep: timebase.TimebaseReport | None) -> dict[str, Any]:
        if state.get("value_rows", 0) == 0:
            raise CaptureReadError(src_path, f"line {lay.header_index + 1}", "header row but no data rows")
        timebase_record: dict[str, Any] = {}
        gaps: tuple[Gap, ...] = ()
        if rep is not None:
            rate = rep.sample_rate_hz
            if plan.given_rate is not None:
                rate = plan.given_rate
            if plan.time_format == "iso8601":
                timebase_record["time"] = {"column": plan.time_col, "format": "iso8601"}
                start = plan.start or ns_to_datetime(state["ns0"], state["tz"])
            else:
                unit = state.get("unit")
                timebase_record["time"] = {"column": plan.time_col, "format": "seconds", "unit": unit or "s"}
                if plan.start is None:
                    start = start_plus(EPOCH, state["t_first_s"], src_path, "first time stamp")
                    notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 plus the first time stamp (times are relative)")
                else:
                    start = start_plus(plan.start, state["t_first_s"], src_path, "first time stamp")
            timebase_record["timebase"] = rep.to_dict()
            if rep.jitter_fraction > 0.01:
                notes.append(f"time stamps jitter by up to {rep.jitter_max_s * 1e6:.3g} us ({100 * rep.jitter_fraction:.2g} % of a sample period); samples placed on the nearest point of a uniform {rate:g} Hz grid")
            period = rep.period_s  # as timebase.place_on_grid words the gaps
            gaps = tuple(Gap(a, b, f"no rows in the file for {b - a} samples ({(b - a) * period:.6g} s) from t = {a * period:.6f} s")
                         for a, b in rep.gaps)
            notes.append(f"sample rate {rate:g} Hz from the time stamps")
            if gaps:
                notes.append(f"{len(gaps)} gap(s) in the time stamps, {sum(g.n_samples for g in gaps)} missing samples kept as NaN (first at t = {gaps[0].start_index / rate:.6f} s)")
        else:
            rate = state["rate"]
            notes.append(f"no time column; samples taken as uniform at {rate:g} Hz")
            start = plan.start or EPOCH
            if plan.start is None:
                notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 (times are relative)")
        system = system_values(options, mapping, plan.meta, plan.src, src_path, specs, state["first_values"], rate, notes)
        if streamed_note:
            notes.append("converted block by block (streamed; the capture was never held in memory whole)")
        record = mapping_record(specs, {
            "csv": {"delimiter": lay.delimiter, "decimal": lay.decimal, "header_line": lay.header_index + 1, "encoding": lay.encoding},
            **timebase_record, "source": mapping.source if options.mapping else "recognised from the header",
        })
        prov = Provenance(source_path=str(src_path), sha256=digest.result(), importer="csv", mapping=record,
                          notes=tuple(notes), history=tuple(history))
        cap = checked_capture(src_path, channels=tuple(s.channel() for s in specs), source=_LengthOnly(n_written, n_ch),
                              sample_rate_hz=float(rate), start_time=start, provenance=prov, gaps=gaps, **system)
        state["summary"] = {"n_samples": n_written, "sample_rate_hz": float(rate), "n_channels": n_ch, "gaps": len(gaps),
                            "capture": cap}
        return {k: v for k, v in native_header(cap).items() if k != "n_samples"}

    provisional = {"sample_rate_hz": float("nan"), "start_time": "", "provenance": "{}", "gaps": "[]", "nameplate": ""}
    with concurrent.futures.ThreadPoolExecutor(max_workers=1) as pool, tempfile.TemporaryDirectory(prefix="mwf-stamps-") as tmp:
        digest = pool.submit(sha256_file, src_path)
        stamps: timebase.DiskArray | None = None
        rep: timebase.TimebaseReport | None = None
        channels = [s.channel() for s in specs]

        def analysed(n_written: int) -> dict[str, Any]:
            nonlocal rep
            if state["rows"] == 0:
                raise CaptureReadError(src_path, f"line {lay.header_index + 1}", "header row but no data rows")
            if state["rows"] < 2:
                raise CaptureReadError(src_path, f"line {lay.header_index + 2}", "only one data row; cannot find a sample rate")
            try:
                rep = timebase.analyse_stamps(stamps)
            except InvalidParameterError as e:
                raise CaptureReadError(src_path, f"column {plan.time_col!r}", str(e)) from None
            _check_stamps(src_path, plan, rep, stamps)
            if rep.gaps or rep.n_grid != state["rows"]:
                raise _Regrid  # nothing is left behind: the output is written atomically
            return finalize(n_written, rep)  # the rows are the grid (the usual case): one pass over the text

        try:
            if plan.time_col is None:
                write_native_blocks(out, channels, provisional, blocks(None), None, dtype, compression,
                                    finalize=lambda n: finalize(n, None))
            else:
                stamps = timebase.DiskArray(os.path.join(tmp, "stamps.f8"), np.float64)
                try:
                    write_native_blocks(out, channels, provisional, blocks(None, stamps), None, dtype, compression,
                                        finalize=analysed)
                except _Regrid:  # gaps: a second pass over the text places each row on its grid point
                    write_native_blocks(out, channels, provisional, blocks(rep.grid_index), None, dtype, compression,
                                        finalize=lambda n: finalize(n, rep))
        finally:
            digest.cancel()
            for arr in (stamps, None if rep is None else rep.grid_index):
                if isinstance(arr, timebase.DiskArray):
                    arr.close()  # before the temporary folder goes
    return state["summary"]


# -- analysing a large CSV without holding it ------------------------------------------
#: Delimited-text files at least this large are streamed by `open_capture` (analyze, measure,
#: batch); smaller ones are read in memory, which is faster for them.
STREAM_MIN_BYTES = 64 << 20


def _remove_spool(inner: Any, folder: str) -> None:
    import shutil

    inner.close()
    shutil.rmtree(folder, ignore_errors=True)


class SpooledSource:
    """The samples of a streamed CSV, in an uncompressed native HDF5 file in a temporary folder.

    The folder lives as long as this source: it is removed when the source is closed or
    collected, and at interpreter exit at the latest.
    """

    def __init__(self, folder: str, h5_path: Path, names: list[str]) -> None:
        import weakref

        from .hdf5_native import HDF5Source

        self.folder = folder
        self._inner = HDF5Source(h5_path, [f"/channels/{n}" for n in names])
        self._finalizer = weakref.finalize(self, _remove_spool, self._inner, folder)

    @property
    def n_samples(self) -> int:
        return self._inner.n_samples

    @property
    def n_channels(self) -> int:
        return self._inner.n_channels

    def read(self, start: int, stop: int, channel_indices: Any) -> np.ndarray:
        return self._inner.read(start, stop, channel_indices)

    def close(self) -> None:
        """Close the file and remove the temporary folder."""
        self._finalizer()


def spooled_capture(source: str | os.PathLike[str], options: ReadOptions | None = None) -> Capture:
    """A delimited-text capture streamed block by block into a temporary native file, and opened there.

    Peak memory does not grow with the file.  The `Capture` is the one the in-memory reader
    (`waveforms.io.delimited.read_csv`) gives: the same samples, time base, gaps,
    provenance (the CSV's path and SHA-256, importer ``csv``) and notes.
    """
    import shutil
    import tempfile

    folder = tempfile.mkdtemp(prefix="mwf-spool-")
    try:
        target = Path(folder) / "spool.h5"
        summary = convert_csv_to_native(source, target, options, compression=None, streamed_note=False)
        meta: Capture = summary["capture"]
        src = SpooledSource(folder, target, [c.name for c in meta.channels])
    except BaseException:
        shutil.rmtree(folder, ignore_errors=True)
        raise
    return meta.replace(source=src)


def open_capture(path: str | os.PathLike[str], format: str | None = None, options: ReadOptions | None = None,
                 stream_min_bytes: int = STREAM_MIN_BYTES, *, mask: bool = True) -> Capture:
    """`waveforms.io.read_capture`, but a delimited-text file of ``stream_min_bytes`` or more is streamed (`spooled_capture`).

    ``mask``: as for `waveforms.io.read_capture` (False: the caller masks, `waveforms.io.masking.defer_masking`).

    ``--resample`` needs the whole file in memory, so it always takes the in-memory path.
    """
    from .registry import detect_format, read_capture

    options = options or ReadOptions()
    p = Path(path)
    if not options.resample and p.is_file() and p.stat().st_size >= max(1, stream_min_bytes):
        name = format if format is not None else detect_format(p).name
        if name == "csv":
            cap = spooled_capture(p, options)
            if not mask:
                return cap
            from .masking import mask_broken

            return mask_broken(cap, str(p))
    return read_capture(p, format, options, mask=mask)
