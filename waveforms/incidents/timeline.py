"""Per-site timeline figures for ``index.html``: files as bars, gaps left as gaps, incidents on top.

Each figure is a small inline SVG (no script, no outside resource, so the
page's Content-Security-Policy still holds): one row of grey bars for the
captures of the site on a common clock axis (the time between files is blank),
and above it one row per incident kind with a bar from first onset to last
seen.  A bar's tooltip (``<title>``) names the file or the incident.  Every
text is escaped with `html.escape`.
"""

from __future__ import annotations

import datetime as _dt
import html
from typing import Any

import pandas as pd
from markupsafe import Markup

from .captures import capture_spans
from .join import INCIDENT_KINDS

#: Bar colours per incident kind (our own plain choice; colour-blind-safe palette tones).
COLOURS = {"open_phase": "#d55e00", "stall": "#cc79a7", "unbalance": "#e69f00", "failed_starts": "#0072b2"}
LABELS = {"open_phase": "open phase", "stall": "stall", "unbalance": "unbalance", "failed_starts": "failed starts"}
WIDTH, LEFT, RIGHT, ROW = 900, 110, 20, 22


def _e(x: Any) -> str:
    return html.escape(str(x), quote=True)


def _svg(site: str, spans: pd.DataFrame, incidents: pd.DataFrame) -> str:
    t0 = min(spans["start"]).timestamp()
    t1 = max(spans["end"]).timestamp()
    span = max(t1 - t0, 1e-6)
    plot_w = WIDTH - LEFT - RIGHT

    def x(t: float) -> float:
        return LEFT + plot_w * (t - t0) / span

    kinds = [k for k in INCIDENT_KINDS if k in set(incidents["kind"])]
    height = ROW * (len(kinds) + 1) + 34
    y_files = ROW * len(kinds) + 6
    parts = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{WIDTH}" height="{height}" role="img" '
             f'aria-label="{_e("timeline of " + site)}" font-size="11" font-family="DejaVu Sans,Verdana,sans-serif">']
    for j, k in enumerate(kinds):
        y = ROW * j + 6
        parts.append(f'<text x="4" y="{y + 13}">{_e(LABELS[k])}</text>')
        for r in incidents[incidents["kind"] == k].itertuples(index=False):
            a = x(_dt.datetime.fromisoformat(r.first_onset).timestamp())
            b = x(_dt.datetime.fromisoformat(r.last_seen).timestamp())
            tip = (f"{LABELS[k]}{' line ' + r.line if r.line else ''}: {r.first_onset} to {r.last_seen}, "
                   f"{r.duration_s:.1f} s over {r.files_spanned} file(s), {r.gap_not_covered_s:.1f} s not covered"
                   + (f"; {r.note}" if r.note else ""))
            parts.append(f'<rect x="{a:.1f}" y="{y}" width="{max(b - a, 2.0):.1f}" height="{ROW - 6}" fill="{COLOURS[k]}">'
                         f'<title>{_e(tip)}</title></rect>')
            if r.open_when_recording_began:
                parts.append(f'<text x="{a + 3:.1f}" y="{y + 12}" fill="#fff">{_e("already open when recording began" if k == "open_phase" else "present when recording began")}</text>')
    parts.append(f'<text x="4" y="{y_files + 13}">files</text>')
    for r in spans.itertuples(index=False):
        a, b = x(r.start.timestamp()), x(r.end.timestamp())
        parts.append(f'<rect x="{a:.1f}" y="{y_files}" width="{max(b - a, 1.0):.1f}" height="{ROW - 6}" fill="#8c8c8c">'
                     f'<title>{_e(f"{r.file}: {r.start.isoformat()} to {r.end.isoformat()}")}</title></rect>')
    ya = y_files + ROW + 8
    parts.append(f'<text x="{LEFT}" y="{ya}">{_e(min(spans["start"]).isoformat(timespec="seconds"))}</text>')
    parts.append(f'<text x="{WIDTH - RIGHT}" y="{ya}" text-anchor="end">{_e(max(spans["end"]).isoformat(timespec="seconds"))}</text>')
    parts.append("</svg>")
    return "".join(parts)


def site_timelines(summary: pd.DataFrame, incidents: pd.DataFrame, site_from: str | None = None,
                   max_sites: int = 200) -> list[dict[str, Any]]:
    """One ``{"site", "svg", "n_files", "n_incidents", "began_open"}`` per site, for the index page.

    ``began_open`` lists the incidents already present when the site's recording began
    (the first file starts with them and has no predecessor).  At most ``max_sites``
    sites are drawn (the page stays small); the rest are in incidents.csv.
    """
    spans = capture_spans(summary, site_from)
    out = []
    for site, sp in spans.groupby("site", sort=True):
        if len(out) >= max_sites:
            break
        inc = incidents[incidents["site"] == site] if len(incidents) else incidents
        began = [f"{LABELS[r.kind]}{' line ' + r.line if r.line else ''} in {r.first_file}: "
                 + ("already open when recording began" if r.kind == "open_phase" else "already present when recording began")
                 for r in inc.itertuples(index=False) if r.open_when_recording_began]
        out.append({"site": site, "svg": Markup(_svg(str(site), sp.reset_index(drop=True), inc)), "n_files": len(sp),
                    "n_incidents": len(inc), "began_open": began})
    return out
