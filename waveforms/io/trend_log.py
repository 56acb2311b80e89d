"""The `TrendLog`: an RMS trend log as read from a file (one row per interval, per-phase RMS values; `waveforms.io.trend`)."""

from __future__ import annotations

import dataclasses
import datetime as _dt
from typing import Any

import numpy as np
import pandas as pd

from ..capture import Provenance

#: Canonical column names of a trend log's table, as the trend analysis reads them.
VOLTAGE_LN = ("Va_rms", "Vb_rms", "Vc_rms")
VOLTAGE_LL = ("Vab_rms", "Vbc_rms", "Vca_rms")
CURRENTS = ("Ia_rms", "Ib_rms", "Ic_rms")
OPTIONAL = ("In_rms", "P_kW", "Q_kvar", "PF", "frequency_hz")


@dataclasses.dataclass(eq=False)
class TrendLog:
    """An RMS trend log.

    Attributes
    ----------
    table : DataFrame
        ``t_s`` (seconds from `start_time`, at each interval's start) and the canonical
        columns present (`VOLTAGE_LN` or `VOLTAGE_LL`, `CURRENTS`, `OPTIONAL`), in V, A, kW, kvar, Hz.
    start_time : datetime
        Clock time of the first row (timezone-aware).
    resolution_s : float
        The log interval: the median time step [s].  Every time the trend analysis
        states is good to this much, never to the sample.
    provenance : Provenance
        Source path, SHA-256, importer ("trend").
    columns : dict
        Canonical name -> the header it was read from.
    notes : list of str
        What the importer assumed (time zone, units).
    nominal_voltage_v : float or None
        Declared line-to-line voltage [V], when given.
    nameplate : Nameplate or None
    """

    table: pd.DataFrame
    start_time: _dt.datetime
    resolution_s: float
    provenance: Provenance
    columns: dict[str, str]
    notes: list[str] = dataclasses.field(default_factory=list)
    nominal_voltage_v: float | None = None
    nominal_frequency_hz: float | None = None
    nameplate: Any = None

    @property
    def n_rows(self) -> int:
        return len(self.table)

    @property
    def t_s(self) -> np.ndarray:
        return self.table["t_s"].to_numpy(float)

    @property
    def duration_s(self) -> float:
        """From the first row's start to the last row's end [s]."""
        t = self.t_s
        return float(t[-1] - t[0] + self.resolution_s) if t.size else 0.0

    @property
    def end_time(self) -> _dt.datetime:
        return self.start_time + _dt.timedelta(seconds=self.duration_s)

    @property
    def voltage_columns(self) -> tuple[str, ...]:
        for cols in (VOLTAGE_LN, VOLTAGE_LL):
            if all(c in self.table for c in cols):
                return cols
        return ()

    @property
    def current_columns(self) -> tuple[str, ...]:
        return CURRENTS if all(c in self.table for c in CURRENTS) else ()

    def replace(self, **changes: Any) -> TrendLog:
        return dataclasses.replace(self, **changes)
