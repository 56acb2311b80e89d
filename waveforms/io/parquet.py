"""Parquet importer (registry name ``"parquet"``): one column per channel, read lazily by row group.

Analysts keep archives in Parquet: a time column (seconds, with ``ms`` / ``us``
from the name as in CSV; an Arrow timestamp; or ISO 8601 text) or none and
``--rate``, and one numeric column per channel.  Column names are recognised
with the same spellings as CSV headers (`waveforms.io.spellings`) or mapped by
a mapping file (``[channels.Va] column = "u1"``), with the same errors.  The
file's key-value metadata may state the rate, start time and nominal values
under the keys of `waveforms.io.metadata` (``sample_rate_hz``, ``fs``,
``start_time``...), and they are used, with a note.

Only the time column is read whole (to check the stamps: gaps, jitter,
duplicates, as `waveforms.timebase` does for CSV).  When the stamps are
regular the samples stay on disk: `ParquetSource` reads the row groups a
request touches, one column per channel.  Stamps with gaps, or resampling,
need the samples on the grid, and the capture is then read into memory (noted).
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from .. import timebase
from ..capture import ArraySource, Capture, Provenance
from ..errors import CaptureReadError, MappingError, positive_number
from ..hashing import sha256_file
from . import metadata as md
from .common import EPOCH, one_line, parse_start_time, parse_utc_offset, system_values
from .mapping import is_time_header, mapping_record, parse_mapping, resolve_channels, suggest, time_header_unit, time_unit_factor
from .registry import ReadOptions

_SKIP_META = (b"pandas", b"ARROW:schema", b"org.apache.spark.version", b"org.apache.spark.sql.parquet.row.metadata")


class ParquetSource:
    """Lazy sample source over numeric columns of a Parquet file, by row group.

    Parameters
    ----------
    path : Path
    columns : sequence of str
        One column per channel.
    scales : sequence of float
        Factor applied to each column's raw values on read.
    """

    def __init__(self, path: Path, columns: Sequence[str], scales: Sequence[float]) -> None:
        self.path = Path(path)
        self.columns = tuple(columns)
        self.scales = np.asarray(scales, dtype=np.float64)
        self._pf: pq.ParquetFile | None = None
        md_ = self._file().metadata
        rows = [md_.row_group(i).num_rows for i in range(md_.num_row_groups)]
        self._starts = np.concatenate(([0], np.cumsum(rows))).astype(np.int64)
        self._cache: tuple[int, dict[str, np.ndarray]] | None = None

    def _file(self) -> pq.ParquetFile:
        if self._pf is None:
            self._pf = pq.ParquetFile(self.path)
        return self._pf

    def __getstate__(self) -> dict[str, Any]:  # picklable for worker processes
        state = self.__dict__.copy()
        state["_pf"] = None
        state["_cache"] = None
        return state

    @property
    def n_samples(self) -> int:
        return int(self._starts[-1])

    @property
    def n_channels(self) -> int:
        return len(self.columns)

    def _group(self, g: int) -> dict[str, np.ndarray]:
        if self._cache is not None and self._cache[0] == g:
            return self._cache[1]
        try:
            tbl = self._file().read_row_group(g, columns=list(self.columns))
        except (OSError, pa.ArrowException) as e:
            raise CaptureReadError(self.path, f"row group {g}", f"cannot be read ({one_line(str(e))})") from None
        cols = {c: tbl.column(c).to_numpy(zero_copy_only=False).astype(np.float64) for c in self.columns}
        self._cache = (g, cols)
        return cols

    def read(self, start: int, stop: int, channel_indices: Sequence[int]) -> np.ndarray:
        out = np.empty((len(channel_indices), max(stop - start, 0)), dtype=np.float64)
        if stop <= start:
            return out
        g0 = int(np.searchsorted(self._starts, start, side="right") - 1)
        g1 = int(np.searchsorted(self._starts, stop, side="left"))
        for g in range(g0, g1):
            a, b = int(self._starts[g]), int(self._starts[g + 1])
            lo, hi = max(a, start), min(b, stop)
            if hi <= lo:
                continue
            cols = self._group(g)
            for row, ci in enumerate(channel_indices):
                out[row, lo - start: hi - start] = cols[self.columns[ci]][lo - a: hi - a]
        out *= self.scales[list(channel_indices)][:, None]
        return out


def sniff_parquet(path: Path) -> bool:
    """True for a file that starts and ends with the Parquet magic ``PAR1`` (never raises)."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(4)
            fh.seek(-4, 2)
            return head == b"PAR1" and fh.read(4) == b"PAR1"
    except Exception:  # noqa: BLE001 - a sniffer never raises
        return False


def _key_value_metadata(pf: pq.ParquetFile) -> list[tuple[str, str, str]]:
    kv = pf.schema_arrow.metadata or {}
    out = []
    for k, v in kv.items():
        if k in _SKIP_META:
            continue
        try:
            out.append((k.decode(), v.decode(), "key-value metadata"))
        except UnicodeDecodeError:
            continue
    return out


def _time_seconds(pf: pq.ParquetFile, col: str, field: pa.Field, mapping: Any, path: Path) -> tuple[np.ndarray, _dt.datetime | None, dict[str, Any]]:
    """The time column as seconds from its first stamp, the absolute first stamp (or None), and its record."""
    where = f"column {col!r}"
    arr = pf.read(columns=[col]).column(col)
    if arr.null_count:
        row = int(np.flatnonzero(arr.is_null().to_numpy(zero_copy_only=False))[0])
        raise CaptureReadError(path, f"row {row + 1}, {where}", "time stamp missing")
    t = field.type
    if pa.types.is_timestamp(t):
        ns = arr.cast(pa.timestamp("ns", tz=t.tz)).to_numpy(zero_copy_only=False).astype("datetime64[ns]").view(np.int64)
        if t.tz is None:
            off = mapping.time.get("utc_offset")
            if off is None:
                raise CaptureReadError(path, where, "time stamps have no time zone; set [time] utc_offset = '+01:00' in a mapping file")
            tz: _dt.tzinfo = parse_utc_offset(str(off), mapping.source, "key time.utc_offset")
            ns = ns - int(tz.utcoffset(None).total_seconds() * 1e9)  # type: ignore[union-attr]
        else:
            tz = _zone(t.tz)
        first = (EPOCH + _dt.timedelta(microseconds=int(ns[0] // 1000))).astimezone(tz)
        return (ns - ns[0]).astype(np.float64) * 1e-9, first, {"column": col, "format": "timestamp"}
    if pa.types.is_string(t) or pa.types.is_large_string(t):
        import pandas as pd

        from .delimited import iso_to_ns, ns_to_datetime

        ns, tz = iso_to_ns(pd.Series(arr.to_numpy(zero_copy_only=False), dtype=object), mapping, path, col, lambda r: r + 1)
        return (ns - ns[0]).astype(np.float64) * 1e-9, ns_to_datetime(int(ns[0]), tz), {"column": col, "format": "iso8601"}
    if not (pa.types.is_floating(t) or pa.types.is_integer(t)):
        raise CaptureReadError(path, where, f"holds {t} values, not time stamps (seconds, a timestamp type or ISO 8601 text)")
    unit = mapping.time.get("unit", time_header_unit(col))
    raw = arr.to_numpy(zero_copy_only=False).astype(np.float64) * time_unit_factor(unit, path, where)
    return raw, None, {"column": col, "format": "seconds", "unit": unit or "s", "first_s": float(raw[0])}


def _zone(name: str) -> _dt.tzinfo:
    if name in ("UTC", "utc", "Z", "+00:00"):
        return _dt.timezone.utc
    try:
        from zoneinfo import ZoneInfo

        return ZoneInfo(name)
    except Exception:  # noqa: BLE001 - a fixed offset such as '+01:00'
        sign = -1 if name.startswith("-") else 1
        hh, mm = name.lstrip("+-").split(":")
        return _dt.timezone(sign * _dt.timedelta(hours=int(hh), minutes=int(mm)))


def read_parquet(path: Path, options: ReadOptions | None = None) -> Capture:
    """Read a Parquet capture (samples stay on disk when the time stamps are regular).

    Raises
    ------
    CaptureReadError, MappingError
        One line naming the file, the column (or row, row group) and the problem.
    """
    options = options or ReadOptions()
    path = Path(path)
    mapping = parse_mapping(options.mapping, options.mapping_source or "mapping")
    try:
        pf = pq.ParquetFile(path)
    except (OSError, pa.ArrowException) as e:
        raise CaptureReadError(path, "", f"not a readable Parquet file, truncated or damaged? ({one_line(str(e))})") from None
    schema = pf.schema_arrow
    names = list(schema.names)
    notes: list[str] = []
    meta, meta_notes, _ = md.interpret(_key_value_metadata(pf), path)
    notes += meta_notes
    # time column: as for CSV
    time_col: str | None = None
    if not mapping.time.get("none"):
        col = mapping.time.get("column")
        if col:
            if col not in names:
                raise MappingError(path, f"column {col!r} (mapping time.column)", f"not found in the file{suggest(col, names)}")
            time_col = str(col)
        else:
            time_col = next((h for h in names if is_time_header(h)), None)
    channel_names = [h for h in names if h != time_col]
    specs, map_notes = resolve_channels(channel_names, mapping, path, "column", where_of=lambda h: f"column {h!r}")
    notes += map_notes
    for s in specs:
        t = schema.field(s.source_label).type
        if not (pa.types.is_floating(t) or pa.types.is_integer(t)):
            raise CaptureReadError(path, f"column {s.source_label!r}", f"holds {t} values, not numbers")
        if s.scale != 1.0:
            notes.append(f"{s.name}: raw numbers x {s.scale:g} ({s.unit}" + (f", ratio {s.ratio:g}" if s.ratio != 1.0 else "") + ")")
    n = pf.metadata.num_rows
    if n == 0:
        raise CaptureReadError(path, "", "no rows")
    src = options.mapping_source or "mapping"
    start = options.start_time
    if start is None and "start_time" in mapping.capture:
        start = parse_start_time(str(mapping.capture["start_time"]), src, "key capture.start_time")
    if start is None and "start_time" in meta:
        start = parse_start_time(meta["start_time"], str(path), "key-value metadata start_time")
    given_rate = options.sample_rate_hz
    if given_rate is None and "sample_rate_hz" in mapping.capture:
        given_rate = positive_number(mapping.capture["sample_rate_hz"], src, "key capture.sample_rate_hz")
    source: Any = ParquetSource(path, [s.source_label for s in specs], [s.scale for s in specs])
    gaps: tuple = ()
    history: list[str] = []
    record: dict[str, Any] = {}
    if time_col is None:
        rate = given_rate
        if rate is None and "sample_rate_hz" in meta:
            rate = float(meta["sample_rate_hz"])
        if rate is None:
            raise CaptureReadError(path, "", "no time column and no sample rate; give --rate HZ (or [capture] sample_rate_hz)")
        notes.append(f"no time column; samples taken as uniform at {rate:g} Hz")
        if start is None:
            start = EPOCH
            notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 (times are relative)")
    else:
        where_t = f"column {time_col!r}"
        t_s, first, record["time"] = _time_seconds(pf, time_col, schema.field(time_col), mapping, path)
        if first is not None:
            start = start or first
        else:
            t0 = record["time"].pop("first_s")
            if start is None:
                start = EPOCH + _dt.timedelta(seconds=t0)
                notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 plus the first time stamp (times are relative)")
            else:
                start = start + _dt.timedelta(seconds=t0)
            t_s = t_s - t0
        if t_s.size < 2:
            raise CaptureReadError(path, "row 2", "only one data row; cannot find a sample rate")
        rep = timebase.analyse_stamps(t_s)
        if rep.first_backwards is not None:
            r = rep.first_backwards
            raise CaptureReadError(path, f"row {r + 1}, {where_t}",
                                   f"time goes backwards (from {t_s[r - 1]:.9g} s to {t_s[r]:.9g} s after the first stamp)")
        if rep.first_duplicate is not None:
            r = rep.first_duplicate
            raise CaptureReadError(path, f"row {r + 1}, {where_t}", f"time stamp repeats the one on row {r}")
        rate = rep.sample_rate_hz
        record["timebase"] = rep.to_dict()
        if given_rate is not None:
            if abs(given_rate - rate) > 1e-3 * given_rate and not options.resample:
                raise CaptureReadError(path, where_t, f"time stamps give {rate:.6g} Hz but {given_rate:g} Hz was given; drop --rate or add --resample")
            rate = given_rate
        if rep.irregular and not options.resample:
            raise CaptureReadError(
                path, where_t,
                f"irregular time stamps: jitter up to {rep.jitter_max_s * 1e6:.3g} us ({100 * rep.jitter_fraction:.3g} % of the "
                f"{rep.period_s * 1e6:.4g} us sample period); re-run with --resample to interpolate onto a uniform grid",
            )
        if rep.irregular or rep.gaps or (options.resample and given_rate is not None and given_rate != rep.sample_rate_hz):
            values = source.read(0, n, range(len(specs)))
            notes.append("samples read into memory (the time stamps need them placed on a grid)")
            if rep.gaps and not rep.irregular and not options.resample:
                values, gaps = timebase.place_on_grid(values, rep)
            else:
                values, gaps = timebase.resample_uniform(t_s, values, rate)
                history.append(f"resampled linearly onto a uniform {rate:g} Hz grid")
                notes.append(f"time stamps resampled to {rate:g} Hz (linear interpolation, as asked)")
            source = ArraySource(values)
        else:
            notes.append(f"sample rate {rate:g} Hz from the time stamps")
        if rep.jitter_fraction > 0.01 and not rep.irregular:
            notes.append(f"time stamps jitter by up to {rep.jitter_max_s * 1e6:.3g} us ({100 * rep.jitter_fraction:.2g} % of a sample period); samples placed on the nearest point of a uniform {rate:g} Hz grid")
        if gaps:
            total = sum(g.n_samples for g in gaps)
            notes.append(f"{len(gaps)} gap(s) in the time stamps, {total} missing samples kept as NaN (first at t = {gaps[0].start_index / rate:.6f} s)")
    head = source.read(0, min(source.n_samples, int(2 * rate)), range(len(specs)))
    system = system_values(options, mapping, meta, src, path, specs, head, float(rate), notes)
    record["parquet"] = {"row_groups": pf.metadata.num_row_groups}
    record["source"] = mapping.source if options.mapping else "recognised from the column names"
    prov = Provenance(source_path=str(path), sha256=sha256_file(path), importer="parquet",
                      mapping=mapping_record(specs, record), notes=tuple(notes), history=tuple(history))
    return Capture(
        channels=tuple(s.channel() for s in specs), source=source, sample_rate_hz=float(rate), start_time=start,
        provenance=prov, gaps=tuple(gaps), **system,
    )
