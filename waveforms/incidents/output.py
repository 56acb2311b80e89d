"""``incidents.csv`` and ``incidents.parquet``, written atomically beside the batch summary."""

from __future__ import annotations

import io
import os
from pathlib import Path

import pandas as pd

from ..atomic import atomic_path, write_text

INCIDENT_FILES = ("incidents.csv", "incidents.parquet")


def write_incidents(frame: pd.DataFrame, out_dir: str | os.PathLike[str]) -> dict[str, Path]:
    """Write the incidents table as CSV and Parquet into ``out_dir`` (each file atomically)."""
    from ..summary import _csv_safe  # the summary's guard against spreadsheet formulas in text cells

    out = Path(out_dir)
    paths = {"incidents_csv": out / INCIDENT_FILES[0], "incidents_parquet": out / INCIDENT_FILES[1]}
    buf = io.StringIO()
    _csv_safe(frame).to_csv(buf, index=False)
    write_text(paths["incidents_csv"], buf.getvalue())
    with atomic_path(paths["incidents_parquet"]) as tmp:
        frame.to_parquet(tmp, index=False)
    return paths


CARRY_FILES = ("thermal_carry.csv", "thermal_carry.parquet")


def write_thermal_carry(frame: pd.DataFrame, out_dir: str | os.PathLike[str]) -> dict[str, Path]:
    """Write the carried thermal states (`waveforms.incidents.carry_thermal`) as CSV and Parquet, each atomically."""
    from ..summary import _csv_safe

    out = Path(out_dir)
    paths = {"thermal_carry_csv": out / CARRY_FILES[0], "thermal_carry_parquet": out / CARRY_FILES[1]}
    buf = io.StringIO()
    _csv_safe(frame).to_csv(buf, index=False)
    write_text(paths["thermal_carry_csv"], buf.getvalue())
    with atomic_path(paths["thermal_carry_parquet"]) as tmp:
        frame.to_parquet(tmp, index=False)
    return paths
