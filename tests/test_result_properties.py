"""Properties every result.json must have, over every shipped sample and every scenario of the catalogue.

The catalogue is the scenario files shipped in sample_captures/ (``**/*.scenario.toml``: the per-file
samples, the site samples, the consecutive-file and trend-log scenarios; docs/simulator.md).  Each
scenario is simulated here cut to its first `CUT_S` seconds (a different capture from its sample, with
events cut short or still under way at the end) and analysed without a nameplate and with its own; each
shipped capture is analysed both ways too.  The properties (issue 18):

* no negative duration or instant anywhere in result.json (every number under a key ending ``_s``,
  except the signed ones named in `SIGNED_S`);
* no "x FLA" text and no per-unit-of-FLA figure without an FLA;
* no percentage above what physics allows: a NEMA unbalance (largest deviation from the mean of three
  non-negative magnitudes, over the mean) is at most 200 % (NEMA MG 1 14.36 definition; the bound is
  arithmetic), a power factor lies in [-1, 1] (IEEE 1459 definition P / S), thermal states are not negative;
* a start is reported successful only when its current fell (settled current below the inrush) and, where
  the speed track reads the rotor after the start, the rotor turns (|slip| < 0.5).

Bounds are arithmetic or definitional (sources named beside each); there is no hard-coded finding.
Timing (measured on the shared 2-core machine): see the module fixture's docstring.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path
from typing import Any

import pytest

from waveforms.analysis import analyze
from waveforms.io import read_capture
from waveforms.motor.nameplate import load_nameplate
from waveforms.report.result_json import result_dict
from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import simulate

S = Path(__file__).resolve().parent.parent / "sample_captures"
CUT_S = 3.0
#: keys ending in _s whose value is signed by definition (none found so far; listed here when one is)
SIGNED_S: frozenset[str] = frozenset()
CAPTURES = sorted(p for p in S.rglob("*") if p.suffix in {".h5", ".csv"} and "trend" not in p.parts)
SCENARIOS = sorted(S.rglob("*.scenario.toml"))


def _plate_of(path: Path):
    """The capture's nameplate: its own (HDF5 carries it), else the scenario's (CSV)."""
    sc = path.with_name(path.name.split(".")[0] + ".scenario.toml")
    if sc.is_file():
        d = tomllib.loads(sc.read_text())
        np_ = d.get("scenario", {}).get("nameplate")
        if np_:
            return load_nameplate(sc.parent / np_)
    return None


def _cut(x: Any, t_s: float) -> Any:
    """The scenario's timed items (switch operations, dips, load steps, a jam, site events) that act before ``t_s``."""
    def late(v: Any) -> bool:
        return isinstance(v, dict) and any(isinstance(v.get(k), (int, float)) and v[k] >= t_s - 0.05 for k in ("time_s", "start_s"))

    if isinstance(x, dict):
        out = {k: _cut(v, t_s) for k, v in x.items() if not late(v)}
        if isinstance(out.get("end_s"), (int, float)) and out["end_s"] >= t_s:
            out["end_s"] = t_s - 0.02
        return out
    if isinstance(x, list):
        return [_cut(v, t_s) for v in x if not late(v)]
    return x


def _walk(x: Any, path: str = ""):
    if isinstance(x, dict):
        for k, v in x.items():
            yield from _walk(v, f"{path}.{k}")
    elif isinstance(x, list):
        for i, v in enumerate(x):
            yield from _walk(v, f"{path}[{i}]")
    else:
        yield path, x


def _violations(doc: dict, rated: bool) -> list[str]:
    bad = []
    for p, v in _walk(doc):
        key = p.rsplit(".", 1)[-1].split("[")[0]
        num = isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)
        if num and key.endswith("_s") and key not in SIGNED_S and v < -1e-9:
            bad.append(f"negative {p} = {v}")
        if num and "unbal_nema" in key and "pct" in key and v > 200.0 + 1e-6:
            bad.append(f"NEMA unbalance {p} = {v} > 200 %")  # NEMA MG 1 14.36 definition: at most 200 %
        if num and (key == "PF" or key.startswith("power_factor") or key.endswith("_pf")) and abs(v) > 1.0 + 1e-6:
            bad.append(f"power factor {p} = {v}")  # IEEE 1459: PF = P / S, |PF| <= 1
        if num and key.startswith("theta") and key.endswith("_pct") and v < -1e-9:
            bad.append(f"thermal state {p} = {v} < 0")
        if not rated and isinstance(v, str) and "x FLA" in v:
            bad.append(f"'x FLA' without an FLA at {p}: {v[:80]}")
        if not rated and "pu_fla" in key:
            bad.append(f"per-unit-of-FLA figure without an FLA: {p}")
    for e in doc["events"]:
        if e["end_s"] is not None and e["end_s"] < e["start_s"]:
            bad.append(f"negative duration: {e['kind']} from {e['start_s']} to {e['end_s']}")
    for r in doc.get("timeline", []):
        if r["end_s"] < r["start_s"]:
            bad.append(f"negative duration: timeline {r['state']} from {r['start_s']} to {r['end_s']}")
    track = doc.get("speed", {}).get("track", [])
    for e in doc["events"]:
        if e["kind"] != "start" or e["figures"].get("success") is not True:
            continue
        f = e["figures"]
        if not (f.get("settled_over_inrush") is not None and f["settled_over_inrush"] < 1.0):
            bad.append(f"successful start at {e['start_s']} without a falling current: {f}")
        end = e["end_s"] if e["end_s"] is not None else e["start_s"]
        after = [w["slip"] for w in track if w["slip"] is not None and w["t_start_s"] is not None and w["t_start_s"] >= end]
        if after and not abs(after[0]) < 0.5:
            bad.append(f"successful start at {e['start_s']} but the rotor reads slip {after[0]} after it")
    return bad


@pytest.fixture(scope="module")
def results() -> dict[str, dict]:
    """result.json of every capture (shipped, and simulated from the catalogue cut to CUT_S) without and with its nameplate.

    Measured: about 45 s for the module on the shared 2-core machine (20 captures and 19 scenarios, each analysed twice where a nameplate exists; no scenario needed leaving out).
    """
    out: dict[str, dict] = {}
    for p in CAPTURES:
        cap = read_capture(p)
        plate = cap.nameplate or _plate_of(p)
        name = str(p.relative_to(S))
        out[f"{name} no-motor"] = (result_dict(analyze(cap.replace(nameplate=None), None, speed=False)), False)
        if plate is not None:
            out[f"{name} motor"] = (result_dict(analyze(cap.replace(nameplate=plate), plate)), True)
    for p in SCENARIOS:
        d = tomllib.loads(p.read_text())
        d.pop("sequence", None)
        d.pop("trend", None)
        d.pop("truth", None)
        cut = min(float(d["scenario"]["duration_s"]), CUT_S)
        scen = d.pop("scenario")
        d = _cut(d, cut)
        d["scenario"] = dict(scen, duration_s=cut)
        cap, _ = simulate(scenario_from_dict(d, str(p), p.parent))
        name = f"{p.relative_to(S)} cut {CUT_S:g} s"
        out[f"{name} no-motor"] = (result_dict(analyze(cap.replace(nameplate=None), None, speed=False)), False)
        if cap.nameplate is not None:
            out[f"{name} motor"] = (result_dict(analyze(cap, cap.nameplate)), True)
    return out


def test_the_catalogue_and_samples_are_all_covered(results):
    # no external source: every shipped capture and every scenario appears, both ways where a nameplate exists
    assert len(CAPTURES) >= 20 and len(SCENARIOS) >= 19
    assert sum(k.endswith("no-motor") for k in results) == len(CAPTURES) + len(SCENARIOS)
    assert sum(k.endswith(" motor") for k in results) >= len(CAPTURES) + len(SCENARIOS) - 1


def test_every_result_keeps_the_properties(results):
    bad = {k: v for k, (doc, rated) in results.items() if (v := _violations(doc, rated))}
    assert bad == {}


def test_the_checks_see_what_they_check(results):
    # no external source: the properties are not vacuous -- successful starts, NEMA unbalance values, power
    # factors and durations are present among the results, and a crafted bad result is caught on every rule
    docs = [doc for doc, _ in results.values()]
    starts = [e for d in docs for e in d["events"] if e["kind"] == "start" and e["figures"].get("success") is True]
    assert len(starts) >= 2
    keys = [p.rsplit(".", 1)[-1] for d in docs for p, v in _walk(d) if isinstance(v, (int, float))]
    assert sum(k.endswith("_s") for k in keys) > 1000
    assert any("unbal_nema" in k for k in keys) and any(k.startswith("power_factor") or k == "PF" for k in keys)
    bad = {"events": [{"kind": "start", "start_s": 1.0, "end_s": 0.5, "summary": "drawing 1.0 x FLA",
                       "figures": {"success": True, "settled_over_inrush": 1.0, "acceleration_time_s": -0.02,
                                   "power_factor_median": 1.3, "v_unbal_nema_pct_max": 250.0}}],
           "speed": {"track": []}}
    found = _violations(bad, rated=False)
    for what in ("negative duration", "negative .events[0].figures.acceleration_time_s", "x FLA", "power factor", "NEMA unbalance", "falling current"):
        assert any(what in b for b in found), (what, found)
