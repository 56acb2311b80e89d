"""A small COMTRADE writer for the tests (IEEE C37.111-1999 / -2013 layout, written from the
standard's field lists as recalled: from memory).  Not part of the package.

Everything is invented: station and device names, values.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np


@dataclasses.dataclass
class Analog:
    ch_id: str
    ph: str
    unit: str
    a: float
    b: float = 0.0
    primary: float = 1.0
    secondary: float = 1.0
    ps: str = "P"
    ccbm: str = ""
    skew: float = 0.0


def write_comtrade(folder: Path, stem: str, analogs: list[Analog], raw: np.ndarray, rate_hz: float,
                   file_type: str = "ASCII", rev: str = "1999", n_digital: int = 0,
                   start: str = "01/03/2024,10:15:30.250000", trigger: str = "01/03/2024,10:15:30.350000",
                   lf: float = 50, time_code: str | None = None, timemult: float = 1.0,
                   stamps_us: np.ndarray | None = None, digital: np.ndarray | None = None,
                   nrates: int = 1, cff: bool = False) -> Path:
    """Write ``stem.cfg`` + ``stem.dat`` (or ``stem.cff``); ``raw`` is (n_analog, n) raw integers / floats.

    Returns the path of the .cfg (or .cff).
    """
    n = raw.shape[1]
    lines = [f"Invented substation,REC-{stem}" + ("" if rev == "1991" else f",{rev}"),
             f"{len(analogs) + n_digital},{len(analogs)}A,{n_digital}D"]
    for k, c in enumerate(analogs, 1):
        vals = raw[k - 1]
        fields = [k, c.ch_id, c.ph, c.ccbm, c.unit, repr(c.a), repr(c.b), c.skew, int(np.nanmin(vals)) if file_type != "FLOAT32" else -99999,
                  int(np.nanmax(vals)) if file_type != "FLOAT32" else 99999]
        if rev != "1991":
            fields += [c.primary, c.secondary, c.ps]
        lines.append(",".join(str(f) for f in fields))
    for k in range(1, n_digital + 1):
        lines.append(f"{k},DIG{k},,,0")
    lines.append(f"{lf:g}")
    if nrates == 0:
        lines += ["0", f"0,{n}"]
    else:
        lines += ["1", f"{rate_hz:g},{n}"]
    lines += [start, trigger, file_type]
    if rev != "1991":
        lines.append(f"{timemult:g}")
    if rev == "2013" and time_code is not None:
        lines += [f"{time_code},{time_code}", "0,0"]
    cfg_text = "\r\n".join(lines) + "\r\n"

    if stamps_us is None:
        stamps_us = np.rint(np.arange(n) * 1e6 / rate_hz / timemult).astype(np.int64)
    sample_no = np.arange(1, n + 1)
    words = -(-n_digital // 16)
    if digital is None:
        digital = np.zeros((max(words, 1), n), dtype=np.uint16)
    if file_type == "ASCII":
        cols = [sample_no.astype(str), np.asarray(stamps_us).astype(str)]
        for row in raw:
            if np.issubdtype(np.asarray(row).dtype, np.floating):
                cols.append(np.array([("" if np.isnan(v) else repr(float(v))) for v in row]))
            else:
                cols.append(np.asarray(row).astype(str))
        for k in range(n_digital):
            cols.append(((digital[k // 16] >> (k % 16)) & 1).astype(str))
        body = "\r\n".join(",".join(r) for r in zip(*cols, strict=True)) + "\r\n"
        dat = body.encode()
    else:
        adt = {"BINARY": "<i2", "BINARY32": "<i4", "FLOAT32": "<f4"}[file_type]
        fields = [("n", "<u4"), ("t", "<u4"), ("a", adt, (len(analogs),))]
        if words:
            fields.append(("d", "<u2", (words,)))
        rec = np.zeros(n, dtype=np.dtype(fields))
        rec["n"] = sample_no
        rec["t"] = np.asarray(stamps_us, dtype=np.int64).astype(np.uint32)
        rec["a"] = raw.T
        if words:
            rec["d"] = digital[:words].T
        dat = rec.tobytes()
    folder = Path(folder)
    if cff:
        kind = "ASCII" if file_type == "ASCII" else f"{file_type}: {len(dat)}"
        out = folder / f"{stem}.cff"
        out.write_bytes(b"--- file type: CFG ---\r\n" + cfg_text.encode() + b"--- file type: INF ---\r\n--- file type: HDR ---\r\n"
                        + f"--- file type: DAT {kind} ---\r\n".encode() + dat)
        return out
    (folder / f"{stem}.cfg").write_text(cfg_text, encoding="utf-8", newline="")
    (folder / f"{stem}.dat").write_bytes(dat)
    return folder / f"{stem}.cfg"


def capture_to_comtrade(capture, folder: Path, stem: str, file_type: str = "BINARY32") -> Path:
    """Write a `Capture` as COMTRADE with integer counts (a = full scale / 2**30 for BINARY32)."""
    values = capture.read()
    analogs, raw = [], []
    for ch, row in zip(capture.channels, values, strict=True):
        peak = float(np.nanmax(np.abs(row))) or 1.0
        bits = 30 if file_type == "BINARY32" else 14
        a = peak / 2**bits
        counts = np.rint(row / a)
        counts[np.isnan(row)] = -(2**31) if file_type == "BINARY32" else -(2**15)
        raw.append(counts.astype(np.int64))
        ph = ch.conductor if ch.reference != "LL" else {"A": "AB", "B": "BC", "C": "CA"}[ch.conductor]
        analogs.append(Analog(ch_id=ch.name.upper(), ph=ph, unit=ch.unit, a=a))
    t0 = capture.start_time.astimezone(__import__("datetime").timezone.utc)
    start = t0.strftime("%d/%m/%Y,%H:%M:%S.%f")
    return write_comtrade(folder, stem, analogs, np.vstack(raw), capture.sample_rate_hz, file_type=file_type,
                          rev="2013", start=start, trigger=start, lf=capture.nominal_frequency_hz or 0, time_code="0")
