"""``index.html`` of a batch output folder: the summary as one self-contained, sortable page.

Rendered with jinja2 from ``waveforms/report/templates/archive_index.html.j2``
(beside the single-capture report's templates), autoescaping on: every file
name, site, verdict and error text is escaped (with `html.escape`, quotes
included); links are URL-quoted relative paths.  The page's one script,
``archive_index.js``, sorts on a header click (numbers numerically, blanks
last) and filters by verdict and text; the Content-Security-Policy allows that
script alone (by its SHA-256) and nothing from outside.  The page address may
carry a view: ``index.html#sort=-max_current_x_fla&verdict=open%20phase``.
"""

from __future__ import annotations

import base64
import functools
import hashlib
import html
import math
import urllib.parse
from pathlib import Path
from typing import Any

import jinja2
import pandas as pd
from markupsafe import Markup

from ..summary import EVENT_COUNT_COLUMNS, FLOAT_COLUMNS, INT_COLUMNS

TEMPLATES = Path(__file__).resolve().parent.parent / "report" / "templates"
TEMPLATE = "archive_index.html.j2"
SCRIPT = "archive_index.js"

#: Summary columns shown, in order.
SHOWN = ["file", "site", "verdict", "start", "duration_s", "max_current_x_fla", "worst_i2_i1_pct",
         "thermal_capacity_used_pct"] + list(EVENT_COUNT_COLUMNS) + ["nameplate", "error"]

#: Column headings shown above the machine names (the names stay as in summary.csv).
LABELS = {
    "duration_s": "duration [s]", "max_current_x_fla": "max current / FLA", "worst_i2_i1_pct": "worst I2/I1 [%]",
    "thermal_capacity_used_pct": "thermal capacity used [%]", "start": "start (local)",
}


def _escape(value: Any) -> Markup:
    # html.escape (quotes as &quot; / &#x27;), the page's escaping since the first version
    return value if isinstance(value, Markup) else Markup(html.escape(str(value)))


@functools.cache
def _environment() -> jinja2.Environment:
    return jinja2.Environment(loader=jinja2.FileSystemLoader(TEMPLATES), autoescape=True, finalize=_escape,
                              undefined=jinja2.StrictUndefined, keep_trailing_newline=True)


@functools.cache
def _script() -> tuple[str, str]:
    """The page script and the Content-Security-Policy that allows it alone."""
    js = (TEMPLATES / SCRIPT).read_text(encoding="utf-8")
    digest = base64.b64encode(hashlib.sha256(js.encode()).digest()).decode()
    return js, f"default-src 'none'; style-src 'unsafe-inline'; img-src data:; script-src 'sha256-{digest}'"


def _fmt(value: Any, col: str) -> str:
    if value is None or value is pd.NA or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    if col in FLOAT_COLUMNS:
        return f"{float(value):.3f}" if col.endswith("_s") else f"{float(value):.2f}"
    return str(value)


def _cell(rec: dict[str, Any], c: str) -> dict[str, Any]:
    val = rec.get(c)
    shown = _fmt(val, c)
    num = c in FLOAT_COLUMNS or c in INT_COLUMNS
    href = None
    if c == "file" and rec.get("report"):
        href = urllib.parse.quote(str(rec["report"]), safe="/")
    return {"text": shown, "sort": shown if not num else ("" if shown == "" else repr(float(val))), "href": href,
            "css": "n" if num else {"verdict": "v", "start": "t"}.get(c, "")}


def index_html(frame: pd.DataFrame, title: str = "Capture summary", timelines: list[dict[str, Any]] | None = None) -> str:
    """A self-contained HTML table of the summary: sortable columns, a verdict filter, links to reports.

    ``timelines``: per-site timeline figures (`waveforms.incidents.site_timelines`), drawn below the table.
    """
    js, csp = _script()
    rows = [{"error": rec.get("status") == "error", "pending": rec.get("status") == "not analysed",
             "verdict": str(rec.get("verdict", "")),
             "cells": [_cell(rec, c) for c in SHOWN]} for rec in frame.to_dict("records")]
    headings = [{"name": c, "label": LABELS.get(c, c.replace("_", " "))} for c in SHOWN]
    return _environment().get_template(TEMPLATE).render(
        title=title, csp=Markup(csp), script=Markup(js), n_rows=len(frame),
        n_errors=int((frame["status"] == "error").sum()) if len(frame) else 0,
        n_pending=int((frame["status"] == "not analysed").sum()) if len(frame) else 0,
        verdicts=sorted({str(v) for v in frame["verdict"]}), headings=headings, rows=rows, timelines=timelines or [])
