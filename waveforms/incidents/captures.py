"""The spans of the analysed captures (start, end, site) and their events, as the incident join reads them."""

from __future__ import annotations

import datetime as _dt
import json
import re
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InvalidParameterError


def site_of(name: str, folder_site: str, pattern: re.Pattern[str] | None) -> str:
    """The site a capture belongs to: the ``site_from`` pattern's match on the file name, else its folder site.

    The pattern's group named ``site`` is taken, else its first group, else the whole match;
    a name the pattern does not match keeps the folder site.

    Examples
    --------
    >>> site_of("north/pump7_2026-05-14T2210.h5", "north", re.compile(r"^(?:.*/)?([a-z]+\\d+)_"))
    'pump7'
    >>> site_of("notes.h5", "north", re.compile(r"pump\\d+"))
    'north'
    """
    if pattern is None:
        return folder_site
    m = pattern.search(name)
    if m is None:
        return folder_site
    if "site" in pattern.groupindex and m.group("site"):
        return m.group("site")
    return m.group(1) if pattern.groups and m.group(1) else m.group(0)


def compile_site_pattern(site_from: str | None) -> re.Pattern[str] | None:
    """The ``site_from`` regular expression, compiled (a clear error for a bad one)."""
    if not site_from:
        return None
    try:
        return re.compile(site_from)
    except re.error as e:
        raise InvalidParameterError(f"site_from={site_from!r} is not a regular expression ({e})") from None


def capture_spans(summary: pd.DataFrame, site_from: str | None = None) -> pd.DataFrame:
    """One row per analysed capture: ``file``, ``site``, ``start``, ``end`` (timezone-aware datetimes, the
    capture's own UTC offset), ``duration_s``.

    Captures with an error row or without a start time are left out (they cover no time).
    Rows are ordered by site, then start time.
    """
    pattern = compile_site_pattern(site_from)
    ok = summary[(summary["status"] == "ok") & (summary["start"].astype(str) != "")]
    rows = []
    for f, s, st, d in zip(ok["file"], ok["site"], ok["start"], ok["duration_s"], strict=True):
        start = _dt.datetime.fromisoformat(str(st))
        dur = float(d) if d is not None and np.isfinite(float(d)) else 0.0
        rows.append({"file": str(f), "site": site_of(str(f), str(s), pattern), "start": start,
                     "end": start + _dt.timedelta(seconds=dur), "duration_s": dur})
    out = pd.DataFrame.from_records(rows, columns=["file", "site", "start", "end", "duration_s"])
    if not len(out):
        return out
    out["_utc"] = [x.timestamp() for x in out["start"]]
    return out.sort_values(["site", "_utc", "file"], kind="stable").drop(columns="_utc").reset_index(drop=True)


def event_figures(cell: Any) -> dict[str, Any]:
    """An event's supporting figures from its ``figures_json`` cell (``{}`` when absent)."""
    if isinstance(cell, dict):
        return cell
    if not isinstance(cell, str) or not cell:
        return {}
    try:
        out = json.loads(cell)
    except ValueError:
        return {}
    return out if isinstance(out, dict) else {}
