"""``events.csv``: the events of result.json, one a row."""

from __future__ import annotations

import csv
import io
import json
from typing import Any

#: Columns of events.csv, in order.
EVENT_CSV_COLUMNS: tuple[str, ...] = (
    "kind", "phase", "start_s", "end_s", "duration_s", "start_time", "end_time", "summary", "detector", "figures_json",
)


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
        row = [e.get(c) for c in EVENT_CSV_COLUMNS[:-1]] + [json.dumps(e.get("figures", {}), sort_keys=True, ensure_ascii=False)]
        w.writerow([_cell(v) for v in row])
    return buf.getvalue()
