"""Writing measurement tables to disk (an edge module: the only I/O in `waveforms.measure`).

`write_measurements` streams the engine's blocks straight into Parquet and
CSV files, so memory stays bounded however long the capture; every file is
written to a temporary name and renamed when complete (`waveforms.atomic`).
"""

from __future__ import annotations

import contextlib
import json
import os
from pathlib import Path
from typing import Any

import pandas as pd
import pyarrow as pa
import pyarrow.csv as pacsv
import pyarrow.parquet as pq

from ..atomic import atomic_path, write_text
from ..capture import Capture
from ..errors import InvalidParameterError, WriteError
from .engine import DEFAULT_CHUNK_SAMPLES, Columns, iter_blocks, prepare

TABLES = ("cycles", "half_cycles", "harmonics")
#: Parquet row groups are gathered up to about this many bytes: one row group per engine block
#: would make the file's metadata (kept in memory until the file is closed) grow with the capture.
ROW_GROUP_BYTES = 4 << 20


class _TableSink:
    """One table written as Parquet and/or CSV, block by block, into temporary files."""

    def __init__(self, parquet_tmp: Path | None, csv_tmp: Path | None) -> None:
        self.parquet_tmp, self.csv_tmp = parquet_tmp, csv_tmp
        self.writer: pq.ParquetWriter | None = None
        self.schema: pa.Schema | None = None
        self.csv_fh: Any = None
        self.rows = 0
        self.pending: list[pa.Table] = []
        self.pending_bytes = 0

    def add(self, cols: Columns) -> None:
        if not cols:
            return
        table = pa.table({k: pa.array(v) for k, v in cols.items()})  # float64 columns are not copied
        if self.schema is None:
            self.schema = table.schema
        table = table.cast(self.schema)
        if self.parquet_tmp is not None:
            self.pending.append(table)
            self.pending_bytes += table.nbytes
            if self.pending_bytes >= ROW_GROUP_BYTES:
                self._flush()
        if self.csv_tmp is not None:
            if self.csv_fh is None:
                self.csv_fh = pacsv.CSVWriter(str(self.csv_tmp), self.schema)
            self.csv_fh.write_table(table)
        self.rows += table.num_rows

    def _flush(self) -> None:
        if not self.pending:
            return
        if self.writer is None:
            self.writer = pq.ParquetWriter(self.parquet_tmp, self.schema, compression="lz4")
        self.writer.write_table(pa.concat_tables(self.pending))
        self.pending, self.pending_bytes = [], 0

    def close(self) -> None:
        if self.parquet_tmp is not None:
            self._flush()
        if self.writer is not None:
            self.writer.close()
        if self.csv_fh is not None:
            self.csv_fh.close()


def write_measurements(
    capture: Capture,
    out_dir: str | os.PathLike[str],
    stem: str | None = None,
    formats: tuple[str, ...] = ("parquet", "csv"),
    chunk_samples: int = DEFAULT_CHUNK_SAMPLES,
    nominal_frequency_hz: float | None = None,
    intervals: tuple[str, ...] = (),
    threads: int = 1,
) -> dict[str, Any]:
    """Measure a capture and write ``<stem>.<table>.parquet`` / ``.csv`` plus ``<stem>.measure.json``.

    Parameters
    ----------
    capture : Capture
    out_dir : path-like
        Folder for the outputs (created if needed).
    stem : str, optional
        File-name stem; default the capture file's stem (or ``"capture"``).
    formats : tuple of {"parquet", "csv"}
    chunk_samples : int
        Block size [samples] (memory bound).
    threads : int
        Blocks measured in parallel (`waveforms.measure.engine.iter_pass`); the tables do not depend on it.
    nominal_frequency_hz : float, optional
    intervals : tuple of {"basic", "3s", "10min"}
        Aggregations to write as ``<stem>.intervals_<kind>.<ext>`` (needs the
        cycle and half-cycle tables back in memory, read from the Parquet files).

    Returns
    -------
    dict
        What was written: paths, row counts, and the engine's info.

    Examples
    --------
    One second of a balanced 230 V, 10 A, 50 Hz capture, measured into a
    temporary folder as CSV:

    >>> import tempfile
    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> fs = 5000.0
    >>> t = np.arange(5000) / fs
    >>> ph = np.array([0.0, -2.0, 2.0]) * np.pi / 3
    >>> v = 230 * np.sqrt(2) * np.cos(2 * np.pi * 50 * t[None] + ph[:, None])
    >>> i = 10 * np.sqrt(2) * np.cos(2 * np.pi * 50 * t[None] + ph[:, None] - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), fs, nominal_frequency_hz=50.0)
    >>> with tempfile.TemporaryDirectory() as d:
    ...     written = write_measurements(cap, d, stem="demo", formats=("csv",))
    ...     names = sorted(p.rsplit("/", 1)[-1] for p in written["files"])
    >>> names
    ['demo.cycles.csv', 'demo.half_cycles.csv', 'demo.harmonics.csv', 'demo.measure.json']

    Cycles begin at positive-going zero crossings of the voltage reference
    (the first 15 ms in here), so the second holds 49 whole cycles:

    >>> written["rows"]["cycles"]
    49
    """
    bad = sorted(set(formats) - {"parquet", "csv"})
    if bad or not formats:
        raise InvalidParameterError(f"formats={formats!r}: choose from 'parquet', 'csv'")
    if intervals and "parquet" not in formats:
        raise InvalidParameterError("interval tables are computed from the Parquet output; include 'parquet' in formats")
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise WriteError(f"{out}: exists and is not a folder")
    src = capture.provenance.source_path
    stem = stem or (Path(src).stem if src else "capture")
    prepared = prepare(capture, nominal_frequency_hz)  # refuses a capture too short to measure before anything is made
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise WriteError(f"{out}: cannot create the output folder ({e.strerror or type(e).__name__})") from None
    written: dict[str, Any] = {"files": [], "rows": {}}
    with contextlib.ExitStack() as stack:
        sinks = {}
        for name in TABLES:
            tmp = {ext: stack.enter_context(atomic_path(out / f"{stem}.{name}.{ext}")) if ext in formats else None
                   for ext in ("parquet", "csv")}
            sinks[name] = _TableSink(tmp["parquet"], tmp["csv"])
            stack.callback(sinks[name].close)  # closed before the renames (LIFO)
        for blocks in iter_blocks(capture, chunk_samples, nominal_frequency_hz, prepared=prepared, threads=threads):
            for name, df in zip(TABLES, blocks, strict=True):
                sinks[name].add(df)
        for name in TABLES:
            written["rows"][name] = sinks[name].rows
            for ext in formats:
                tmp_path = sinks[name].parquet_tmp if ext == "parquet" else sinks[name].csv_tmp
                if sinks[name].rows == 0 and tmp_path is not None:
                    tmp_path.write_text("", encoding="utf-8")  # an empty table is an empty file, not a missing one
                written["files"].append(str(out / f"{stem}.{name}.{ext}"))
    info = prepared[2]
    if intervals and written["rows"]["cycles"]:
        from .aggregate import aggregate

        cyc = pd.read_parquet(out / f"{stem}.cycles.parquet")
        half = pd.read_parquet(out / f"{stem}.half_cycles.parquet")
        for kind in intervals:
            df = aggregate(cyc, half, kind, info)
            for ext in formats:
                target = out / f"{stem}.intervals_{kind}.{ext}"
                with atomic_path(target) as tmp:
                    if ext == "parquet":
                        df.to_parquet(tmp, index=False)
                    else:
                        df.to_csv(tmp, index=False)
                written["files"].append(str(target))
            written["rows"][f"intervals_{kind}"] = len(df)
    written["info"] = info
    meta = out / f"{stem}.measure.json"
    write_text(meta, json.dumps({"source": src, **written}, indent=2, default=str))
    written["files"].append(str(meta))
    return written
