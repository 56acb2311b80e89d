"""COMTRADE importer (registry name ``"comtrade"``): IEEE C37.111-1999 / -2013 (IEC 60255-24:2013).

A COMTRADE record is a configuration file (``.cfg``, text) and a data file
(``.dat``: ASCII, BINARY, BINARY32 or FLOAT32), or, in the 2013 revision, one
combined ``.cff`` file holding both.  Either file of a pair may be given.

What is read from the ``.cfg`` (one item per line, comma-separated fields):

- ``station_name,rec_dev_id,rev_year`` (no year: 1991);
- ``TT,##A,##D``: total, analog and digital (status) channel counts;
- analog lines ``An,ch_id,ph,ccbm,uu,a,b,skew,min,max,primary,secondary,PS``
  (1991: the first ten fields);
- digital lines ``Dn,ch_id,ph,ccbm,y`` (only counted: status channels are skipped);
- ``lf`` line frequency; ``nrates`` and ``samp,endsamp`` lines;
- first-sample and trigger time stamps ``dd/mm/yyyy,hh:mm:ss.ssssss``
  (1991: ``mm/dd/yy``);
- ``ft`` file type; ``timemult`` (1999 on); ``time_code,local_code`` and
  ``tmq_code,leapsec`` (2013).

Values are ``a * x + b`` in the unit ``uu`` (IEEE C37.111-1999 clause 5.3.3,
from memory); a channel marked ``S`` (secondary) is multiplied by
``primary / secondary`` so that samples are in primary units; unit prefixes
(``kV``, ``mA``) are applied.  Missing-data markers (ASCII blank or 99999,
BINARY 0x8000, BINARY32 0x80000000; from memory) become NaN and `Gap` s.

Channels are named from their ``ch_id`` with the header spellings of
`waveforms.io.mapping` (``IA``, ``VA``, ``UL1``...), else from the ``ph`` field
and the unit (``ph = B``, ``uu = kV`` -> Vb); a mapping file can name them
(``[channels.Va] column = "<ch_id>"``).  Analog channels whose unit is not a
voltage or current (Hz, W, degC) are not read, with a note.

Not supported: several different sampling rates in one record (error), the
per-channel ``skew`` (noted, not corrected), status channels (skipped),
``.hdr`` / ``.inf`` contents.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import io
import math
import re
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .. import timebase
from ..capture import BASE_UNIT, ArraySource, Capture, Gap, Provenance
from ..errors import CaptureReadError, InvalidParameterError
from ..hashing import sha256_file
from .common import parse_start_time, system_values
from .mapping import (
    UNIT_RE,
    Mapping,
    mapping_record,
    parse_mapping,
    recognise,
    resolve_channels,
    unit_factor,
)
from .registry import ReadOptions

FILE_TYPES = ("ASCII", "BINARY", "BINARY32", "FLOAT32")
REVISIONS = ("1991", "1999", "2001", "2013")
#: Analog sample width in bytes per file type.
ANALOG_DTYPE = {"BINARY": "<i2", "BINARY32": "<i4", "FLOAT32": "<f4"}
#: Missing-data markers of the binary types (IEEE C37.111-1999 / -2013, from memory).
MISSING_INT = {"BINARY": -0x8000, "BINARY32": -0x80000000}
#: Missing-data marker of ASCII data from 1999 on (a blank field is also taken as missing).
MISSING_ASCII = 99999.0
#: A binary time stamp field of all ones means "no time stamp" (from memory).
MISSING_STAMP = 0xFFFFFFFF
#: Relative disagreement between the .dat time stamps and the cfg rate that is noted.
RATE_TOLERANCE = 1e-3

_DATE_RE = re.compile(r"^\s*(\d{1,2})/(\d{1,2})/(\d{2,4})\s*$")
_TIME_RE = re.compile(r"^\s*(\d{1,2}):(\d{1,2}):(\d{1,2})(?:\.(\d{1,12}))?\s*$")
_TIMECODE_RE = re.compile(r"^\s*([+-])?(\d{1,2})(?:h(\d{1,2}))?\s*$", re.IGNORECASE)
_CFF_HEADER_RE = re.compile(rb"^---\s*file type:\s*([A-Za-z]+)(?:\s+([A-Za-z0-9]+))?(?:\s*:\s*(\d+))?\s*---\s*$", re.IGNORECASE)
_COUNT_RE = (re.compile(r"^\d+$"), re.compile(r"^(\d+)A$", re.IGNORECASE), re.compile(r"^(\d+)D$", re.IGNORECASE))
_PH_LN = {"A": "A", "B": "B", "C": "C", "1": "A", "2": "B", "3": "C", "L1": "A", "L2": "B", "L3": "C",
          "R": "A", "S": "B", "T": "C"}
_PH_LL = {"AB": "A", "BC": "B", "CA": "C", "12": "A", "23": "B", "31": "C", "L1L2": "A", "L2L3": "B", "L3L1": "C"}


@dataclasses.dataclass(frozen=True)
class AnalogDef:
    """One analog channel line of a .cfg."""

    index: int
    ch_id: str
    ph: str
    ccbm: str
    unit: str
    a: float
    b: float
    skew_us: float
    vmin: float
    vmax: float
    primary: float
    secondary: float
    ps: str
    line: int
    header: str = ""  # unique name used for mapping (ch_id, or "ch_id #n" when repeated)


@dataclasses.dataclass(frozen=True)
class Config:
    """A parsed .cfg."""

    station: str
    device: str
    rev_year: str
    n_analog: int
    n_digital: int
    analogs: tuple[AnalogDef, ...]
    line_frequency_hz: float
    lf_line: int
    rates: tuple[tuple[float, int, int], ...]  # (samp, endsamp, line)
    nrates_line: int
    start: _dt.datetime  # naive
    start_line: int
    trigger: _dt.datetime  # naive
    ns_stamps: bool  # the cfg stamps have more than 6 fraction digits (2013: .dat stamps in ns)
    file_type: str
    timemult: float
    utc_offset: _dt.timezone | None
    time_code_line: int | None
    notes: tuple[str, ...]


# -- the .cfg ---------------------------------------------------------------------------
def _decode(raw: bytes) -> str:
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        return raw.decode("latin-1")


def _fields(line: str) -> list[str]:
    return [f.strip() for f in line.replace("\x1a", "").split(",")]


def _num(text: str, path: Path, where: str, default: float | None = None) -> float:
    if text == "" and default is not None:
        return default
    try:
        x = float(text)
    except ValueError:
        raise CaptureReadError(path, where, f"{text!r} is not a number") from None
    if not math.isfinite(x):  # NaN or infinite scale factors, limits or rates make every sample NaN (issue 20)
        raise CaptureReadError(path, where, f"{text!r} is not a finite number")
    return x


def _int(text: str, path: Path, where: str) -> int:
    try:
        return int(text)
    except ValueError:
        raise CaptureReadError(path, where, f"{text!r} is not a whole number") from None


def _stamp(fields: list[str], rev: str, path: Path, line: int) -> tuple[_dt.datetime, bool]:
    """``dd/mm/yyyy,hh:mm:ss.ssssss`` (1991: ``mm/dd/yy``) -> naive datetime, ns resolution flag."""
    if len(fields) != 2:
        raise CaptureReadError(path, f"line {line}", f"expected a time stamp 'dd/mm/yyyy,hh:mm:ss.ssssss', got {','.join(fields)!r}")
    d, t = _DATE_RE.match(fields[0]), _TIME_RE.match(fields[1])
    if d is None:
        raise CaptureReadError(path, f"line {line}, field 1", f"{fields[0]!r} is not a date dd/mm/yyyy")
    if t is None:
        raise CaptureReadError(path, f"line {line}, field 2", f"{fields[1]!r} is not a time hh:mm:ss.ssssss")
    x, y, year = int(d.group(1)), int(d.group(2)), int(d.group(3))
    day, month = (y, x) if rev == "1991" else (x, y)
    if year < 100:
        year += 1900 if year >= 70 else 2000
    frac = t.group(4) or ""
    micro = int((frac + "000000")[:6])
    try:
        out = _dt.datetime(year, month, day, int(t.group(1)), int(t.group(2)), int(t.group(3)), micro)
    except ValueError as e:
        raise CaptureReadError(path, f"line {line}", f"{','.join(fields)!r} is not a valid date and time ({e})") from None
    return out, len(frac) > 6


def _time_code(text: str, path: Path, where: str) -> _dt.timezone:
    """A C37.111-2013 time code (``+1``, ``-5h30``, ``0``) as a UTC offset (from memory)."""
    m = _TIMECODE_RE.match(text)
    if m is None:
        raise CaptureReadError(path, where, f"{text!r} is not a time code like '+1', '-5h30' or '0'")
    sign = -1 if m.group(1) == "-" else 1
    delta = _dt.timedelta(hours=int(m.group(2)), minutes=int(m.group(3) or 0))
    if delta > _dt.timedelta(hours=14):
        raise CaptureReadError(path, where, f"{text!r} is more than 14 hours from UTC")
    return _dt.timezone(sign * delta)


def parse_cfg(text: str, path: Path, first_line: int = 1) -> Config:
    """Parse the text of a .cfg (or the CFG section of a .cff; ``first_line`` is its file line)."""
    lines = text.replace("\x1a", "").splitlines()
    pos = 0
    notes: list[str] = []

    def take(what: str) -> tuple[list[str], int]:
        nonlocal pos
        if pos >= len(lines):
            raise CaptureReadError(path, f"line {first_line + pos}", f"the configuration ends here; expected {what}")
        ln = first_line + pos
        pos += 1
        return _fields(lines[pos - 1]), ln

    f, ln = take("station_name,rec_dev_id,rev_year")
    if len(f) == 2:
        station, device, rev = f[0], f[1], "1991"
    elif len(f) == 3:
        station, device, rev = f
        if rev not in REVISIONS:
            raise CaptureReadError(path, f"line {ln}, field 3", f"revision year {rev!r} is not one of {', '.join(REVISIONS)}")
    else:
        raise CaptureReadError(path, f"line {ln}", f"expected 'station_name,rec_dev_id,rev_year', got {len(f)} fields")
    f, ln = take("the channel counts 'TT,##A,##D'")
    if len(f) != 3 or not all(r.match(x) for r, x in zip(_COUNT_RE, f)):
        raise CaptureReadError(path, f"line {ln}", f"expected channel counts 'TT,##A,##D' (e.g. '6,3A,3D'), got {','.join(f)!r}")
    total = int(f[0])
    n_a = int(_COUNT_RE[1].match(f[1]).group(1))  # type: ignore[union-attr]
    n_d = int(_COUNT_RE[2].match(f[2]).group(1))  # type: ignore[union-attr]
    if total != n_a + n_d:
        raise CaptureReadError(path, f"line {ln}", f"wrong channel counts: total {total} is not {n_a} analog + {n_d} digital = {n_a + n_d}")
    analogs = []
    names = ("An", "ch_id", "ph", "ccbm", "uu", "a", "b", "skew", "min", "max", "primary", "secondary", "PS")
    for k in range(n_a):
        f, ln = take(f"analog channel line {k + 1} of {n_a}")
        need = 10 if rev == "1991" else 13
        if len(f) < need or len(f) > 13:
            hint = f" (the cfg declares {n_a} analog channels on line {first_line + 1}; is one missing?)" if len(f) < need else ""
            raise CaptureReadError(path, f"line {ln}", f"analog channel line has {len(f)} fields, expected {need} ({','.join(names[:need])}){hint}")
        f = f + [""] * (13 - len(f))

        def fld(i: int, default: float | None = None, f: list[str] = f, ln: int = ln) -> float:
            return _num(f[i], path, f"line {ln}, field {i + 1} ({names[i]})", default)

        idx = _int(f[0], path, f"line {ln}, field 1 (An)")
        ps = (f[12] or "P").upper()
        if ps not in ("P", "S"):
            raise CaptureReadError(path, f"line {ln}, field 13 (PS)", f"{f[12]!r} must be 'P' (primary) or 'S' (secondary)")
        analogs.append(AnalogDef(
            index=idx, ch_id=f[1], ph=f[2], ccbm=f[3], unit=f[4], a=fld(5), b=fld(6, 0.0), skew_us=fld(7, 0.0),
            vmin=fld(8, np.nan), vmax=fld(9, np.nan), primary=fld(10, 1.0), secondary=fld(11, 1.0), ps=ps, line=ln,
        ))
    for k in range(n_d):
        f, ln = take(f"digital channel line {k + 1} of {n_d}")
        if len(f) < 2:
            raise CaptureReadError(path, f"line {ln}", f"digital channel line has {len(f)} field(s), expected 'Dn,ch_id,ph,ccbm,y'")
        if len(f) == 13:
            raise CaptureReadError(path, f"line {ln}", f"an analog channel line where digital channel {k + 1} of {n_d} was expected (the counts on line {first_line + 1} are wrong?)")
    f, lf_line = take("the line frequency")
    lf = _num(f[0], path, f"line {lf_line}", 0.0)
    f, nr_line = take("nrates")
    nrates = _int(f[0], path, f"line {nr_line}")
    rates = []
    for _ in range(max(nrates, 1)):
        f, ln = take("a 'samp,endsamp' line")
        if len(f) != 2:
            raise CaptureReadError(path, f"line {ln}", f"expected 'samp,endsamp', got {','.join(f)!r}")
        samp = _num(f[0], path, f"line {ln}, field 1 (samp)")
        if samp < 0:  # samp = 0 means "no fixed rate" (IEEE C37.111-1999 5.3.6, from memory); below 0 means nothing
            raise CaptureReadError(path, f"line {ln}, field 1 (samp)", f"sampling rate {f[0]} is negative")
        rates.append((samp, _int(f[1], path, f"line {ln}, field 2 (endsamp)"), ln))
    f, start_line = take("the first-sample time stamp")
    start, ns1 = _stamp(f, rev, path, start_line)
    f, ln = take("the trigger time stamp")
    trigger, ns2 = _stamp(f, rev, path, ln)
    f, ft_line = take("the file type (ASCII, BINARY, BINARY32, FLOAT32)")
    ft = f[0].upper()
    if ft not in FILE_TYPES:
        raise CaptureReadError(path, f"line {ft_line}", f"unknown file type {f[0]!r}; expected one of {', '.join(FILE_TYPES)}")
    if ft in ("BINARY32", "FLOAT32") and rev in ("1991", "1999"):
        notes.append(f"file type {ft} is defined from the 2013 revision; the cfg says {rev}")
    timemult = 1.0
    if rev != "1991" and pos < len(lines) and lines[pos].strip():
        f, ln = take("timemult")
        timemult = _num(f[0], path, f"line {ln} (timemult)", 1.0)
    offset: _dt.timezone | None = None
    tc_line: int | None = None
    if rev == "2013" and pos < len(lines) and lines[pos].strip():
        f, tc_line = take("time_code,local_code")
        if f[0]:
            offset = _time_code(f[0], path, f"line {tc_line}, field 1 (time_code)")
    return Config(station, device, rev, n_a, n_d, tuple(analogs), lf, lf_line, tuple(rates), nr_line, start,
                  start_line, trigger, ns1 or ns2, ft, timemult, offset, tc_line, tuple(notes))


# -- locating the files ------------------------------------------------------------------
def _sibling(path: Path, ext: str) -> Path | None:
    for cand in (path.with_suffix(ext.lower()), path.with_suffix(ext.upper())):
        if cand.is_file():
            return cand
    return None


@dataclasses.dataclass(frozen=True)
class Parts:
    """Where the configuration and the data are."""

    cfg_path: Path
    cfg_text: str
    cfg_first_line: int
    dat_path: Path
    dat: bytes
    dat_first_line: int  # file line of the first ASCII data line


def _split_cff(path: Path) -> Parts:
    raw = path.read_bytes()
    sections: dict[str, tuple[int, int, int]] = {}  # name -> (byte start, first line, byte count or -1)
    pos, line = 0, 1
    current = None
    order: list[tuple[str, int]] = []
    while pos < len(raw):
        nl = raw.find(b"\n", pos)
        end = len(raw) if nl < 0 else nl + 1
        m = _CFF_HEADER_RE.match(raw[pos:end].strip())
        if m:
            current = m.group(1).decode().upper()
            if current == "DAT":
                fmt = (m.group(2) or b"").decode().upper()
                sections["DAT"] = (end, line + 1, int(m.group(3)) if m.group(3) else -1)
                order.append(("DAT", end))
                if fmt != "ASCII":
                    break  # binary data to the end (or the byte count)
            else:
                sections[current] = (end, line + 1, -1)
                order.append((current, end))
        pos, line = end, line + 1
    if "CFG" not in sections:
        raise CaptureReadError(path, "line 1", "no '--- file type: CFG ---' section: not a COMTRADE .cff")
    if "DAT" not in sections:
        raise CaptureReadError(path, "", "no '--- file type: DAT ... ---' section")

    def stop_of(name: str) -> int:
        start = sections[name][0]
        later = [s for n, s in order if s > start]
        if not later:
            return len(raw)
        # the start of the next header line
        nxt = min(later)
        return raw.rfind(b"\n", 0, nxt - 1) + 1

    c0 = sections["CFG"][0]
    cfg_text = _decode(raw[c0:stop_of("CFG")])
    d0, dline, dcount = sections["DAT"]
    dat = raw[d0:] if dcount < 0 else raw[d0 : d0 + dcount]
    if dcount >= 0 and len(dat) < dcount:
        raise CaptureReadError(path, f"line {dline - 1}", f"the DAT section announces {dcount} bytes but only {len(dat)} follow (truncated)")
    if dcount < 0:
        dat = dat[: stop_of("DAT") - d0] if order[-1][0] != "DAT" else dat
    return Parts(path, cfg_text, sections["CFG"][1], path, dat, dline)


def locate(path: Path) -> Parts:
    """The configuration and data of a record given by its .cfg, .dat or .cff."""
    suffix = path.suffix.lower()
    if suffix == ".cff":
        return _split_cff(path)
    if suffix == ".dat":
        cfg = _sibling(path, ".cfg")
        if cfg is None:
            raise CaptureReadError(path, "", f"no configuration file next to it (expected {path.with_suffix('.cfg').name})")
        dat = path
    else:
        cfg = path
        dat_found = _sibling(path, ".dat")
        if dat_found is None:
            raise CaptureReadError(path, "", f"no data file next to it (expected {path.with_suffix('.dat').name})")
        dat = dat_found
    try:
        cfg_text = _decode(cfg.read_bytes())
        data = dat.read_bytes()
    except OSError as e:
        raise CaptureReadError(e.filename or path, "", f"cannot be opened ({e.strerror or e})") from None
    return Parts(cfg, cfg_text, 1, dat, data, 1)


# -- the data ------------------------------------------------------------------------------
def _line_table(raw: bytes) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per physical line: start, end (without CR/LF) and comma count (vectorised)."""
    a = np.frombuffer(raw, dtype=np.uint8)
    nl = np.flatnonzero(a == 10)
    ends = nl if (a.size == 0 or a[-1] == 10) else np.concatenate((nl, [a.size]))
    starts = np.concatenate(([0], ends[:-1] + 1)) if ends.size else np.zeros(0, dtype=np.int64)
    ends = ends.copy()
    has_cr = (ends > starts) & (a[np.maximum(ends - 1, 0)] == 13)
    ends = ends - has_cr
    commas = np.concatenate(([0], np.cumsum(a == 44)))
    return starts, ends, commas[ends] - commas[starts]


def _read_ascii(parts: Parts, cfg: Config, used: list[int], rev: str) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[str]]:
    """ASCII data: sample numbers, time stamps (NaN when blank) and raw analog values (channels x samples)."""
    raw = parts.dat.rstrip(b"\x1a")
    notes: list[str] = []
    n_fields = 2 + cfg.n_analog + cfg.n_digital
    starts, ends, commas = _line_table(raw)
    nonblank = np.flatnonzero(ends > starts)  # empty lines are skipped (by the parser too)
    if nonblank.size == 0:
        raise CaptureReadError(parts.dat_path, "", "no data records")
    bad = np.flatnonzero(commas[nonblank] != n_fields - 1)
    if bad.size:
        i = int(nonblank[bad[0]])
        got = int(commas[i]) + 1
        raise CaptureReadError(parts.dat_path, f"line {parts.dat_first_line + i}",
                               f"{got} fields, but the cfg ({cfg.n_analog} analog + {cfg.n_digital} digital channels) needs {n_fields} "
                               "(sample number, time stamp, analog values, status values)")
    cols = [0, 1] + [2 + k for k in used]

    def parse(dtype: Any) -> pd.DataFrame:
        return pd.read_csv(io.BytesIO(raw), header=None, names=list(range(n_fields)), usecols=cols, dtype=dtype,
                           engine="c", skip_blank_lines=True, skipinitialspace=True, na_values=[""], keep_default_na=False)

    try:
        df = parse(np.float64)
    except ValueError:
        txt = parse(str)
        first_row, first_col = None, None
        for c in cols:
            s = txt[c].fillna("").str.strip()
            rows = np.flatnonzero(pd.to_numeric(s, errors="coerce").isna().to_numpy() & (s != "").to_numpy())
            if rows.size and (first_row is None or rows[0] < first_row):
                first_row, first_col = int(rows[0]), c
        if first_row is None:
            raise CaptureReadError(parts.dat_path, "", "cannot be parsed as COMTRADE ASCII data") from None
        what = {0: "sample number", 1: "time stamp"}.get(first_col, "")  # type: ignore[arg-type]
        if not what:
            ch = cfg.analogs[first_col - 2]  # type: ignore[operator]
            what = f"analog channel {ch.index} {ch.ch_id!r}"
        line = parts.dat_first_line + int(nonblank[first_row])
        raise CaptureReadError(parts.dat_path, f"line {line}, column {first_col + 1} ({what})",  # type: ignore[operator]
                               f"{txt[first_col].iloc[first_row].strip()!r} is not a number") from None
    nums = df[0].to_numpy()
    stamps = df[1].to_numpy()
    values = np.empty((len(used), len(df)))
    for r, k in enumerate(used):
        values[r] = df[2 + k].to_numpy()
    n_blank = int(np.isnan(values).sum())
    if rev != "1991":
        marker = values == MISSING_ASCII
        if marker.any():
            values[marker] = np.nan
            notes.append(f"{int(marker.sum())} ASCII value(s) 99999 (missing-data marker) read as NaN")
    if n_blank:
        notes.append(f"{n_blank} blank ASCII value(s) read as missing (NaN)")
    return nums, stamps, values, notes


def _read_binary(parts: Parts, cfg: Config, used: list[int]) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[str]]:
    """BINARY / BINARY32 / FLOAT32 records: ``uint32 n, uint32 timestamp, analogs, 16-bit status words``."""
    ft = cfg.file_type
    words = -(-cfg.n_digital // 16)
    fields: list[tuple[Any, ...]] = [("n", "<u4"), ("t", "<u4"), ("a", ANALOG_DTYPE[ft], (cfg.n_analog,))]
    if words:
        fields.append(("d", "<u2", (words,)))
    rec = np.dtype(fields)
    nbytes = len(parts.dat)
    if nbytes == 0:
        raise CaptureReadError(parts.dat_path, "", "no data records (the data is empty)")
    if nbytes % rec.itemsize:
        size = ANALOG_DTYPE[ft][-1]
        raise CaptureReadError(
            parts.dat_path, f"byte {nbytes - nbytes % rec.itemsize}",
            f"{nbytes} bytes is not a whole number of {rec.itemsize}-byte records (4 + 4 + {cfg.n_analog} x {size} analog"
            f" + {words} x 2 status): truncated or the channel counts are wrong",
        )
    arr = np.frombuffer(parts.dat, dtype=rec)
    raw = arr["a"][:, used].T
    values = raw.astype(np.float64)
    notes: list[str] = []
    if ft in MISSING_INT:
        marker = raw == MISSING_INT[ft]
        what = f"0x{(-MISSING_INT[ft]):X}"
    else:
        marker = ~np.isfinite(raw)
        what = "NaN / infinite"
    if marker.any():
        values[marker] = np.nan
        notes.append(f"{int(marker.sum())} {ft} value(s) {what} (missing-data marker) read as NaN")
    stamps = arr["t"].astype(np.float64)
    stamps[arr["t"] == MISSING_STAMP] = np.nan
    return arr["n"].astype(np.float64), stamps, values, notes


def _nan_gaps(values: np.ndarray, names: list[str]) -> list[Gap]:
    """Runs of samples where a channel is NaN, as `Gap` s naming the channels."""
    if values.size == 0:
        return []
    mask = np.isnan(values)
    anyn = mask.any(axis=0)
    if not anyn.any():
        return []
    edges = np.diff(np.concatenate(([0], anyn.astype(np.int8), [0])))
    out = []
    for a, b in zip(np.flatnonzero(edges == 1), np.flatnonzero(edges == -1), strict=True):
        chans = [names[i] for i in np.flatnonzero(mask[:, a:b].any(axis=1))]
        out.append(Gap(int(a), int(b), f"missing-data marker in the .dat ({', '.join(chans)})"))
    return out


# -- channels ---------------------------------------------------------------------------
def _from_ph(ch: AnalogDef) -> dict[str, str] | None:
    """Kind, conductor, reference from the ph field and the unit (``ph=B``, ``uu=kV`` -> Vb)."""
    m = UNIT_RE.match(ch.unit.strip())
    if m is None:
        return None
    kind = "voltage" if m.group("base").upper().startswith("V") else "current"
    ph = re.sub(r"[\s\-_]", "", ch.ph).upper()
    if kind == "voltage" and ph.endswith("N") and ph[:-1] in _PH_LN:
        return {"kind": kind, "conductor": _PH_LN[ph[:-1]], "reference": "LN"}
    if ph in _PH_LN:
        return {"kind": kind, "conductor": _PH_LN[ph], "reference": "LN" if kind == "voltage" else "line"}
    if kind == "voltage" and ph in _PH_LL:
        return {"kind": kind, "conductor": _PH_LL[ph], "reference": "LL"}
    if ph == "N":
        return {"kind": kind, "conductor": "N", "reference": "neutral"}
    return None


def _label(d: dict[str, str]) -> str:
    letter = "V" if d["kind"] == "voltage" else "I"
    if d["reference"] == "LL":
        return letter + {"A": "ab", "B": "bc", "C": "ca"}[d["conductor"]]
    return letter + d["conductor"].lower()


def _channel_plan(cfg: Config, mapping: Mapping, path: Path) -> tuple[list[Any], list[AnalogDef], list[str], Mapping]:
    """Resolve the analog channels into `ChannelSpec` s (reusing `resolve_channels`)."""
    notes: list[str] = []
    ids = [c.ch_id for c in cfg.analogs]
    defs = [dataclasses.replace(c, header=c.ch_id if ids.count(c.ch_id) == 1 else f"{c.ch_id} #{c.index}") for c in cfg.analogs]
    by_header = {c.header: c for c in defs}
    mapped_sources = {e.get("column") or e.get("dataset") for e in mapping.channels.values()}
    chans = {k: dict(v) for k, v in mapping.channels.items()}
    guessed: set[str] = set()
    headers: list[str] = []
    for c in defs:
        if c.header in mapped_sources or c.header in mapping.ignore:
            headers.append(c.header)
            continue
        unit_ok = c.unit.strip() == "" or UNIT_RE.match(c.unit.strip()) is not None
        if not unit_ok:
            notes.append(f"analog channel {c.index} {c.ch_id!r} (line {c.line}) is in {c.unit!r}, not a voltage or current: not read")
            continue
        headers.append(c.header)
        if recognise(c.header) is not None:
            continue
        d = _from_ph(c)
        if d is None:
            continue
        key = _label(d)
        entry = chans.get(key)
        if entry is None:
            chans[key] = {"column": c.header, **d}
        elif not (entry.get("column") or entry.get("dataset")):
            chans[key] = {"column": c.header, **d, **entry}
        else:
            continue
        guessed.add(c.header)
        notes.append(f"analog channel {c.index} {c.ch_id!r} (line {c.line}) taken as {key} from its ph field {c.ph!r} and unit {c.unit!r}")
    if not headers:
        raise CaptureReadError(path, "", "no voltage or current channels among the analog channels")
    m2 = dataclasses.replace(mapping, channels=chans)
    specs, map_notes = resolve_channels(headers, m2, path, "column",
                                        where_of=lambda h: f"line {by_header[h].line}, channel id {by_header[h].ch_id!r}")
    # the unit comes from the cfg's uu field, not from the name
    notes += [n.replace("column ", "channel id ", 1).split(", no unit stated")[0] for n in map_notes]
    out = []
    used = []
    for s in specs:
        c = by_header[s.source_label]
        entry = next((e for e in m2.channels.values() if (e.get("column") or e.get("dataset")) == s.source_label), None)
        if entry is None:
            entry = m2.channels.get(s.name)  # a key alone (--ratio Ia=400:5) applies to the channel recognised as it
        if entry is not None and "unit" in entry:
            factor, unit = s.prefix_factor, s.unit
        elif c.unit.strip():
            factor = unit_factor(c.unit.strip(), s.kind, path, f"line {c.line}, field 5 (uu)")
            unit = c.unit.strip()
        else:
            factor, unit = 1.0, BASE_UNIT[s.kind]
            notes.append(f"analog channel {c.index} {c.ch_id!r}: no unit on line {c.line}, taken as {unit}")
        ratio = s.ratio
        how = f"{s.name}: a*x+b in {unit}" + (f" (x {factor:g} to {BASE_UNIT[s.kind]})" if factor != 1.0 else "")
        if c.ps == "S":
            if entry is not None and "ratio" in entry:
                how += f", secondary values (PS = S) scaled by the mapping's ratio {ratio:g} instead of the cfg's {c.primary:g}/{c.secondary:g}"
            else:
                if not (np.isfinite(c.primary) and np.isfinite(c.secondary) and c.primary > 0 and c.secondary > 0):
                    raise CaptureReadError(path, f"line {c.line}, fields 11-12 (primary, secondary)",
                                           f"channel {c.ch_id!r} is secondary (PS = S) but the ratio {c.primary:g}/{c.secondary:g} cannot scale it to primary; give --ratio {s.name}=RATIO")
                ratio *= c.primary / c.secondary
                how += f", secondary values (PS = S) scaled to primary by {c.primary:g}/{c.secondary:g} = {c.primary / c.secondary:g}"
        else:
            how += ", primary values (PS = P)" + (f", x the mapping's ratio {ratio:g}" if ratio != 1.0 else "")
        if c.skew_us:
            how += f"; skew {c.skew_us:g} us (line {c.line}) not corrected"
        notes.append(how)
        out.append(dataclasses.replace(s, unit=unit, prefix_factor=factor, ratio=ratio, guessed=s.guessed or c.header in guessed))
        used.append(c)
    return out, used, notes, m2


# -- reading -----------------------------------------------------------------------------
def read_comtrade(path: Path, options: ReadOptions | None = None) -> Capture:
    """Read a COMTRADE record (.cfg + .dat, or .cff) into a `Capture`.

    Raises
    ------
    CaptureReadError
        One line naming the file, the line and field, and the problem.
    """
    options = options or ReadOptions()
    path = Path(path)
    mapping = parse_mapping(options.mapping, options.mapping_source or "mapping")
    parts = locate(path)
    cfg = parse_cfg(parts.cfg_text, parts.cfg_path, parts.cfg_first_line)
    notes: list[str] = [f"COMTRADE {cfg.rev_year}, {cfg.file_type}; station {cfg.station!r}, device {cfg.device!r}"] + list(cfg.notes)
    specs, used_defs, ch_notes, _ = _channel_plan(cfg, mapping, parts.cfg_path)
    notes += ch_notes
    pos_of = {c.index: k for k, c in enumerate(cfg.analogs)}
    used = [pos_of[c.index] for c in used_defs]

    # sampling rate (IEEE C37.111-1999 clause 5.3.6, from memory)
    rates = {r for r, _, _ in cfg.rates}
    if len(rates) > 1:
        raise CaptureReadError(parts.cfg_path, f"lines {cfg.rates[0][2]}-{cfg.rates[-1][2]}",
                               f"{len(cfg.rates)} different sampling rates ({', '.join(f'{r:g}' for r, _, _ in cfg.rates)} Hz): variable-rate records are not supported")
    cfg_rate = cfg.rates[0][0]
    endsamp = cfg.rates[-1][1]

    if cfg.file_type == "ASCII":
        nums, stamps, raw, dnotes = _read_ascii(parts, cfg, used, cfg.rev_year)
    else:
        nums, stamps, raw, dnotes = _read_binary(parts, cfg, used)
    notes += dnotes
    n = raw.shape[1]
    if endsamp and n > endsamp:
        notes.append(f"the .dat holds {n} records, more than the {endsamp} declared on cfg line {cfg.rates[-1][2]}; the first {endsamp} are read")
        nums, stamps, raw, n = nums[:endsamp], stamps[:endsamp], raw[:, :endsamp], endsamp
    elif endsamp and n < endsamp:
        notes.append(f"the .dat holds {n} records, fewer than the {endsamp} declared on cfg line {cfg.rates[-1][2]}; the capture ends there")
    if n < 2:
        raise CaptureReadError(parts.dat_path, "", f"{n} data record(s); at least two are needed")
    if not np.isnan(nums).any():
        jumps = np.flatnonzero(np.diff(nums) != 1)
        if jumps.size:
            j = int(jumps[0])
            notes.append(f"sample numbers in the .dat are not consecutive ({jumps.size} place(s), first at record {j + 2}: "
                         f"{nums[j]:.0f} then {nums[j + 1]:.0f}); records are taken in file order")
    a = np.array([c.a for c in used_defs])[:, None]
    b = np.array([c.b for c in used_defs])[:, None]
    scales = np.array([s.scale for s in specs])[:, None]
    values = (a * raw + b) * scales  # IEEE C37.111-1999 5.3.3: value = a * x + b, then to primary and base units

    # time stamps: microseconds x timemult (2013: nanoseconds when the cfg stamps carry them; from memory)
    stamp_unit = (1e-9 if cfg.ns_stamps else 1e-6) * cfg.timemult
    have_stamps = not np.isnan(stamps).any()
    gaps: list[Gap] = []
    history: list[str] = []
    tb_record: dict[str, Any] = {}
    rate = cfg_rate
    if options.sample_rate_hz is not None and rate > 0 and abs(options.sample_rate_hz - rate) > RATE_TOLERANCE * rate:
        raise CaptureReadError(parts.cfg_path, f"line {cfg.rates[0][2]}", f"the cfg gives {rate:g} Hz but {options.sample_rate_hz:g} Hz was given; drop --rate")
    if rate <= 0:
        # nrates = 0 / samp = 0: the time stamps are the time base
        if not have_stamps:
            if options.sample_rate_hz is None:
                raise CaptureReadError(parts.cfg_path, f"line {cfg.rates[0][2]}", "no sampling rate (samp = 0) and the .dat has no time stamps; give --rate HZ")
            rate = options.sample_rate_hz
            notes.append(f"no sampling rate in the cfg and no time stamps; {rate:g} Hz as given")
        else:
            t_s = stamps * stamp_unit
            rep = timebase.analyse_stamps(t_s)
            if rep.first_backwards is not None or rep.first_duplicate is not None:
                r = rep.first_backwards if rep.first_backwards is not None else rep.first_duplicate
                raise CaptureReadError(parts.dat_path, f"record {int(r) + 1}", "time stamp does not increase; the record has no sampling rate to fall back on")
            rate = rep.sample_rate_hz
            tb_record = rep.to_dict()
            if rep.irregular:
                if not options.resample:
                    raise CaptureReadError(parts.dat_path, "time stamps", f"irregular (jitter up to {rep.jitter_max_s * 1e6:.3g} us) and the cfg has no sampling rate; re-run with --resample")
                values, g = timebase.resample_uniform(t_s, values, rate)
                gaps += list(g)
                history.append(f"resampled linearly onto a uniform {rate:g} Hz grid (stamp jitter up to {rep.jitter_max_s * 1e6:.3g} us)")
            else:
                values, g = timebase.place_on_grid(values, rep)
                gaps += list(g)
            notes.append(f"no sampling rate in the cfg (samp = 0): {rate:g} Hz from the .dat time stamps")
    elif have_stamps:
        try:
            rep = timebase.analyse_stamps(stamps * stamp_unit)
        except InvalidParameterError:
            rep = None
        if rep is not None:
            tb_record = rep.to_dict()
            if rep.first_backwards is not None or rep.first_duplicate is not None:
                notes.append(f"the .dat time stamps repeat or go backwards (record {(rep.first_backwards or rep.first_duplicate) + 1}); the cfg rate {rate:g} Hz is used")
            else:
                if abs(rep.sample_rate_hz - rate) > RATE_TOLERANCE * rate:
                    notes.append(f"the .dat time stamps give {rep.sample_rate_hz:.6g} Hz, the cfg {rate:g} Hz; the cfg rate is used")
                if rep.gaps:
                    notes.append(f"the .dat time stamps skip {len(rep.gaps)} stretch(es) (first at record {rep.gaps[0][0]}); the cfg rate is used, samples are not moved")
                if rep.jitter_fraction > 0.01:
                    notes.append(f"the .dat time stamps jitter by up to {rep.jitter_max_s * 1e6:.3g} us")
                if not (rep.gaps or abs(rep.sample_rate_hz - rate) > RATE_TOLERANCE * rate):
                    notes.append(f"the .dat time stamps agree with the cfg rate {rate:g} Hz")
    else:
        notes.append(f"sample rate {rate:g} Hz from the cfg (the .dat has no time stamps)")
    nan_gaps = _nan_gaps(values, [s.name for s in specs])
    covered = {(g.start_index, g.stop_index) for g in gaps}
    gaps += [g for g in nan_gaps if (g.start_index, g.stop_index) not in covered]
    gaps.sort(key=lambda g: g.start_index)

    # start time (IEEE C37.111-2013: time_code gives the stamps' offset from UTC; from memory)
    src = options.mapping_source or "mapping"
    start = options.start_time
    if start is None and "start_time" in mapping.capture:
        start = parse_start_time(str(mapping.capture["start_time"]), src, "key capture.start_time")
    if start is not None:
        notes.append(f"start time as given ({start.isoformat()}); the cfg says {cfg.start.isoformat()} on line {cfg.start_line}")
    elif cfg.utc_offset is not None:
        start = cfg.start.replace(tzinfo=cfg.utc_offset)
        notes.append(f"start time from cfg line {cfg.start_line}, UTC offset from the time code on line {cfg.time_code_line}")
    else:
        start = cfg.start.replace(tzinfo=_dt.UTC)
        notes.append(f"the cfg start time (line {cfg.start_line}) has no UTC offset (no 2013 time code); taken as UTC: give --start to set it")
    trig_s = (cfg.trigger - cfg.start).total_seconds()
    notes.append(f"trigger at t = {trig_s:.6f} s")

    meta: dict[str, str] = {}
    if cfg.line_frequency_hz in (50.0, 60.0):
        meta["nominal_frequency_hz"] = f"{cfg.line_frequency_hz:g}"
        if options.nominal_frequency_hz is None and "nominal_frequency_hz" not in mapping.capture:
            notes.append(f"nominal frequency {cfg.line_frequency_hz:g} Hz from the line frequency on cfg line {cfg.lf_line}")
    elif cfg.line_frequency_hz:
        notes.append(f"line frequency {cfg.line_frequency_hz:g} Hz on cfg line {cfg.lf_line} is not 50 or 60; not used")
    capture_meta = system_values(options, mapping, meta, src, parts.cfg_path, specs, values, rate, notes)
    if gaps:
        notes.append(f"{len(gaps)} gap(s), {sum(g.n_samples for g in gaps)} missing samples kept as NaN")
    extra = {
        "comtrade": {
            "cfg": str(parts.cfg_path), "dat": str(parts.dat_path), "rev_year": cfg.rev_year, "file_type": cfg.file_type,
            "station": cfg.station, "device": cfg.device, "timemult": cfg.timemult, "line_frequency_hz": cfg.line_frequency_hz,
            "channels": {s.name: {"index": c.index, "ch_id": c.ch_id, "ph": c.ph, "uu": c.unit, "a": c.a, "b": c.b,
                                  "ps": c.ps, "primary": c.primary, "secondary": c.secondary, "cfg_line": c.line}
                         for s, c in zip(specs, used_defs, strict=True)},
        },
        "source": mapping.source if options.mapping else "recognised from the cfg",
    }
    if tb_record:
        extra["timebase"] = tb_record
    if parts.dat_path != path:
        extra["comtrade"]["dat_sha256"] = sha256_file(parts.dat_path)
    if parts.cfg_path != path:
        extra["comtrade"]["cfg_sha256"] = sha256_file(parts.cfg_path)
    prov = Provenance(source_path=str(path), sha256=sha256_file(path), importer="comtrade",
                      mapping=mapping_record(specs, extra), notes=tuple(notes), history=tuple(history))
    return Capture(
        channels=tuple(s.channel() for s in specs), source=ArraySource(values), sample_rate_hz=float(rate),
        start_time=start, provenance=prov, gaps=tuple(gaps), **capture_meta,
    )


def _looks_like_cfg(head: bytes) -> bool:
    lines = _decode(head).replace("\x1a", "").splitlines()
    if len(lines) < 3:
        return False
    f1, f2 = _fields(lines[0]), _fields(lines[1])
    if len(f1) not in (2, 3) or (len(f1) == 3 and f1[2] not in REVISIONS):
        return False
    return len(f2) == 3 and all(r.match(x) for r, x in zip(_COUNT_RE, f2))


def sniff_comtrade(path: Path) -> bool:
    """True for a .cfg / .cff that starts like COMTRADE, or a .dat with such a .cfg beside it (never raises)."""
    try:
        suffix = path.suffix.lower()
        if not path.is_file():
            return False
        if suffix == ".cff":
            with open(path, "rb") as fh:
                first = fh.readline(200).strip()
            m = _CFF_HEADER_RE.match(first)
            return bool(m and m.group(1).upper() == b"CFG")
        if suffix == ".dat":
            cfg = _sibling(path, ".cfg")
            return cfg is not None and sniff_comtrade(cfg)
        if suffix == ".cfg":
            with open(path, "rb") as fh:
                return _looks_like_cfg(fh.read(4096))
        return False
    except Exception:  # noqa: BLE001 - a sniffer never raises
        return False
