"""The trend log's outputs: result.json, events.csv and a small report.html (inline SVG, no script).

The page says plainly what a trend log cannot show (`waveforms.trends.detect.LIMITS`)
and carries the safety cautions; every text is escaped with `html.escape`.
"""

from __future__ import annotations

import html
import os
from pathlib import Path
from typing import Any

import numpy as np

from ..atomic import write_text
from .analysis import TrendResult

_COLOURS = ("#d55e00", "#009e73", "#0072b2")
W, H, L, R, T, B = 900, 220, 60, 20, 14, 28


def _e(x: Any) -> str:
    return html.escape(str(x), quote=True)


def _plot(t: np.ndarray, series: list[tuple[str, np.ndarray]], unit: str, events: list[dict[str, Any]]) -> str:
    """One SVG panel: the series against time, event spans shaded."""
    if not series or t.size < 2:
        return ""
    idx = np.unique(np.linspace(0, t.size - 1, min(t.size, 1500)).astype(int))
    y_all = np.concatenate([s[idx] for _, s in series])
    y_all = y_all[np.isfinite(y_all)]
    ymax = float(y_all.max()) * 1.05 if y_all.size and y_all.max() > 0 else 1.0
    t0, t1 = float(t[0]), float(t[-1]) if t[-1] > t[0] else float(t[0]) + 1

    def x(v: float) -> float:
        return L + (W - L - R) * (v - t0) / (t1 - t0)

    def y(v: np.ndarray) -> np.ndarray:
        return T + (H - T - B) * (1 - v / ymax)

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" width="{W}" height="{H}" font-size="11" font-family="DejaVu Sans,Verdana,sans-serif">']
    for ev in events:
        a = x(ev["start_s"])
        b = x(ev["end_s"] if ev["end_s"] is not None else t1)
        out.append(f'<rect x="{a:.1f}" y="{T}" width="{max(b - a, 1.5):.1f}" height="{H - T - B}" fill="#f0e442" opacity="0.35">'
                   f'<title>{_e(ev["kind"] + ": " + ev["summary"])}</title></rect>')
    out.append(f'<rect x="{L}" y="{T}" width="{W - L - R}" height="{H - T - B}" fill="none" stroke="#888"/>')
    for k, (name, s) in enumerate(series):
        pts = " ".join(f"{x(float(a)):.1f},{float(b):.1f}" for a, b in zip(t[idx], y(np.nan_to_num(s[idx])), strict=True))
        out.append(f'<polyline fill="none" stroke="{_COLOURS[k % 3]}" stroke-width="1.2" points="{pts}"><title>{_e(name)}</title></polyline>')
        out.append(f'<text x="{L + 8 + 70 * k}" y="{T + 12}" fill="{_COLOURS[k % 3]}">{_e(name)}</text>')
    out.append(f'<text x="4" y="{T + 10}">{_e(f"{ymax:.0f} {unit}")}</text><text x="4" y="{H - B}">0</text>')
    out.append(f'<text x="{L}" y="{H - 8}">{t0:.0f} s</text><text x="{W - R}" y="{H - 8}" text-anchor="end">{t1:.0f} s</text>')
    out.append("</svg>")
    return "".join(out)


def _dur(d: float | None) -> str:
    return "" if d is None else _e(f"{d:.3g}")


def trend_html(res: TrendResult, doc: dict[str, Any]) -> str:
    """The report page of one trend log."""
    from ..analysis import SAFETY_CAUTIONS

    tab = res.log.table
    t = tab["t_s"].to_numpy(float)
    cur = [(c.replace("_rms", ""), tab[c].to_numpy(float)) for c in res.log.current_columns]
    vol = [(c.replace("_rms", ""), tab[c].to_numpy(float)) for c in res.log.voltage_columns]
    rows = "".join(
        f"<tr><td>{_e(e['kind'])}</td><td>{_e(e['phase'] or '')}</td><td>{_e(e['start_time'])}</td>"
        f"<td>{_dur(e['duration_s'])}</td>"
        f"<td>{_e(res.log.resolution_s)}</td><td>{_e(e['summary'])}</td></tr>" for e in doc["events"])
    lim = "".join(f"<li>{_e(x)}</li>" for x in res.limits)
    notes = "".join(f"<li>{_e(x)}</li>" for x in res.notes)
    caut = "".join(f"<li>{_e(x)}</li>" for x in SAFETY_CAUTIONS)
    title = f"Trend log: {Path(res.log.provenance.source_path).name}"
    return (
        "<!DOCTYPE html><html lang=\"en\"><head><meta charset=\"utf-8\">"
        "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'\">"
        f"<title>{_e(title)}</title><style>body{{font-family:'DejaVu Sans',Verdana,sans-serif;margin:1.5em;color:#1b1b1b}}"
        "table{border-collapse:collapse;font-size:13px}td,th{border:1px solid #c9c9c9;padding:3px 6px;text-align:left}"
        ".limits{background:#fdf3d0;padding:.5em 1em;max-width:60em}.caution{font-size:12px;color:#555;max-width:60em}</style></head><body>"
        f"<h1>{_e(title)}</h1><p><b>{_e(res.verdict)}</b></p>"
        f"<p>{res.log.n_rows} rows from {_e(doc['capture']['start_time'])}, one every {_e(res.log.resolution_s)} s.</p>"
        f"<div class=\"limits\"><p><b>What a trend log cannot show</b></p><ul>{lim}</ul></div>"
        f"<h2>Line currents (RMS)</h2>{_plot(t, cur, 'A', doc['events'])}"
        f"<h2>Voltages (RMS)</h2>{_plot(t, vol, 'V', doc['events'])}"
        "<h2>Events</h2><table><tr><th>kind</th><th>line</th><th>start (within one interval)</th><th>duration [s]</th>"
        f"<th>resolution [s]</th><th>summary</th></tr>{rows}</table>"
        f"<h2>Notes</h2><ul>{notes or '<li>none</li>'}</ul>"
        f"<div class=\"caution\"><p>Cautions</p><ul>{caut}</ul></div></body></html>\n")


def write_trend_report(res: TrendResult, out_dir: str | os.PathLike[str], html_page: bool = True) -> dict[str, Path]:
    """Write result.json, events.csv and (unless ``html_page=False``) report.html, each atomically."""
    from ..atomic import same_file
    from ..errors import WriteError
    from ..report.events_csv import events_csv
    from ..report.result_json import to_json
    from .result import trend_result_dict

    out = Path(out_dir)
    src = res.log.provenance.source_path
    doc = trend_result_dict(res)
    texts = {"result.json": to_json(doc), "events.csv": events_csv(doc["events"])}
    if html_page:
        texts["report.html"] = trend_html(res, doc)
    written = {}
    for name, text in texts.items():
        p = out / name
        if src and same_file(src, p):
            raise WriteError(f"{p}: refusing to overwrite the input capture")
        write_text(p, text)
        written[name] = p
    return written
