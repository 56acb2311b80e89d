"""CSV / delimited-text importer (registry name ``"csv"``).

Takes the exports loggers actually write: optional metadata lines above a
header row; ``,`` ``;`` or tab separators; decimal point or decimal comma;
a time column in seconds (or ms, us), ISO 8601 stamps with a UTC offset, or
no time column and a given rate.  Columns are recognised from common header
spellings or mapped by a mapping file (`waveforms.io.mapping`).

Parsing is done by the pyarrow CSV reader (C++, multithreaded); there is no
Python loop over rows.  Bad input ends in a `CaptureReadError` naming the
file, the line and column, and the problem.

Metadata lines above the header (``# key: value``, ``key = value``, or
``key,value`` with the file's delimiter) naming the sample rate or interval,
start time, nominal frequency or voltage, or wiring are read under the
spellings of `waveforms.io.metadata` (``Sample rate: 10 kHz``,
``Start time,2024-03-01T10:00:00+01:00``), with a note for each; other
leading lines are kept as notes.  Two header lines, names then units
(``Va,Vb,...`` / ``V,V,...``), are read as ``Va [V]``.
"""

from __future__ import annotations

import concurrent.futures
import dataclasses
import datetime as _dt
import re
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv

from ..capture import ArraySource, Capture, Provenance
from ..errors import CaptureReadError, MappingError, positive_number
from ..hashing import sha256_file
from .. import timebase
from ..segments import place_gapped
from . import metadata as md
from .common import EPOCH, checked_capture, one_line, parse_start_time, parse_utc_offset, start_plus, system_values
from .mapping import (
    TIME_UNITS, UNIT_RE, Mapping, is_time_header, split_unit, mapping_record, parse_mapping, resolve_channels, suggest, time_header_unit, time_unit_factor,
)
from .registry import ReadOptions

if TYPE_CHECKING:  # pandas is imported where ISO stamps are parsed: a numeric CSV is read without it
    import pandas as pd

HEAD_BYTES = 1 << 16
#: Lines wanted in the head of a file, and the most bytes read to find them.
HEAD_LINES = 50
HEAD_BYTES_MAX = 1 << 24
DELIMITERS = ("\t", ";", ",")
_NUM_RE = {
    ".": re.compile(r"^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*$|^\s*$|^\s*[+-]?(nan|NaN|inf|Inf)\s*$"),
    ",": re.compile(r"^\s*[+-]?(\d+,?\d*|,\d+)([eE][+-]?\d+)?\s*$|^\s*$|^\s*[+-]?(nan|NaN|inf|Inf)\s*$"),
}
_ISO_RE = re.compile(r"^\s*\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?\s*(Z|[+-]\d{2}:?\d{2})?\s*$")
_OFFSET_RE = re.compile(r"(Z|[+-]\d{2}:?\d{2})\s*$")
#: Name given to the empty columns after a trailing delimiter (never read).
TRAILING = "(after trailing delimiter) "


@dataclasses.dataclass(frozen=True)
class Layout:
    """How a delimited file is laid out (found from its first lines, or given)."""

    encoding: str
    delimiter: str
    decimal: str
    header_index: int  # 0-based physical line of the last header line (the units line when there are two); data follow it
    headers: tuple[str, ...]
    metadata_lines: tuple[str, ...]
    first_data: tuple[tuple[str, ...], ...]  # a few parsed data rows (for type guesses)
    names_index: int | None = None  # 0-based line of the names when a units line follows them (headers are then 'name [unit]')
    metadata_numbers: tuple[int, ...] = ()  # 1-based file line of each of metadata_lines


# -- layout -----------------------------------------------------------------------------
def _head_text(path: Path, encoding: str | None) -> tuple[str, str, bool]:
    """First bytes of the file decoded; (text, encoding, whole_file_read)."""
    try:
        with open(path, "rb") as fh:
            raw = fh.read(HEAD_BYTES)
            # a very long line (a 1 MB comment) must not hide the data rows: read on, in bounded steps
            while raw.count(b"\n") < HEAD_LINES and len(raw) < HEAD_BYTES_MAX:
                more = fh.read(HEAD_BYTES * 4)
                if not more:
                    break
                raw += more
            whole = len(fh.read(1)) == 0
    except OSError as e:
        raise CaptureReadError(path, "", f"cannot be opened ({e.strerror or e})") from None
    if raw[:2] in (b"\xff\xfe", b"\xfe\xff"):
        raise CaptureReadError(path, "", "is UTF-16 text; save it as UTF-8 (or plain ASCII) delimited text and read it again")
    if b"\x00" in raw:
        raise CaptureReadError(path, "", "contains NUL bytes: a binary file, not delimited text (use --format)")
    if not whole:
        cut = raw.rfind(b"\n")
        raw = raw[: cut + 1] if cut > 0 else raw
    if encoding:
        try:
            return raw.decode(encoding), encoding, whole
        except (LookupError, UnicodeDecodeError) as e:
            raise CaptureReadError(path, "", f"cannot be decoded as {encoding!r} ({e})") from None
    try:
        return raw.decode("utf-8-sig"), "utf-8", whole
    except UnicodeDecodeError:
        return raw.decode("latin-1"), "latin-1", whole


def _cells(line: str, delim: str) -> list[str]:
    return [c.strip().strip('"').strip() for c in line.split(delim)]


_DATE_RE = re.compile(r"^\s*(\d{4}-\d{2}-\d{2}|\d{1,2}[./]\d{1,2}[./]\d{2,4})\s*$")
_TOD_RE = re.compile(r"^\s*\d{1,2}:\d{2}(:\d{2}([.,]\d+)?)?\s*$")


def _numeric_row(cells: list[str], decimal: str) -> bool:
    """True when every cell is a number, empty, or a time stamp / date / time of day."""
    pat = _NUM_RE[decimal]
    return all(pat.match(c) or _ISO_RE.match(c) or _DATE_RE.match(c) or _TOD_RE.match(c) for c in cells)


def detect_layout(path: Path, mapping: Mapping) -> Layout:
    """Find encoding, delimiter, decimal mark, header row and metadata lines.

    Given values (``[csv]`` table of the mapping) win; the rest is recognised
    from the first 64 KiB: the delimiter is the one (tab, ``;``, ``,`` in that
    order of preference) that splits every line from the header on into the
    same number of fields (in most of the later lines); the header is the last non-numeric line before the
    first all-numeric one.
    """
    opts = mapping.csv
    text, encoding, _ = _head_text(path, opts.get("encoding"))
    lines = text.splitlines()
    if not any(ln.strip() for ln in lines):
        raise CaptureReadError(path, "", "no text lines: the file is blank")
    delim = opts.get("delimiter")
    if delim is not None:
        delim = {"\\t": "\t", "tab": "\t"}.get(delim, delim)
        if delim not in DELIMITERS:
            raise MappingError(mapping.source, "key csv.delimiter", f"{delim!r} is not one of ',', ';', '\\t'")
    nonblank = [i for i, ln in enumerate(lines) if ln.strip()]
    if delim is None:
        tail = nonblank[len(nonblank) // 4 :]
        for d in DELIMITERS:
            counts = {i: lines[i].count(d) for i in nonblank}
            tail_counts = [counts[i] for i in tail]
            mode = max(set(tail_counts), key=tail_counts.count)
            # a majority is enough: a truncated or bad line is reported by the parser, by number
            if mode > 0 and 2 * tail_counts.count(mode) > len(tail_counts):
                delim = d
                break
        else:
            delim = ","  # one column, or irregular: let the parser report the bad line
    decimal = opts.get("decimal")
    if decimal is not None and decimal not in (".", ","):
        raise MappingError(mapping.source, "key csv.decimal", f"{decimal!r} must be '.' or ','")
    if decimal is None:
        decimal = "."
        if delim != ",":
            body = [c for i in nonblank[1:40] for c in _cells(lines[i], delim)]
            if any(_NUM_RE[","].match(c) and "," in c for c in body) and not any(
                re.match(r"^\s*[+-]?\d*\.\d+\s*$", c) for c in body
            ):
                decimal = ","
    if delim == "," and decimal == ",":
        raise MappingError(mapping.source, "keys csv.delimiter, csv.decimal", "',' cannot be both the delimiter and the decimal mark")
    hl = opts.get("header_line")
    if hl is not None:
        if not isinstance(hl, int) or not (1 <= hl <= len(lines)):
            raise MappingError(mapping.source, "key csv.header_line", f"{hl!r} is not a line number within the first {len(lines)} lines")
        header_index = hl - 1
    else:
        first_numeric = next((i for i in nonblank if _numeric_row(_cells(lines[i], delim), decimal)), None)
        if first_numeric is None:
            if len(nonblank) == 1:
                raise CaptureReadError(path, f"line {nonblank[0] + 1}", "header row but no data rows")
            raise CaptureReadError(path, "", "no numeric data rows found in the first lines (is this a waveform export?)")
        before = [i for i in nonblank if i < first_numeric]
        if not before:
            raise CaptureReadError(path, f"line {first_numeric + 1}", "no header row above the data (the first line must name the columns)")
        header_index = before[-1]
    names_index = None
    if hl is None and len(before) >= 2 and _units_row(_cells(lines[header_index], delim), _cells(lines[before[-2]], delim)):
        names_index, header_index = before[-2], header_index
    elif hl is not None and header_index + 1 < len(lines) and _units_row(_cells(lines[header_index + 1], delim), _cells(lines[header_index], delim)):
        names_index, header_index = header_index, header_index + 1
    name_line = header_index if names_index is None else names_index
    headers = list(_cells(lines[name_line], delim))
    if names_index is not None:
        units = _cells(lines[header_index], delim) + [""] * len(headers)
        headers = [_with_unit(h, u) for h, u in zip(headers, units)]
    # a delimiter at the end of every line (common in exports) gives empty trailing columns
    k = len(headers)
    while k > 1 and headers[k - 1] == "":
        k -= 1
    headers[k:] = [f"{TRAILING}{i}" for i in range(len(headers) - k)]
    headers = tuple(headers)
    if any(h == "" for h in headers):
        col = headers.index("") + 1
        raise CaptureReadError(path, f"line {name_line + 1}, field {col}", "empty column name in the header row")
    dup = sorted({h for h in headers if headers.count(h) > 1})
    if dup:
        raise CaptureReadError(path, f"line {name_line + 1}", f"column names repeated in the header: {dup}")
    data = tuple(tuple(_cells(lines[i], delim)) for i in nonblank if i > header_index)[:50]
    meta_idx = [i for i in range(name_line) if lines[i].strip()]
    meta = tuple(lines[i] for i in meta_idx)
    return Layout(encoding, delim, decimal, header_index, headers, meta, data, names_index, tuple(i + 1 for i in meta_idx))


def _unit_cell(c: str) -> bool:
    u = c.strip().strip("[]()").strip()
    return u == "" or u == "-" or UNIT_RE.match(u) is not None or u in TIME_UNITS


def _units_row(cells: list[str], names: list[str]) -> bool:
    """True when ``cells`` (the line under ``names``) is a units line: ``V,V,V,A`` / ``s;[V];[A]``."""
    k = len(cells)
    while k > 0 and cells[k - 1] == "":
        k -= 1
    return 0 < k <= len(names) and any(c.strip("[]() -") for c in cells[:k]) and all(_unit_cell(c) for c in cells[:k])


def _with_unit(name: str, unit: str) -> str:
    """``"Va"`` and ``"V"`` -> ``"Va [V]"`` (a name that already carries a unit, or an empty unit, is kept)."""
    u = unit.strip().strip("[]()").strip()
    if not u or u == "-" or not name or split_unit(name)[1] is not None:
        return name
    return f"{name} [{u}]"


_KV_RE = re.compile(r"^\s*#?\s*(?P<key>[A-Za-z_][^:=;,\t]*?)\s*(?P<sep>[:=;,\t])\s*(?P<value>.*?)\s*$")


def _metadata(layout: Layout, path: Path) -> tuple[dict[str, str], list[str], list[str]]:
    """Metadata lines above the header: ``key: value``, ``key = value`` or ``key,value`` (``;``, tab).

    Keys are read with `waveforms.io.metadata` (``Sample rate: 10 kHz``, ``fs,10000``,
    ``Start time: 2024-...``, ``Nominal voltage;400 V``); returns (values, notes on
    what was read under another spelling, other lines kept as text).
    """
    items: list[tuple[str, str, str]] = []
    other: list[str] = []
    numbers = layout.metadata_numbers or tuple(range(1, len(layout.metadata_lines) + 1))
    for ln, no in zip(layout.metadata_lines, numbers):
        m = _KV_RE.match(ln)
        if m and md.canonical(m.group("key")) is not None:
            value = m.group("value")
            if m.group("sep") in ",;\t":  # 'key,value,unit' -> 'value unit'
                value = " ".join(c.strip().strip('"') for c in value.split(m.group("sep")) if c.strip())
            items.append((m.group("key"), value, f"metadata line {no}"))
        else:
            other.append(ln.strip())
    found, notes, _ = md.interpret(items, path)
    return found, notes, other


# -- parsing ----------------------------------------------------------------------------
def _read_table(path: Path, layout: Layout, columns: list[str], types: dict[str, pa.DataType], threads: bool = True) -> pa.Table:
    return pacsv.read_csv(
        path,
        read_options=pacsv.ReadOptions(
            skip_rows=layout.header_index + 1, column_names=list(layout.headers),
            encoding=layout.encoding, use_threads=threads, block_size=1 << 24,
        ),
        parse_options=pacsv.ParseOptions(delimiter=layout.delimiter, ignore_empty_lines=True),
        convert_options=pacsv.ConvertOptions(
            include_columns=columns, column_types=types, decimal_point=layout.decimal,
            strings_can_be_null=True, quoted_strings_can_be_null=True,
        ),
    )


def _locate_bad_number(path: Path, layout: Layout, column: str) -> tuple[int, str]:
    """First row of ``column`` that is not a number: (file line, text)."""
    import pandas as pd  # only on this error path: a plain numeric CSV is read without pandas

    tbl = _read_table(path, layout, [column], {column: pa.string()})
    s = pd.Series(tbl.column(column).to_numpy(zero_copy_only=False), dtype=object)
    txt = s.where(s.notna(), "").astype(str).str.strip()
    conv = txt.str.replace(",", ".", regex=False) if layout.decimal == "," else txt
    num = pd.to_numeric(conv, errors="coerce")
    bad = np.flatnonzero(num.isna().to_numpy() & (txt != "").to_numpy() & ~txt.str.lower().isin(["nan", "-nan", "na", "n/a", "null"]).to_numpy())
    row = int(bad[0]) if bad.size else 0
    return _line_of_row(path, layout, row), str(txt.iloc[row]) if bad.size else ""


def _line_of_row(path: Path, layout: Layout, row: int) -> int:
    """1-based file line of data row ``row`` (the parser skips empty lines after the header).

    Scans the file in 16 MiB pieces (vectorised), so memory does not grow with the file.
    """
    with open(path, "rb") as fh:
        for _ in range(layout.header_index + 1):
            fh.readline()
        physical = 0  # complete lines read after the header
        seen = -1  # index of the last non-empty data row found
        carry = 0  # length of the line that continues from the previous piece
        while True:
            buf = fh.read(1 << 24)
            if not buf:
                break
            a = np.frombuffer(buf, dtype=np.uint8)
            nl = np.flatnonzero(a == 10)
            if nl.size:
                starts = np.concatenate(([0], nl[:-1] + 1))
                lengths = nl - starts
                lengths[0] += carry
                has_cr = np.zeros(nl.size, dtype=bool)
                has_cr[nl > 0] = a[nl[nl > 0] - 1] == 13
                nonempty = np.flatnonzero(lengths - has_cr > 0)
                if seen + nonempty.size >= row:
                    return layout.header_index + 2 + physical + int(nonempty[row - seen - 1])
                seen += nonempty.size
                physical += nl.size
                carry = a.size - int(nl[-1]) - 1
            else:
                carry += a.size
        return layout.header_index + 2 + physical  # the last line, without a final newline


#: Public name for the streamed reader (waveforms/io/csv_stream.py), which words its errors the same way.
line_of_row = _line_of_row


def _parse(path: Path, layout: Layout, columns: list[str], types: dict[str, pa.DataType], time_col: str | None) -> pa.Table:
    try:
        return _read_table(path, layout, columns, types)
    except pa.ArrowInvalid as e:
        msg = str(e)
    except (OSError, UnicodeDecodeError, pa.ArrowException) as e:
        raise CaptureReadError(path, "", f"cannot be read as delimited text ({one_line(str(e))})") from None
    if "Expected" in msg and "columns" in msg:
        try:
            _read_table(path, layout, columns, types, threads=False)
        except pa.ArrowInvalid as e2:
            msg = str(e2)
        m = re.search(r"Row #(\d+): Expected (\d+) columns, got (\d+)", msg)
        if m:
            raise CaptureReadError(path, f"line {m.group(1)}", f"{m.group(3)} fields, but the header row (line {layout.header_index + 1}) has {m.group(2)}") from None
        raise CaptureReadError(path, "", f"rows of different lengths ({one_line(msg)})") from None
    # DOTALL: a quote left open makes the "value" run over many lines (pyarrow quotes it whole)
    m = re.search(r"column #(\d+): CSV conversion error to (\w+): invalid value '(.*)'", msg, flags=re.DOTALL)
    if m:
        col = layout.headers[int(m.group(1))]
        line, text = _locate_bad_number(path, layout, col)
        what = "a time stamp in seconds" if col == time_col else "a number"
        bad = text or m.group(3)
        if "\n" in bad or '"' in bad:
            raise CaptureReadError(path, f"line {line}, column {col!r}",
                                   f"a quote opened here is not closed on its line ({one_line(bad, 40)!r} ...); remove the stray '\"'") from None
        raise CaptureReadError(path, f"line {line}, column {col!r}", f"{bad!r} is not {what}") from None
    raise CaptureReadError(path, "", f"cannot be parsed ({one_line(msg)})")


def _column_into(out: np.ndarray, col: pa.ChunkedArray) -> None:
    """Copy a float64 column into ``out`` chunk by chunk (one copy; nulls become NaN).

    Read from the Arrow buffers directly (values, then the validity bitmap,
    least significant bit first, as the Arrow columnar format lays them out):
    ``Array.to_numpy`` imports pandas, which a numeric CSV does not otherwise need.
    """
    pos = 0
    for chunk in col.chunks:
        n = len(chunk)
        validity, data = chunk.buffers()[:2]
        part = out[pos : pos + n]
        part[:] = np.frombuffer(data, dtype=np.float64, count=n, offset=8 * chunk.offset)
        if chunk.null_count:
            bits = np.unpackbits(np.frombuffer(validity, dtype=np.uint8), bitorder="little")
            part[~bits[chunk.offset : chunk.offset + n].astype(bool)] = np.nan
        pos += n


def _float_column(col: pa.ChunkedArray) -> np.ndarray:
    """A float64 column as one new array (nulls NaN)."""
    out = np.empty(len(col))
    _column_into(out, col)
    return out


def iso_to_ns(s: pd.Series, mapping: Mapping, path: Path, col: str, line_of: Any) -> tuple[np.ndarray, _dt.tzinfo]:
    """ISO 8601 text stamps -> int64 ns since the POSIX epoch (UTC), and the offset of the first stamp.

    ``line_of(row) -> int`` gives the file line of a row, for messages.
    """
    import pandas as pd  # ISO 8601 parsing only: a CSV with numeric stamps is read without pandas

    first = str(s.iloc[0]).strip()
    has_offset = bool(_OFFSET_RE.search(first))
    try:
        if has_offset:
            ts = pd.to_datetime(s, format="ISO8601", utc=True)
            tz = _dt.datetime.fromisoformat(first.replace("Z", "+00:00")).tzinfo
        else:
            off = mapping.time.get("utc_offset")
            if off is None:
                raise CaptureReadError(path, f"line {line_of(0)}, column {col!r}",
                                       f"time stamp {first!r} has no UTC offset; set [time] utc_offset = '+01:00' in a mapping file")
            tz = parse_utc_offset(str(off), mapping.source, "key time.utc_offset")
            ts = pd.to_datetime(s, format="ISO8601").dt.tz_localize(tz).dt.tz_convert("UTC")
    except (ValueError, TypeError):
        bad = pd.to_datetime(s, format="ISO8601", errors="coerce", utc=has_offset)
        rows = np.flatnonzero(bad.isna().to_numpy())
        row = int(rows[0]) if rows.size else 0
        raise CaptureReadError(path, f"line {line_of(row)}, column {col!r}", f"{s.iloc[row]!r} is not an ISO 8601 time stamp") from None
    if ts.isna().any():
        row = int(np.flatnonzero(ts.isna().to_numpy())[0])
        raise CaptureReadError(path, f"line {line_of(row)}, column {col!r}", "time stamp missing")
    naive = ts.dt.tz_convert("UTC").dt.tz_localize(None).to_numpy().astype("datetime64[ns]")
    return naive.view(np.int64), tz  # type: ignore[return-value]


def ns_to_datetime(ns: int, tz: _dt.tzinfo) -> _dt.datetime:
    """A POSIX-epoch nanosecond count as an aware datetime in ``tz`` (microsecond resolution)."""
    return (EPOCH + _dt.timedelta(microseconds=int(ns // 1000))).astimezone(tz)


def _iso_stamps(path: Path, layout: Layout, col: str, arr: pa.ChunkedArray, mapping: Mapping) -> tuple[np.ndarray, _dt.datetime]:
    """ISO 8601 text stamps -> seconds from the first stamp, and the first stamp (tz-aware)."""
    import pandas as pd

    s = pd.Series(arr.to_numpy(zero_copy_only=False), dtype=object)
    ns, tz = iso_to_ns(s, mapping, path, col, lambda r: _line_of_row(path, layout, r))
    t_s = (ns - ns[0]).astype(np.float64) * 1e-9
    return t_s, ns_to_datetime(int(ns[0]), tz)


def _choose_time_column(layout: Layout, mapping: Mapping, path: Path) -> str | None:
    tm = mapping.time
    if tm.get("none"):
        return None
    col = tm.get("column")
    if col:
        if col not in layout.headers:
            raise MappingError(path, f"column {col!r} (mapping time.column)", f"not found in the file{suggest(col, layout.headers)}")
        return str(col)
    for h in layout.headers:
        if is_time_header(h):
            return h
    return None


def _refuse_split_date_time(layout: Layout, time_col: str | None, path: Path) -> None:
    """Separate date and time-of-day columns are not read (yet): say so plainly."""
    if time_col is None:
        return
    j = layout.headers.index(time_col)
    sample = [r[j] for r in layout.first_data if len(r) > j and r[j]][:5]
    dates = [h for h in layout.headers if re.fullmatch(r"(?i)date|datum|fecha", h.strip())]
    if sample and all(_TOD_RE.match(c) for c in sample):
        extra = f" and the date in column {dates[0]!r}" if dates else ""
        raise CaptureReadError(
            path, f"line {layout.header_index + 1}, column {time_col!r}",
            f"holds times of day ({sample[0]!r}){extra}; separate date and time columns are not supported: "
            "export one ISO 8601 time stamp column (2024-03-01T10:00:00.000+01:00) or seconds",
        )


def read_csv(path: Path, options: ReadOptions | None = None) -> Capture:
    """Read a delimited-text capture.

    Parameters
    ----------
    path : Path
        Opened read-only.
    options : ReadOptions
        Mapping, rate (when there is no time column), start time, nominal values,
        ``resample`` for irregular stamps.

    Raises
    ------
    CaptureReadError, MappingError
        One line naming the file, line/column and problem.
    """
    options = options or ReadOptions()
    path = Path(path)
    mapping = parse_mapping(options.mapping, options.mapping_source or "mapping")
    # the file's SHA-256 is computed in a thread while the parser runs (hashlib releases the GIL)
    with concurrent.futures.ThreadPoolExecutor(max_workers=1) as pool:
        digest = pool.submit(sha256_file, path)
        try:
            return _read_csv(path, options, mapping, digest)
        finally:
            digest.cancel()


@dataclasses.dataclass
class Plan:
    """Everything decided before the samples are read (shared by the in-memory and streamed paths)."""

    layout: Layout
    mapping: Mapping
    meta: dict[str, str]
    notes: list[str]
    time_col: str | None
    time_format: str | None
    specs: list
    columns: list[str]
    types: dict[str, pa.DataType]
    start: _dt.datetime | None
    given_rate: float | None
    src: str

    @property
    def scales(self) -> np.ndarray:
        return np.array([s.scale for s in self.specs])


def plan_read(path: Path, options: ReadOptions, mapping: Mapping) -> Plan:
    """Layout, channels, time column and declared values of a delimited file (reads its first 64 KiB)."""
    layout = detect_layout(path, mapping)
    meta, meta_notes, other_meta = _metadata(layout, path)
    notes: list[str] = list(meta_notes)
    if layout.names_index is not None:
        notes.append(f"two header lines: names on line {layout.names_index + 1}, units on line {layout.header_index + 1}; "
                     "columns read as " + ", ".join(repr(h) for h in layout.headers[:8]) + (" ..." if len(layout.headers) > 8 else ""))
    if other_meta:
        notes.append(f"{len(other_meta)} metadata line(s) above the header kept as text: " + " | ".join(other_meta[:5])[:300])
    time_col = _choose_time_column(layout, mapping, path)
    _refuse_split_date_time(layout, time_col, path)
    channel_headers = [h for h in layout.headers if h != time_col and not h.startswith(TRAILING)]
    specs, map_notes = resolve_channels(channel_headers, mapping, path, "column",
                                        where_of=lambda h: f"line {layout.header_index + 1}, column {h!r}")
    notes += map_notes

    # time column type: numeric seconds or ISO text
    time_format = mapping.time.get("format")
    if time_col is not None and time_format is None:
        j = layout.headers.index(time_col)
        sample = [r[j] for r in layout.first_data if len(r) > j and r[j]]
        time_format = "iso8601" if sample and all(_ISO_RE.match(c) for c in sample[:10]) else "seconds"
    if time_format not in (None, "seconds", "iso8601"):
        raise MappingError(mapping.source, "key time.format", f"{time_format!r} must be 'seconds' or 'iso8601'")
    columns = ([time_col] if time_col else []) + [s.source_label for s in specs]
    types: dict[str, pa.DataType] = {s.source_label: pa.float64() for s in specs}
    if time_col:
        types[time_col] = pa.float64() if time_format == "seconds" else pa.string()
    for s in specs:
        if s.scale != 1.0:
            notes.append(f"{s.name}: raw numbers x {s.scale:g} ({s.unit}" + (f", ratio {s.ratio:g}" if s.ratio != 1.0 else "") + ")")
    src = options.mapping_source or "mapping"
    start: _dt.datetime | None = options.start_time
    if start is None and "start_time" in mapping.capture:
        start = parse_start_time(str(mapping.capture["start_time"]), src, "key capture.start_time")
    if start is None and "start_time" in meta:
        start = parse_start_time(meta["start_time"], str(path), "metadata start_time")
    given_rate = options.sample_rate_hz
    if given_rate is None and "sample_rate_hz" in mapping.capture:
        given_rate = positive_number(mapping.capture["sample_rate_hz"], src, "key capture.sample_rate_hz")
    return Plan(layout, mapping, meta, notes, time_col, time_format, specs, columns, types, start, given_rate, src)


def _read_csv(path: Path, options: ReadOptions, mapping: Mapping, digest: concurrent.futures.Future) -> Capture:
    plan = plan_read(path, options, mapping)
    layout, meta, notes, time_col, time_format, specs = plan.layout, plan.meta, plan.notes, plan.time_col, plan.time_format, plan.specs
    start, given_rate, src = plan.start, plan.given_rate, plan.src
    tbl = _parse(path, layout, plan.columns, plan.types, time_col)
    if tbl.num_rows == 0:
        raise CaptureReadError(path, f"line {layout.header_index + 1}", "header row but no data rows")
    values = np.empty((len(specs), tbl.num_rows))
    for i, s in enumerate(specs):
        _column_into(values[i], tbl.column(s.source_label))
    scales = plan.scales
    if np.any(scales != 1.0):
        values *= scales[:, None]
    history: list[str] = []
    gaps: tuple = ()
    source = None
    timebase_record: dict[str, Any] = {}
    if time_col is None:
        rate = given_rate
        if rate is None and "sample_rate_hz" in meta:
            rate = positive_number(meta["sample_rate_hz"], str(path), "metadata sample_rate_hz")
        if rate is None:
            raise CaptureReadError(path, f"line {layout.header_index + 1}", "no time column and no sample rate; give --rate HZ (or [capture] sample_rate_hz)")
        notes.append(f"no time column; samples taken as uniform at {rate:g} Hz")
        if start is None:
            start = EPOCH
            notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 (times are relative)")
    else:
        where_t = f"column {time_col!r}"
        arr = tbl.column(time_col)
        if time_format == "iso8601":
            t_s, first = _iso_stamps(path, layout, time_col, arr, mapping)
            if start is None:
                start = first
            timebase_record["time"] = {"column": time_col, "format": "iso8601"}
        else:
            raw = _float_column(arr)
            if np.isnan(raw).any():
                row = int(np.flatnonzero(np.isnan(raw))[0])
                raise CaptureReadError(path, f"line {_line_of_row(path, layout, row)}, {where_t}", "time stamp missing")
            unit = mapping.time.get("unit", time_header_unit(time_col))
            t_s = raw * time_unit_factor(unit, path, f"line {layout.header_index + 1}, {where_t}")
            timebase_record["time"] = {"column": time_col, "format": "seconds", "unit": unit or "s"}
            if start is None:
                start = start_plus(EPOCH, float(t_s[0]), path, f"line {layout.header_index + 2}, {where_t}")
                notes.append("absolute start time not given; start set to 1970-01-01T00:00:00+00:00 plus the first time stamp (times are relative)")
            else:
                start = start_plus(start, float(t_s[0]), path, f"line {layout.header_index + 2}, {where_t}")
        if t_s.size < 2:
            raise CaptureReadError(path, f"line {layout.header_index + 2}", "only one data row; cannot find a sample rate")
        rep = timebase.analyse_stamps(t_s)
        if rep.first_backwards is not None:
            r = rep.first_backwards
            raise CaptureReadError(path, f"line {_line_of_row(path, layout, r)}, {where_t}",
                                   f"time goes backwards (from {t_s[r - 1]:.9g} s to {t_s[r]:.9g} s after the first stamp)")
        if rep.first_duplicate is not None:
            r = rep.first_duplicate
            raise CaptureReadError(path, f"line {_line_of_row(path, layout, r)}, {where_t}",
                                   f"time stamp repeats the one on line {_line_of_row(path, layout, r - 1)}")
        rate = rep.sample_rate_hz
        timebase_record["timebase"] = rep.to_dict()
        if given_rate is not None:
            if abs(given_rate - rate) > 1e-3 * given_rate and not options.resample:
                raise CaptureReadError(path, where_t, f"time stamps give {rate:.6g} Hz but {given_rate:g} Hz was given; drop --rate or add --resample")
            rate = given_rate
        if rep.irregular:
            if not options.resample:
                raise CaptureReadError(
                    path, where_t,
                    f"irregular time stamps: jitter up to {rep.jitter_max_s * 1e6:.3g} us ({100 * rep.jitter_fraction:.3g} % of the "
                    f"{rep.period_s * 1e6:.4g} us sample period); re-run with --resample to interpolate onto a uniform grid",
                )
            values, gaps = timebase.resample_uniform(t_s, values, rate)
            history.append(f"resampled linearly onto a uniform {rate:g} Hz grid (stamp jitter up to {rep.jitter_max_s * 1e6:.3g} us)")
            notes.append(f"irregular time stamps resampled to {rate:g} Hz (linear interpolation, as asked)")
        elif options.resample and given_rate is not None and given_rate != rep.sample_rate_hz:
            values, gaps = timebase.resample_uniform(t_s, values, rate)
            history.append(f"resampled linearly from {rep.sample_rate_hz:g} Hz to {rate:g} Hz")
        else:
            if rep.jitter_fraction > 0.01:
                notes.append(f"time stamps jitter by up to {rep.jitter_max_s * 1e6:.3g} us ({100 * rep.jitter_fraction:.2g} % of a sample period); samples placed on the nearest point of a uniform {rate:g} Hz grid")
            source, gaps = place_gapped(values, rep)  # a gap's samples are never allocated (waveforms.segments)
            notes.append(f"sample rate {rate:g} Hz from the time stamps")
        if gaps:
            total = sum(g.n_samples for g in gaps)
            notes.append(f"{len(gaps)} gap(s) in the time stamps, {total} missing samples kept as NaN (first at t = {gaps[0].start_index / rate:.6f} s)")

    if source is not None:  # the first seconds on the grid, for the inference of the nominal frequency
        values = source.read(0, min(source.n_samples, int(4 * rate) + 1), range(source.n_channels))
    capture_meta = system_values(options, mapping, meta, src, path, specs, values, rate, notes)
    record = mapping_record(specs, {
        "csv": {"delimiter": layout.delimiter, "decimal": layout.decimal, "header_line": layout.header_index + 1, "encoding": layout.encoding},
        **timebase_record,
        "source": mapping.source if options.mapping else "recognised from the header",
    })
    prov = Provenance(source_path=str(path), sha256=digest.result(), importer="csv", mapping=record,
                      notes=tuple(notes), history=tuple(history))
    return checked_capture(
        path, channels=tuple(s.channel() for s in specs), source=ArraySource(values) if source is None else source,
        sample_rate_hz=float(rate), start_time=start, provenance=prov, gaps=tuple(gaps), **capture_meta,
    )


def sniff_csv(path: Path) -> bool:
    """True for delimited text that looks like a waveform export (never raises)."""
    try:
        with open(path, "rb") as fh:
            raw = fh.read(8192)
        if not raw or b"\x00" in raw:
            return False
        try:
            raw.decode("utf-8")
        except UnicodeDecodeError as e:
            if e.start < len(raw) - 4:  # not just a character cut at the end of the block
                raw.decode("latin-1")
        layout = detect_layout(path, Mapping())
        return len(layout.headers) >= 1 and len(layout.first_data) >= 1
    except Exception:
        return False
