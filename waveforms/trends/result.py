"""result.json of a trend log: the same layout as a waveform capture's (docs/result.md), plus ``trend``.

The capture part describes the log (``sample_rate_hz`` is one row per
interval, ``n_samples`` the rows), every event carries ``resolution_s`` beside
``start_s``, speed is not available, thermal is null, and the ``trend`` part
holds the resolution, the columns read and what a trend log cannot show
(`waveforms.trends.detect.LIMITS`).
"""

from __future__ import annotations

import datetime as _dt
from typing import Any

import numpy as np

from ..detect.event import iso_at, plain
from .analysis import TrendResult

_CHANNEL = {"Va_rms": ("voltage", "A", "LN", "V"), "Vb_rms": ("voltage", "B", "LN", "V"), "Vc_rms": ("voltage", "C", "LN", "V"),
            "Vab_rms": ("voltage", "A", "LL", "V"), "Vbc_rms": ("voltage", "B", "LL", "V"), "Vca_rms": ("voltage", "C", "LL", "V"),
            "Ia_rms": ("current", "A", "line", "A"), "Ib_rms": ("current", "B", "line", "A"), "Ic_rms": ("current", "C", "line", "A"),
            "In_rms": ("current", "N", "neutral", "A")}


def _channels(res: TrendResult) -> list[dict[str, Any]]:
    out = []
    for name, header in res.log.columns.items():
        if name not in _CHANNEL:
            continue
        kind, cond, ref, unit = _CHANNEL[name]
        out.append({"name": name, "label": name.replace("_rms", ""), "kind": kind, "conductor": cond, "reference": ref,
                    "unit": unit, "source_label": header, "scale": 1.0})
    return out


def trend_result_dict(res: TrendResult, generated_at: _dt.datetime | None = None) -> dict[str, Any]:
    """The result.json document of a trend log (validates against ``result.schema.json``)."""
    from .. import PROGRAM_NAME, __version__
    from ..analysis import SAFETY_CAUTIONS, versions
    from ..report.result_json import SCHEMA_VERSION, parameters_digest

    log = res.log
    gen = generated_at or _dt.datetime.now(_dt.timezone.utc)
    tab = log.table
    cur = [c for c in ("Ia_rms", "Ib_rms", "Ic_rms") if c in tab]
    imax = float(np.nanmax(tab[cur].to_numpy(float))) if cur else None
    fla = None if res.nameplate is None else float(res.nameplate.fla_a)
    f = tab["frequency_hz"].to_numpy(float) if "frequency_hz" in tab else np.array([])
    f = f[np.isfinite(f)]
    events = []
    for e in res.events:
        d = e.to_dict()
        d["start_time"] = iso_at(log.start_time, e.start_s)
        d["end_time"] = iso_at(log.start_time, e.end_s)
        d["resolution_s"] = log.resolution_s
        events.append(d)
    n_events: dict[str, int] = {}
    for e in res.events:
        n_events[e.kind] = n_events.get(e.kind, 0) + 1
    states: dict[str, float] = {}
    for r in res.timeline.itertuples(index=False):
        states[r.state] = states.get(r.state, 0.0) + float(r.end_s - r.start_s)
    doc = {
        "schema_version": SCHEMA_VERSION, "generated_at": gen.isoformat(timespec="seconds"), "verdict": res.verdict,
        "capture": {
            "file": log.provenance.source_path or None, "sha256": log.provenance.sha256 or None, "importer": "trend",
            "start_time": log.start_time.isoformat(timespec="microseconds"),
            "end_time": log.end_time.isoformat(timespec="microseconds"), "duration_s": log.duration_s,
            "sample_rate_hz": 1.0 / log.resolution_s, "n_samples": log.n_rows, "nominal_frequency_hz": log.nominal_frequency_hz,
            "measured_frequency_hz": float(np.median(f)) if f.size else None, "nominal_voltage_v": log.nominal_voltage_v,
            "wiring": "4-wire" if "Va_rms" in tab else "3-wire", "channels": _channels(res), "gaps": [],
        },
        "nameplate": None if res.nameplate is None else res.nameplate.to_dict(),
        "summary": {"n_events": n_events, "max_line_current_a": imax,
                    "max_line_current_x_fla": None if imax is None or not fla else imax / fla, "states_s": states},
        "events": events,
        "timeline": [{"state": r.state, "start_s": float(r.start_s), "end_s": float(r.end_s), "direction": "unknown",
                      "direction_basis": None} for r in res.timeline.itertuples(index=False)],
        "speed": {"available": False, "track": []},
        "thermal": None,
        "data_quality": [],
        "notes": list(res.notes),
        "provenance": {
            "software": {"name": PROGRAM_NAME, "version": __version__}, "capture": log.provenance.to_dict(),
            "versions": versions(), "parameters": res.parameters, "parameters_sha256_16": parameters_digest(res.parameters),
            "timings_s": res.timings_s,
        },
        "cautions": list(SAFETY_CAUTIONS),
        "trend": {"resolution_s": log.resolution_s, "n_rows": log.n_rows, "columns": dict(log.columns),
                  "cannot_show": list(res.limits)},
    }
    return plain(doc)
