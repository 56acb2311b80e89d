"""``result.json``: the analysis of one capture as plain JSON (documented in docs/result.md).

`result_dict` builds the document; `validate` checks one against the JSON
Schema shipped beside this module (``result.schema.json``), when the
``jsonschema`` package is installed.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
from importlib import resources
from typing import Any

import numpy as np

from .. import PROGRAM_NAME, __version__
from ..analysis import SAFETY_CAUTIONS, AnalysisResult, iso_at
from ..detect.event import plain

#: Version of the result.json layout; bumped on any incompatible change.
SCHEMA_VERSION = "1.1"  # 1.1: speed.track "confidence"/"confidence_db" renamed "prominence_db" (issue 18)
SCHEMA_FILE = "result.schema.json"


def _num(x: Any) -> float | None:
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _capture_part(res: AnalysisResult) -> dict[str, Any]:
    cap = res.capture
    cyc = res.cycles
    f = cyc["frequency_hz"].to_numpy(float) if "frequency_hz" in cyc else np.array([])
    f = f[np.isfinite(f)]
    return {
        "file": cap.provenance.source_path or None,
        "sha256": cap.provenance.sha256 or None,
        "importer": cap.provenance.importer or None,
        "start_time": cap.start_time.isoformat(timespec="microseconds"),
        "end_time": cap.end_time.isoformat(timespec="microseconds"),
        "duration_s": cap.duration_s,
        "sample_rate_hz": cap.sample_rate_hz,
        "n_samples": cap.n_samples,
        "nominal_frequency_hz": cap.nominal_frequency_hz,
        "measured_frequency_hz": float(np.median(f)) if f.size else None,
        "nominal_voltage_v": cap.nominal_voltage_v,
        "wiring": cap.wiring,
        "channels": [
            {"name": c.name, "label": c.label, "kind": c.kind, "conductor": c.conductor, "reference": c.reference,
             "unit": c.unit, "source_label": c.source_label, "scale": c.scale}
            for c in cap.channels
        ],
        "gaps": [{"start_index": g.start_index, "stop_index": g.stop_index, "reason": g.reason} for g in cap.gaps],
        "n_cycles": int(len(cyc)),
    }


#: Ratios of the negative to the positive sequence: an unbalance only while at most 100 % (issue 18)
NEGATIVE_OVER_POSITIVE = ("I2_I1_pct", "V2_V1_pct")
#: ... with one line open V2/V1 = I2/I1 = 100 % exactly (Fortescue); 1 point of tolerance for noise (our choice)
NEGATIVE_DOMINANT_PCT = 101.0


def _summary_part(res: AnalysisResult) -> dict[str, Any]:
    cyc = res.cycles
    out: dict[str, Any] = {"n_events": {}}
    for e in res.events:
        out["n_events"][e.kind] = out["n_events"].get(e.kind, 0) + 1
    lines = [c for c in ("Ia_rms", "Ib_rms", "Ic_rms") if c in cyc]
    imax = float(np.nanmax(cyc[lines].to_numpy(float))) if lines and np.isfinite(cyc[lines].to_numpy(float)).any() else None
    out["max_line_current_a"] = imax
    fla = None if res.nameplate is None else res.nameplate.fla_a
    out["max_line_current_x_fla"] = None if imax is None or not fla else imax / fla
    dominant: dict[str, int] = {}
    for col in ("I2_I1_pct", "V2_V1_pct", "V_unbal_nema_pct"):
        if col in cyc:
            v = cyc[col].to_numpy(float)
            v = v[np.isfinite(v)]  # cycles below the level gate are NaN (waveforms.measure.gate): excluded
            if col in NEGATIVE_OVER_POSITIVE:
                # above 100 % the negative sequence dominates: a reversed rotation or labelling, not an unbalance
                dominant[col] = int((v > NEGATIVE_DOMINANT_PCT).sum())
                v = v[v <= NEGATIVE_DOMINANT_PCT]
            out[f"max_{col}"] = float(v.max()) if v.size else None
            out[f"median_{col}"] = float(np.median(v)) if v.size else None
    out["cycles_negative_sequence_dominant"] = dominant
    out["states_s"] = {}
    for row in res.timeline.itertuples(index=False):
        out["states_s"][row.state] = out["states_s"].get(row.state, 0.0) + float(row.end_s - row.start_s)
    return out


def _speed_part(res: AnalysisResult) -> dict[str, Any]:
    sp = res.speed
    if sp is None:
        return {"available": False, "track": []}
    track = []
    for r in sp.to_dict("records"):
        track.append({
            "t_s": _num(r.get("t_s")), "t_start_s": _num(r.get("t_start_s")), "t_end_s": _num(r.get("t_end_s")),
            "slip": _num(r.get("slip")), "rpm": _num(r.get("rpm")),
            "prominence_db": _num(r.get("prominence_db")),
            "f_supply_hz": _num(r.get("f_supply_hz")), "component": str(r.get("component") or ""),
            "status": str(r.get("status") or ""),
            "direction": str(r.get("direction") or "unknown"), "direction_basis": str(r.get("direction_basis") or "") or None,
            "state": str(r.get("state") or "") or None,
        })
    return {"available": True, "track": track}


def _event_part(res: AnalysisResult) -> list[dict[str, Any]]:
    out = []
    for e in res.events:
        d = e.to_dict()
        d["start_time"] = iso_at(res.capture.start_time, e.start_s)
        d["end_time"] = iso_at(res.capture.start_time, e.end_s)
        out.append(d)
    return out


def parameters_digest(params: dict[str, Any]) -> str:
    """SHA-256 (first 16 hex digits) of the parameters, canonical JSON."""
    return hashlib.sha256(json.dumps(plain(params), sort_keys=True).encode()).hexdigest()[:16]


def result_dict(res: AnalysisResult, generated_at: _dt.datetime | None = None) -> dict[str, Any]:
    """The result.json document (plain JSON types, NaN -> null)."""
    gen = generated_at or _dt.datetime.now(_dt.timezone.utc)
    thermal = None
    if res.thermal is not None:
        thermal = dict(res.thermal.summary)
        thermal["relays"] = {
            k: dict(v, trip_time=iso_at(res.capture.start_time, v["trip_s"])) for k, v in res.thermal.summary["relays"].items()
        }
    doc = {
        "schema_version": SCHEMA_VERSION,
        "generated_at": gen.isoformat(timespec="seconds"),
        "verdict": res.verdict,
        "capture": _capture_part(res),
        "nameplate": None if res.nameplate is None else res.nameplate.to_dict(),
        "summary": _summary_part(res),
        "events": _event_part(res),
        "timeline": [
            {"state": r.state, "start_s": float(r.start_s), "end_s": float(r.end_s),
             "direction": str(getattr(r, "direction", "unknown")), "direction_basis": getattr(r, "direction_basis", None)}
            for r in res.timeline.itertuples(index=False)
        ],
        "speed": _speed_part(res),
        "thermal": thermal,
        "data_quality": res.quality,
        "notes": list(res.notes),
        "provenance": {
            "software": {"name": PROGRAM_NAME, "version": __version__},
            "capture": res.capture.provenance.to_dict(),
            "versions": res.versions,
            "parameters": res.parameters,
            "parameters_sha256_16": parameters_digest(res.parameters),
            "timings_s": res.timings_s,
        },
        "cautions": list(SAFETY_CAUTIONS),
    }
    if getattr(res, "voltage", None) is not None:  # declared supply voltage and the motor terminal check
        doc["supply_voltage"] = plain(res.voltage)
    hk = getattr(res, "hookup", None)
    if hk is not None and hk.findings:  # present only when the hook-up check found something (docs/hookup.md)
        doc["hookup"] = hk.to_dict()
        if hk.ratio_note:  # meaningless as recorded: absent, with the reason
            for key in list(doc["summary"]):
                if key.endswith(hk.absent_ratios):
                    doc["summary"][key] = None
            doc["summary"]["sequence_ratios_absent"] = hk.ratio_note
    return plain(doc)


def to_json(doc: dict[str, Any]) -> str:
    return json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def schema() -> dict[str, Any]:
    """The JSON Schema of result.json (shipped as ``waveforms/report/result.schema.json``)."""
    return json.loads(resources.files("waveforms.report").joinpath(SCHEMA_FILE).read_text(encoding="utf-8"))


def validate(doc: dict[str, Any]) -> None:
    """Raise ``jsonschema.ValidationError`` when ``doc`` does not follow the schema."""
    import jsonschema

    jsonschema.validate(doc, schema(), cls=jsonschema.Draft202012Validator)

