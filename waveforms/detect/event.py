"""The `Event`: one thing that happened in a capture, with the figures behind it; the events table.

`EVENT_COLUMNS` is the one schema of the events table: ``events.csv``
(`waveforms.report.events_csv`), the batch run's events table and
`waveforms.recipe.RunState.events_frame` all write these columns, row by row
through `event_row`.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import json
import math
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InvalidParameterError

#: The kinds of event, in the trade's terms.
EVENT_KINDS: tuple[str, ...] = ("open_phase", "stall", "start", "dip", "swell", "interruption", "unbalance")


@dataclasses.dataclass(frozen=True)
class Event:
    """An event found in a capture.

    Parameters
    ----------
    kind : str
        One of `EVENT_KINDS`.
    phase : {"A", "B", "C"} or None
        The line concerned, for line-specific events.
    start_s : float
        Start, seconds from the capture start [s].
    end_s : float or None
        End [s]; None when still present at the end of the capture.
    summary : str
        One line in plain words.
    figures : dict
        The supporting figures (plain JSON-able values, units in the keys).
    detector : str
        Registry name of the detector that found it.

    Examples
    --------
    >>> e = Event("open_phase", "B", 12.35, None, "Line B lost", {"i_ratio_pct": 3.1})
    >>> e.duration_s is None, e.overlaps(20.0, 30.0)
    (True, True)
    """

    kind: str
    phase: str | None
    start_s: float
    end_s: float | None
    summary: str = ""
    figures: dict[str, Any] = dataclasses.field(default_factory=dict)
    detector: str = ""

    def __post_init__(self) -> None:
        if self.kind not in EVENT_KINDS:
            raise InvalidParameterError(f"event kind={self.kind!r} must be one of {EVENT_KINDS}")
        if self.phase not in (None, "A", "B", "C"):
            raise InvalidParameterError(f"event phase={self.phase!r} must be 'A', 'B', 'C' or None")

    @property
    def duration_s(self) -> float | None:
        return None if self.end_s is None else self.end_s - self.start_s

    def overlaps(self, start_s: float, end_s: float | None) -> bool:
        """True when [start_s, end_s] meets this event's span (None = open end)."""
        my_end = math.inf if self.end_s is None else self.end_s
        other_end = math.inf if end_s is None else end_s
        return self.start_s <= other_end and start_s <= my_end

    def to_dict(self) -> dict[str, Any]:
        return {
            "kind": self.kind, "phase": self.phase, "start_s": self.start_s, "end_s": self.end_s,
            "duration_s": self.duration_s, "summary": self.summary, "detector": self.detector,
            "figures": plain(self.figures),
        }


def plain(x: Any) -> Any:
    """Numpy scalars -> Python, NaN/inf -> None, recursively (JSON-safe).

    Examples
    --------
    >>> import numpy as np
    >>> plain({"n": np.int64(3), "x": np.float64(np.nan), "ok": np.bool_(True), "v": [np.float32(1.5)]})
    {'n': 3, 'x': None, 'ok': True, 'v': [1.5]}
    """
    if isinstance(x, dict):
        return {str(k): plain(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [plain(v) for v in x]
    if isinstance(x, (np.bool_, bool)):
        return bool(x)
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (float, np.floating)):
        v = float(x)
        return v if math.isfinite(v) else None
    return x


def iso_at(start: _dt.datetime, t_s: float | None) -> str | None:
    """``start + t_s`` as ISO 8601 with microseconds and UTC offset (None for None).

    Examples
    --------
    >>> import datetime as dt
    >>> iso_at(dt.datetime(2026, 3, 1, 6, 0, tzinfo=dt.timezone.utc), 12.5)
    '2026-03-01T06:00:12.500000+00:00'
    """
    if t_s is None or not math.isfinite(t_s):
        return None
    return (start + _dt.timedelta(seconds=float(t_s))).isoformat(timespec="microseconds")


#: Columns of the events table (events.csv, the batch events table, `events_frame`), in order.
EVENT_COLUMNS: tuple[str, ...] = (
    "kind", "phase", "start_s", "end_s", "duration_s", "start_time", "end_time", "summary", "detector", "figures_json",
)


def event_row(event: Event | Mapping[str, Any], start_time: _dt.datetime | None = None) -> dict[str, Any]:
    """One row of the events table (`EVENT_COLUMNS`) from an `Event` or a result.json event.

    ``start_time`` (the capture's start) gives the clock times ``start_time`` /
    ``end_time``; a result.json event carries them already; otherwise they are None.
    The supporting figures are one JSON cell, keys sorted.

    Examples
    --------
    >>> import datetime as dt
    >>> row = event_row(Event("stall", None, 2.0, 6.2, "locked rotor", {"i_x_fla": 6.2}),
    ...                 dt.datetime(2026, 3, 1, tzinfo=dt.timezone.utc))
    >>> row["end_time"], row["figures_json"]
    ('2026-03-01T00:00:06.200000+00:00', '{"i_x_fla": 6.2}')
    """
    d = dict(event) if isinstance(event, Mapping) else event.to_dict()
    if start_time is not None and "start_time" not in d:
        d["start_time"] = iso_at(start_time, d.get("start_s"))
        d["end_time"] = iso_at(start_time, d.get("end_s"))
    row = {c: d.get(c) for c in EVENT_COLUMNS[:-1]}
    row["figures_json"] = json.dumps(plain(d.get("figures", {})), sort_keys=True, ensure_ascii=False)
    return row


def events_frame(events: Iterable[Event | Mapping[str, Any]], start_time: _dt.datetime | None = None) -> pd.DataFrame:
    """The events table: one row per event, columns `EVENT_COLUMNS` (times in seconds as floats, NaN = open end).

    Examples
    --------
    >>> f = events_frame([Event("dip", "A", 1.0, 1.2, "dip"), Event("open_phase", "C", 3.0, None, "open")])
    >>> f[["kind", "phase", "start_s", "end_s"]].to_dict("list")
    {'kind': ['dip', 'open_phase'], 'phase': ['A', 'C'], 'start_s': [1.0, 3.0], 'end_s': [1.2, nan]}
    """
    frame = pd.DataFrame([event_row(e, start_time) for e in events], columns=list(EVENT_COLUMNS))
    for c in ("start_s", "end_s", "duration_s"):
        frame[c] = pd.to_numeric(frame[c], errors="coerce").astype(float)
    return frame
