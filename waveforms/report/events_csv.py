"""``events.csv``: the events of result.json, one a row."""

from __future__ import annotations

import csv
import io
from typing import Any

from ..detect.event import EVENT_COLUMNS, event_row

#: Columns of events.csv, in order: the one events-table schema (`waveforms.detect.event.EVENT_COLUMNS`).
EVENT_CSV_COLUMNS: tuple[str, ...] = EVENT_COLUMNS


def _cell(v: Any) -> Any:
    # a text cell a spreadsheet would read as a formula is prefixed with an apostrophe (common practice, no source)
    if isinstance(v, str) and v[:1] in ("=", "+", "@", "\t", "\r"):
        return "'" + v
    return "" if v is None else v


def events_csv(events: list[dict[str, Any]]) -> str:
    """CSV text of the result.json ``events`` list (figures as one JSON cell)."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(EVENT_CSV_COLUMNS)
    for e in events:
        row = event_row(e)
        w.writerow([_cell(row[c]) for c in EVENT_CSV_COLUMNS])
    return buf.getvalue()
