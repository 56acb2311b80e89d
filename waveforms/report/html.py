"""``report.html``: one self-contained page (figures embedded as data: PNG, no scripts).

Rendered with jinja2 with autoescaping on, so every string that comes from
the capture (file name, channel headers, metadata, nameplate name) is escaped;
a Content-Security-Policy that allows no script and no outside resource makes
the page inert even if something slipped through.
"""

from __future__ import annotations

import json
from typing import Any

import jinja2

from ..analysis import AnalysisResult

TEMPLATE = r"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data:; style-src 'unsafe-inline'">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Motor capture analysis: {{ file_name }}</title>
<style>
 body { font-family: "DejaVu Sans", Arial, sans-serif; color: #1d1d1d; margin: 0; background: #f4f4f1; }
 main { max-width: 1020px; margin: 0 auto; padding: 18px 26px 40px; background: #ffffff; }
 header { border-bottom: 3px solid #0072B2; padding-bottom: 8px; margin-bottom: 10px; }
 h1 { font-size: 21px; margin: 4px 0; font-weight: 600; }
 h2 { font-size: 16px; margin: 26px 0 6px; color: #0b3d5c; border-bottom: 1px solid #d9d9d9; padding-bottom: 3px; }
 .meta { font-size: 12.5px; color: #444; }
 .verdict { font-size: 15px; line-height: 1.5; background: #fbf7e9; border-left: 5px solid #E69F00; padding: 10px 14px; }
 .lead { font-size: 12px; color: #555; margin: 2px 0 6px; }
 img { max-width: 100%; display: block; margin: 4px 0; }
 table { border-collapse: collapse; font-size: 12px; width: 100%; }
 th, td { border: 1px solid #d4d4d4; padding: 3px 6px; text-align: left; vertical-align: top; }
 th { background: #eef3f7; }
 td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
 .sev-warning { color: #a34400; font-weight: 600; }
 .caution { background: #fdeeee; border: 1px solid #e2b4b4; padding: 8px 14px; font-size: 13px; }
 code, pre { font-size: 11px; background: #f3f3f3; }
 pre { padding: 6px; overflow-x: auto; white-space: pre-wrap; }
 ul { margin: 4px 0; }
 #quality li { font-size: 13px; }
</style>
</head>
<body><main>
<header>
 <h1>Motor capture analysis</h1>
 <div class="meta">File <b>{{ file_name }}</b> &middot; start {{ start_time }} &middot; {{ duration }} &middot;
 {{ rate }} &middot; {{ channels }}{% if plate_name %} &middot; motor <b>{{ plate_name }}</b>{% endif %}</div>
</header>

<section id="verdict"><h2>Verdict</h2>
 <p class="verdict">{{ verdict }}</p>
 <p class="lead">Findings from recorded waveforms only; to be confirmed by qualified people (see the cautions at the end).</p>
</section>

{% if hookup %}<section id="hookup"><h2>Logger hook-up</h2>
 <p class="lead">{% if hookup.as_recorded %}Analysed exactly as recorded (as_recorded): nothing was corrected.{% elif hookup.corrected %}Corrected before the analysis: {{ hookup.correction }}.{% else %}Nothing corrected.{% endif %}</p>
 <table><thead><tr><th>check</th><th>finding</th><th>channels</th><th>confidence</th><th>action</th></tr></thead>
 <tbody>{% for f in hookup.findings %}<tr><td>{{ f.check }}</td><td>{{ f.what }}</td><td>{{ f.channels|join(", ") }}</td><td>{{ f.confidence }}</td><td>{{ f.action }}</td></tr>{% endfor %}</tbody></table>
 <details><summary>Evidence</summary>{% for f in hookup.findings %}<p><b>{{ f.check }}</b></p><pre>{{ f.evidence_json }}</pre>{% endfor %}</details>
 {% if fig.hookup %}<img src="{{ fig.hookup }}" alt="phasors as recorded and as corrected">{% endif %}
</section>
{% endif %}
<section id="timeline"><h2>Timeline</h2>
 <p class="lead">Motor state per cycle: three-phase, single-phased, stalled, de-energised; events beneath.</p>
 <img alt="timeline of motor states and events" src="{{ fig.timeline }}">
</section>

<section id="currents"><h2>{% if has_fla %}Line currents against FLA{% else %}Line currents (no nameplate: not judged against FLA){% endif %}</h2>
 <img alt="per-line RMS current{% if has_fla %} against full-load current{% endif %}" src="{{ fig.currents }}">
</section>

<section id="sequence"><h2>Unbalance: I2/I1 and V2/V1</h2>
 <img alt="negative to positive sequence ratios" src="{{ fig.sequence }}">
</section>

<section id="speed"><h2>Speed track</h2>
 <p class="lead">Rotor speed from the current spectrum (no tachometer). Windows without an estimate are marked with the reason; no number is made up.</p>
 <img alt="rotor speed track" src="{{ fig.speed }}">
</section>

<section id="phasors"><h2>Phasors before and after the onset</h2>
 <p class="lead">{{ fig.phasors_caption }}</p>
 <img alt="phasor diagrams" src="{{ fig.phasors }}">
</section>

<section id="spectrum"><h2>Current spectrum with slip components</h2>
 {% if fig.spectrum %}<p class="lead">{{ fig.spectrum_caption }}</p>
 <img alt="current spectrum with the slip components marked" src="{{ fig.spectrum }}">
 {% else %}<p class="lead">Not available: {{ fig.spectrum_caption }}.</p>{% endif %}
</section>

<section id="events"><h2>Events</h2>
 {% if events %}
 <table><thead><tr><th>#</th><th>kind</th><th>line</th><th>start [s]</th><th>start time</th><th>end [s]</th><th>duration [s]</th><th>what was found</th></tr></thead>
 <tbody>{% for e in events %}
 <tr><td class="num">{{ loop.index }}</td><td>{{ e.kind }}</td><td>{{ e.phase or "" }}</td><td class="num">{{ e.start }}</td>
 <td>{{ e.start_time }}</td><td class="num">{{ e.end }}</td><td class="num">{{ e.duration }}</td><td>{{ e.summary }}</td></tr>
 {% endfor %}</tbody></table>
 <details><summary>Supporting figures</summary>{% for e in events %}<p><b>#{{ loop.index }} {{ e.kind }}</b></p><pre>{{ e.figures }}</pre>{% endfor %}</details>
 {% else %}<p>No events found.</p>{% endif %}
</section>

{% if supply %}<section id="supply-voltage"><h2>Supply and terminal voltage</h2>
 <p>Declared voltage ({{ supply.source }}): {{ supply.basis }}.</p>
 {% if supply.terminal %}<p>The {{ supply.terminal }}.</p>{% endif %}
</section>{% endif %}

<section id="thermal"><h2>Thermal stress</h2>
 {% if thermal %}
 <img alt="thermal capacity used" src="{{ fig.thermal }}">
 <table><tbody>
 <tr><th>time above FLA</th><td class="num">{{ thermal.above_fla }}</td><th>time above service-factor current</th><td class="num">{{ thermal.above_sf }}</td></tr>
 <tr><th>thermal capacity used (max)</th><td class="num">{{ thermal.used }}</td><th>negative-sequence weight K</th><td class="num">{{ thermal.k }}</td></tr>
 </tbody></table>
 <p>Initial state: {{ thermal.initial }}</p>
 <table><thead><tr><th>overload relay (IEC 60947-4-1 class)</th><th>model time constant [s]</th><th>trip at 7.2 x setting, cold [s]</th><th>would have tripped at</th><th>projected past the capture</th></tr></thead>
 <tbody>{% for r in thermal.relays %}<tr><td>class {{ r.cls }}</td><td class="num">{{ r.tau }}</td><td class="num">{{ r.t72 }}</td><td>{{ r.trip }}</td><td>{{ r.projected }}</td></tr>{% endfor %}</tbody></table>
 <p>Projection: {{ thermal.projection }}</p>
 <table><thead><tr><th>assumption varied</th><th>value</th><th>motor capacity used (max)</th><th>motor model at 100 % / relay trip</th></tr></thead>
 <tbody>{% for r in thermal.sensitivity %}<tr><td>{{ r.parameter }}</td><td class="num">{{ r.value }}</td><td class="num">{{ r.used }}</td><td>{{ r.when }}</td></tr>{% endfor %}</tbody></table>
 <p class="lead">Single time-constant model (IEC 60255-149 thermal equation), heating current I_eq&sup2; = I1&sup2; + K I2&sup2; while running (K a rule of thumb), I1&sup2; + I2&sup2; at standstill, where the rotor sees both sequences at supply frequency. Relay models are tuned inside the IEC 60947-4-1 class bands; a real relay's curve differs.</p>
 {% else %}<p>Not assessed (no nameplate or no line currents).</p>{% endif %}
</section>

<section id="quality"><h2>Data quality</h2>
 {% if quality %}<ul>{% for q in quality %}<li><span class="sev-{{ q.severity }}">{{ q.severity }}</span>: {{ q.message }}</li>{% endfor %}</ul>
 {% else %}<p>No data-quality findings.</p>{% endif %}
 {% if notes %}<p class="lead">Assumptions and limits of this analysis:</p><ul>{% for n in notes %}<li>{{ n }}</li>{% endfor %}</ul>{% endif %}
</section>

<section id="provenance"><h2>Provenance</h2>
 <table><tbody>
 <tr><th>file</th><td>{{ prov.file }}</td></tr>
 <tr><th>SHA-256</th><td><code>{{ prov.sha256 }}</code></td></tr>
 <tr><th>importer</th><td>{{ prov.importer }}</td></tr>
 <tr><th>channels (file header &rarr; label)</th><td>{{ prov.mapping }}</td></tr>
 <tr><th>processing history</th><td>{{ prov.history }}</td></tr>
 <tr><th>software</th><td>{{ prov.versions }}</td></tr>
 <tr><th>parameters (digest {{ prov.digest }})</th><td><details><summary>show all parameters</summary><pre>{{ prov.parameters }}</pre></details></td></tr>
 </tbody></table>
</section>

<section id="cautions"><h2>Safety cautions</h2>
 <div class="caution"><ul>{% for c in cautions %}<li>{{ c }}</li>{% endfor %}</ul></div>
</section>
</main></body></html>
"""

_ENV = jinja2.Environment(autoescape=True, undefined=jinja2.StrictUndefined)


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
    return _ENV.from_string(TEMPLATE).render(**ctx)
