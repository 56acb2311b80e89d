"""``report.html``: one self-contained page (figures embedded as data: PNG, no scripts).

Rendered with jinja2 from ``templates/capture_report.html.j2`` with autoescaping on, so every string that comes from
the capture (file name, channel headers, metadata, nameplate name) is escaped;
a Content-Security-Policy that allows no script and no outside resource makes
the page inert even if something slipped through.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import jinja2

from ..analysis import AnalysisResult

#: The page's template, in ``waveforms/report/templates/`` beside the archive index's.
TEMPLATE = "capture_report.html.j2"
TEMPLATES = Path(__file__).resolve().parent / "templates"

_ENV = jinja2.Environment(loader=jinja2.FileSystemLoader(TEMPLATES), autoescape=True, undefined=jinja2.StrictUndefined)


def _fmt(x: Any, nd: int = 4) -> str:
    if x is None:
        return "open" if nd >= 0 else ""
    return f"{x:.{nd}f}"


def render(res: AnalysisResult, doc: dict[str, Any], figures: dict[str, str | None]) -> str:
    """The HTML text of the report (every value escaped by jinja2)."""
    cap = res.capture
    events = []
    for e in doc["events"]:
        events.append({
            "kind": e["kind"], "phase": e["phase"], "start": _fmt(e["start_s"]), "start_time": e["start_time"],
            "end": "still present" if e["end_s"] is None else _fmt(e["end_s"]),
            "duration": "" if e["duration_s"] is None else _fmt(e["duration_s"], 3),
            "summary": e["summary"], "figures": json.dumps(e["figures"], indent=1, ensure_ascii=False),
        })
    thermal = None
    th = doc["thermal"]
    if th is not None:
        thermal = {
            "above_fla": f"{th['time_above_fla_s']:.2f} s", "above_sf": f"{th['time_above_sf_current_s']:.2f} s",
            "used": "n/a" if th["thermal_capacity_used_pct"] is None else f"{th['thermal_capacity_used_pct']:.0f} %",
            "k": f"{th['k_neg']:.2f}",
            "relays": [{"cls": k, "tau": f"{v['tau_s']:.0f}", "t72": f"{v['trip_at_7_2x_cold_s']:.1f}",
                        "trip": "not within the capture" if v["trip_s"] is None else f"{v['trip_s']:.2f} s ({v['trip_time']})"}
                       for k, v in th["relays"].items()],
        }
        thermal["initial"] = (th.get("initial_state") or {}).get("basis", "cold" if not th.get("hot_start") else "hot")
        pj = th.get("projection") or {}
        thermal["projection"] = pj.get("basis", "none")
        for r, (k, v) in zip(thermal["relays"], th["relays"].items(), strict=True):
            t = v.get("trip_projected_s")
            r["projected"] = "" if v["trip_s"] is not None else ("never at that current" if t is None else f"about {t:.0f} s from the capture start")
        if pj.get("motor_100pct_s") is not None:
            thermal["projection"] += f"; the motor model reaches 100 % after about {pj['motor_100pct_s']:.0f} s"

        def _when(r: dict) -> str:
            if "trip_s" in r:
                t, tp = r["trip_s"], r["trip_projected_s"]
                return f"trips at {t:.2f} s" if t is not None else (f"trips at about {tp:.0f} s (projected)" if tp is not None else "no trip")
            t, tp = r["motor_100pct_s"], r["motor_100pct_projected_s"]
            return f"100 % at {t:.2f} s" if t is not None else (f"100 % at about {tp:.0f} s (projected)" if tp is not None else "stays below 100 %")
        thermal["sensitivity"] = [{"parameter": r["parameter"], "value": f"{r['value']:.4g}",
                                   "used": f"{r['capacity_used_pct']:.0f} %" if "capacity_used_pct" in r else "",
                                   "when": _when(r)} for r in th.get("sensitivity") or []]
    prov = doc["provenance"]
    pc = prov["capture"]
    ch = [f"{c.source_label or c.name} \u2192 {c.label}" for c in cap.channels]
    hk = doc.get("hookup")
    hookup = None if hk is None else {
        "as_recorded": hk["as_recorded"], "corrected": hk["corrected"], "correction": "; ".join(r["rule"] for r in hk["correction"]),
        "findings": [dict(f, evidence_json=json.dumps(f["evidence"], indent=1, ensure_ascii=False)) for f in hk["findings"]],
    }
    ctx = {
        "hookup": hookup,
        "file_name": (pc.get("source_path") or "(in memory)"),
        "start_time": doc["capture"]["start_time"], "duration": f"{cap.duration_s:.3f} s",
        "rate": f"{cap.sample_rate_hz:g} samples/s", "channels": ", ".join(c.label for c in cap.channels),
        "plate_name": None if res.nameplate is None else (res.nameplate.name or None),
        "has_fla": res.nameplate is not None,
        # the logger sees a feeder (waveforms.motor.branch): the plotted currents are not the motor's alone
        "feeder_note": next((n for n in doc["notes"] if n.startswith("thermal: on the motor's branch current")
                             or n.startswith("thermal: not assessed for the motor")), None),
        "verdict": doc["verdict"], "fig": figures, "events": events, "thermal": thermal,
        "supply": None if doc.get("supply_voltage") is None else {
            "source": doc["supply_voltage"]["declared"]["source"], "basis": doc["supply_voltage"]["declared"]["basis"],
            "terminal": (doc["supply_voltage"].get("motor_terminal") or {}).get("sentence")},
        "quality": doc["data_quality"], "notes": doc["notes"], "cautions": doc["cautions"],
        "prov": {
            "file": pc.get("source_path") or "(in memory)", "sha256": pc.get("sha256") or "(none: not read from a file)",
            "importer": pc.get("importer") or "", "mapping": "; ".join(ch), "history": "; ".join(pc.get("history") or []) or "none",
            "versions": ", ".join(f"{k} {v}" for k, v in prov["versions"].items()), "digest": prov["parameters_sha256_16"],
            "parameters": json.dumps(prov["parameters"], indent=1, ensure_ascii=False),
        },
    }
    return _ENV.get_template(TEMPLATE).render(**ctx)
