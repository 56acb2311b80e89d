"""The `Event`: one thing that happened in a capture, with the figures behind it."""

from __future__ import annotations

import dataclasses
import math
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
    """Numpy scalars -> Python, NaN/inf -> None, recursively (JSON-safe)."""
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


def events_frame(events: list[Event]) -> pd.DataFrame:
    """One row per event: kind, phase, start_s, end_s, duration_s, summary, detector."""
    cols = ["kind", "phase", "start_s", "end_s", "duration_s", "summary", "detector"]
    rows = [{k: e.to_dict()[k] for k in cols} for e in events]
    return pd.DataFrame(rows, columns=cols)
