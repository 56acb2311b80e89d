"""RMS trend logs in CSV or Parquet: a time column and per-phase RMS voltage and current columns.

A trend export has one row per interval (a cycle, a second, a minute): a time
column (ISO 8601 clock times, or seconds), per-phase RMS voltages and currents
(``Va_rms``, ``V1 RMS``, ``Irms L1``... recognised by
`waveforms.io.spellings.recognise_rms`, the same spellings as waveform channels
with an RMS mark), and optionally active and reactive power, power factor and
frequency.  `sniff_trend` recognises such a file by its header alone (a time
column and three RMS currents or three RMS voltages), `read_trend` reads it
into a `waveforms.io.trend_log.TrendLog`.

A trend log holds no waveform samples: `read_capture` refuses it (the CSV and
Parquet importers refuse its RMS columns, and the registry's reader for the
``trend`` format, `refuse_as_capture`, says it is a trend log), each time with a
pointer to the trend analysis, which `analyze` and `batch` run on it by themselves.
"""

from __future__ import annotations

import datetime as _dt
import re
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import CaptureReadError
from .common import one_line
from .spellings import recognise_rms, split_unit

TEXT_EXTENSIONS = (".csv", ".txt", ".tsv")
PARQUET_EXTENSIONS = (".parquet", ".pq")
_TIME_NAMES = {"TIME", "TIMESTAMP", "DATETIME", "DATE TIME", "DATE/TIME", "T", "UTC", "LOCAL TIME", "TIME UTC", "TIME S", "T S"}
#: Optional columns: normalised name -> (canonical name, unit scale to the canonical unit) per written unit.
_POWER = {
    "P": "P_kW", "P TOTAL": "P_kW", "PTOT": "P_kW", "ACTIVE POWER": "P_kW", "KW": "P_kW", "P KW": "P_kW", "P W": "P_kW",
    "Q": "Q_kvar", "Q TOTAL": "Q_kvar", "QTOT": "Q_kvar", "REACTIVE POWER": "Q_kvar", "KVAR": "Q_kvar", "Q KVAR": "Q_kvar",
    "Q VAR": "Q_kvar", "PF": "PF", "POWER FACTOR": "PF", "PF TOTAL": "PF", "F": "frequency_hz", "FREQ": "frequency_hz",
    "FREQUENCY": "frequency_hz", "HZ": "frequency_hz", "F HZ": "frequency_hz", "FREQUENCY HZ": "frequency_hz",
}
_UNIT_SCALE = {"P_kW": {"W": 1e-3, "KW": 1.0, "MW": 1e3}, "Q_kvar": {"VAR": 1e-3, "KVAR": 1.0, "MVAR": 1e3}}


def _norm(h: str) -> str:
    return " ".join(t for t in re.split(r"[\s_\-\.]+", h.strip().upper()) if t)


def _unit_factor(unit: str | None) -> float:
    if not unit:
        return 1.0
    u = re.sub(r"(?i)t?rms", "", unit.strip())
    return {"k": 1e3, "m": 1e-3, "M": 1e6}.get(u[:1], 1.0) if len(u) > 1 else 1.0


def map_columns(headers: list[str]) -> tuple[str | None, dict[str, tuple[str, float]]]:
    """The time header and canonical name -> (header, scale) of the columns a trend log holds.

    Examples
    --------
    >>> t, cols = map_columns(["Time", "V1 RMS", "V2 RMS", "V3 RMS", "Irms L1", "Irms L2", "Irms L3", "P [kW]"])
    >>> t, sorted(cols)
    ('Time', ['Ia_rms', 'Ib_rms', 'Ic_rms', 'P_kW', 'Va_rms', 'Vb_rms', 'Vc_rms'])
    """
    time_col = None
    cols: dict[str, tuple[str, float]] = {}
    for h in headers:
        name, unit = split_unit(str(h))
        n = _norm(name)
        if time_col is None and (n in _TIME_NAMES or n.startswith("TIME")):
            time_col = h
            continue
        rec = recognise_rms(str(h))
        if rec is not None:
            key = f"{rec.label}_rms"
            if key not in cols:
                cols[key] = (h, _unit_factor(rec.unit))
            continue
        full = _norm(str(h).replace("[", " ").replace("]", " ").replace("(", " ").replace(")", " "))
        canon = _POWER.get(n) or _POWER.get(full)
        if canon is not None and canon not in cols:
            u = (unit or "").strip().upper() or ("KW" if "KW" in full else "KVAR" if "KVAR" in full else "W" if full.endswith(" W") else
                                                "VAR" if full.endswith(" VAR") else "")
            scale = _UNIT_SCALE.get(canon, {}).get(u, 1.0)
            cols[canon] = (h, scale)
    return time_col, cols


def is_trend_header(headers: list[str]) -> bool:
    """A time column, the three RMS line currents or the three RMS voltages (LN or LL), and no waveform channel.

    A file that also holds instantaneous channels (``Va``, ``Ia``) is a waveform capture
    with extra derived columns, not a trend log.
    """
    from .spellings import recognise

    t, cols = map_columns(headers)
    if t is None:
        return False
    if any(recognise(str(h)) is not None and recognise_rms(str(h)) is None for h in headers if h != t):
        return False
    sets = (("Ia_rms", "Ib_rms", "Ic_rms"), ("Va_rms", "Vb_rms", "Vc_rms"), ("Vab_rms", "Vbc_rms", "Vca_rms"))
    return any(all(c in cols for c in s) for s in sets)


def _text_header(path: Path) -> list[str]:
    with open(path, "rb") as fh:
        head = fh.read(65536).decode("utf-8-sig", errors="replace")
    for line in head.splitlines():
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        delim = max((",", ";", "\t"), key=line.count)
        return [c.strip().strip('"') for c in line.split(delim)]
    return []


def headers_of(path: str | Path) -> list[str]:
    """The column names of a CSV (first non-comment line) or Parquet file ([] when unreadable)."""
    p = Path(path)
    try:
        if p.suffix.lower() in PARQUET_EXTENSIONS:
            import pyarrow.parquet as pq

            return list(pq.read_schema(p).names)
        if p.suffix.lower() in TEXT_EXTENSIONS:
            return _text_header(p)
    except Exception:  # a sniffer never raises: unreadable means "not a trend log"
        return []
    return []


def sniff_trend(path: Path) -> bool:
    """True for a CSV or Parquet file whose header is a trend log's (`is_trend_header`)."""
    return is_trend_header(headers_of(path))


def is_trend_log(path: str | Path) -> bool:
    """Whether ``path`` is an RMS trend log (recognised by its columns), for `analyze` and `batch`."""
    p = Path(path)
    return p.is_file() and p.suffix.lower() in TEXT_EXTENSIONS + PARQUET_EXTENSIONS and sniff_trend(p)


def refuse_as_capture(path: Path, options: Any = None) -> Any:
    """The registry's reader for the ``trend`` format: a trend log is not a waveform capture."""
    raise CaptureReadError(path, "columns", "an RMS trend log (per-phase RMS values, no waveform samples); the trend "
                           "analysis reads it: `motor-waveforms analyze` / `batch` recognise it by its columns "
                           "(recipe 'trend', docs/trends.md)")


def _times(values: Any, path: Path, header: str) -> tuple[_dt.datetime, np.ndarray, list[str]]:
    """Start time and seconds from it, from a time column (ISO clock times or seconds)."""
    import pandas as pd

    notes: list[str] = []
    num = pd.to_numeric(pd.Series(values), errors="coerce")
    if num.notna().all():
        t = num.to_numpy(float)
        notes.append(f"time column {header!r} holds seconds, no clock time: the log is placed at 1970-01-01T00:00Z + those seconds")
        return _dt.datetime(1970, 1, 1, tzinfo=_dt.timezone.utc) + _dt.timedelta(seconds=float(t[0])), t - t[0], notes
    try:
        ts = pd.to_datetime(pd.Series(values).astype(str), format="ISO8601")
    except (ValueError, TypeError) as e:
        raise CaptureReadError(path, f"column {header!r}", f"not clock times (ISO 8601) nor seconds ({one_line(str(e))})") from None
    if ts.isna().any():
        bad = int(np.flatnonzero(ts.isna().to_numpy())[0])
        raise CaptureReadError(path, f"column {header!r} row {bad + 1}", "time missing or unreadable")
    first = str(pd.Series(values).iloc[0])
    if ts.dt.tz is None:
        notes.append(f"time column {header!r} has no UTC offset: taken as UTC")
        ts = ts.dt.tz_localize("UTC")
        start = ts.iloc[0].to_pydatetime()
    else:
        start = _dt.datetime.fromisoformat(first.replace("Z", "+00:00")) if "T" in first else ts.iloc[0].to_pydatetime()
    t = (ts - ts.iloc[0]).dt.total_seconds().to_numpy(float)
    return start, t, notes


def read_trend(path: str | Path, options: Any = None) -> Any:
    """Read an RMS trend log (CSV or Parquet) into a `waveforms.io.trend_log.TrendLog`.

    Raises
    ------
    CaptureReadError
        Naming the file and the column or row: no time column, no RMS columns, times
        not increasing, non-numeric values.
    """
    import pandas as pd

    from ..capture import Provenance
    from ..hashing import sha256_file
    from .trend_log import TrendLog

    p = Path(path)
    if not p.is_file():
        raise CaptureReadError(p, "", "file not found")
    try:
        if p.suffix.lower() in PARQUET_EXTENSIONS:
            raw = pd.read_parquet(p)
        else:
            headers = _text_header(p)
            delim = ","
            with open(p, encoding="utf-8-sig", errors="replace") as fh:
                for line in fh:
                    if line.strip() and not line.lstrip().startswith("#"):
                        delim = max((",", ";", "\t"), key=line.count)
                        break
            raw = pd.read_csv(p, sep=delim, comment="#", skipinitialspace=True)
            raw.columns = headers[: len(raw.columns)] if len(headers) >= len(raw.columns) else raw.columns
    except (OSError, ValueError) as e:
        raise CaptureReadError(p, "", f"cannot be read as a table ({one_line(str(e))})") from None
    time_col, cols = map_columns([str(c) for c in raw.columns])
    if time_col is None:
        raise CaptureReadError(p, "header", "no time column (Time, Timestamp, DateTime, t [s])")
    if not is_trend_header([str(c) for c in raw.columns]):
        raise CaptureReadError(p, "header", "no three per-phase RMS currents or voltages (Ia_rms..., V1 RMS..., Irms L1...)")
    if len(raw) < 2:
        raise CaptureReadError(p, "rows", f"{len(raw)} row(s): a trend log needs at least two")
    start, t, notes = _times(raw[time_col].to_numpy(), p, str(time_col))
    steps = np.diff(t)
    if not (steps > 0).all():
        bad = int(np.flatnonzero(steps <= 0)[0])
        raise CaptureReadError(p, f"column {time_col!r} row {bad + 2}", "times must increase from row to row")
    table = {"t_s": t}
    colmap = {}
    for canon, (h, scale) in cols.items():
        v = pd.to_numeric(raw[h], errors="coerce")
        bad = v.isna() & raw[h].notna()
        if bad.any():
            k = int(np.flatnonzero(bad.to_numpy())[0])
            raise CaptureReadError(p, f"column {h!r} row {k + 1}", f"{raw[h].iloc[k]!r} is not a number")
        table[canon] = v.to_numpy(float) * scale
        colmap[canon] = str(h)
    res = float(np.median(steps))
    if steps.max() > 1.5 * res:
        k = int(np.argmax(steps))
        notes.append(f"the log has gaps: longest {steps.max():.3g} s after row {k + 1} (interval {res:.3g} s)")
    prov = Provenance(source_path=str(p), sha256=sha256_file(p), importer="trend")
    vnom = getattr(options, "nominal_voltage_v", None) if options is not None else None
    fnom = getattr(options, "nominal_frequency_hz", None) if options is not None else None
    return TrendLog(table=pd.DataFrame(table), start_time=start, resolution_s=res, provenance=prov, columns=colmap,
                    notes=notes, nominal_voltage_v=vnom, nominal_frequency_hz=fnom)
