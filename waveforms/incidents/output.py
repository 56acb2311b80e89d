"""``incidents.csv`` and ``incidents.parquet``, written atomically beside the batch summary."""

from __future__ import annotations

import io
import os
from pathlib import Path

import pandas as pd

from ..atomic import atomic_path, write_text

INCIDENT_FILES = ("incidents.csv", "incidents.parquet")


def write_table_pair(frame: pd.DataFrame, out_dir: str | os.PathLike[str], names: tuple[str, str], key: str) -> dict[str, Path]:
    """Write ``frame`` as CSV and Parquet into ``out_dir`` (each file atomically); keys ``KEY_csv``, ``KEY_parquet``.

    The CSV's text cells are guarded against spreadsheet formulas (`waveforms.summary`); the Parquet keeps them raw
    (typed data, docs/batch.md).
    """
    from ..summary import _csv_safe

    out = Path(out_dir)
    paths = {f"{key}_csv": out / names[0], f"{key}_parquet": out / names[1]}
    buf = io.StringIO()
    _csv_safe(frame).to_csv(buf, index=False)
    write_text(paths[f"{key}_csv"], buf.getvalue())
    with atomic_path(paths[f"{key}_parquet"]) as tmp:
        frame.to_parquet(tmp, index=False)
    return paths


def write_incidents(frame: pd.DataFrame, out_dir: str | os.PathLike[str]) -> dict[str, Path]:
    """Write the incidents table as CSV and Parquet into ``out_dir`` (each file atomically)."""
    return write_table_pair(frame, out_dir, INCIDENT_FILES, "incidents")


CARRY_FILES = ("thermal_carry.csv", "thermal_carry.parquet")


def write_thermal_carry(frame: pd.DataFrame, out_dir: str | os.PathLike[str]) -> dict[str, Path]:
    """Write the carried thermal states (`waveforms.incidents.carry_thermal`) as CSV and Parquet, each atomically."""
    return write_table_pair(frame, out_dir, CARRY_FILES, "thermal_carry")
