"""Findings without a nameplate, and on de-energised stretches (issue 18, items 1 and 2).

The reference is the simulator's own record of what happened (``*.truth.json`` beside every shipped
sample: the switching instants, the rotor speed and the events computed from the machine model, not
from the detectors); physics bounds where stated.  Each row of the issue's table that concerns these
items is a test here:

* ``jam.h5`` without a nameplate: the 4.2 s locked rotor is found (it was missed when the locked-rotor
  current was taken as 6 x the capture's own median current);
* ``start_open_line.h5`` without a nameplate: a failed start and a stall, never "1 successful start,
  acceleration time -0.02 s", never "x FLA";
* the ``jam`` scenario run for 64 s with the relay opening at 36 s: no unbalance event and no
  thousands of percent from the noise of a de-energised circuit.
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

from waveforms.analysis import analyze
from waveforms.io import read_capture
from waveforms.report.result_json import result_dict
from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import simulate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
PATHS = sorted(p for p in SAMPLES.iterdir() if p.suffix in {".h5", ".csv"})
KINDS = ("open_phase", "stall", "start")


def _truth(path: Path) -> dict:
    return json.loads(path.with_suffix(".truth.json").read_text())


@pytest.fixture(scope="module")
def unrated() -> dict[str, dict]:
    """result.json of every shipped sample analysed without its nameplate (no speed: it needs the pole count)."""
    out = {}
    for p in PATHS:
        cap = read_capture(p).replace(nameplate=None)
        out[p.stem] = result_dict(analyze(cap, speed=False))
    return out


def _texts(doc: dict) -> list[str]:
    return [doc["verdict"], *(e["summary"] for e in doc["events"]), *doc.get("notes", [])]


def _durations_ok(doc: dict) -> list[str]:
    bad = []
    for e in doc["events"]:
        if e["end_s"] is not None and e["end_s"] < e["start_s"]:
            bad.append(f"{e['kind']}: end {e['end_s']} before start {e['start_s']}")
        for k, v in e["figures"].items():
            if (k.endswith("_time_s") or k.startswith("duration")) and isinstance(v, (int, float)) and v < 0:
                bad.append(f"{e['kind']}.{k} = {v}")
    for r in doc["timeline"]:
        if r["end_s"] < r["start_s"]:
            bad.append(f"timeline {r['state']}: {r['start_s']} > {r['end_s']}")
    bad += [f"states_s.{k} = {v}" for k, v in doc["summary"]["states_s"].items() if v < 0]
    return bad


@pytest.mark.parametrize("path", PATHS, ids=lambda p: p.stem)
def test_without_nameplate_the_events_are_the_simulated_ones(path, unrated):
    """Open phase, stall and start as the simulator recorded them (kinds, line, onset within 0.05 s, start outcome).

    Truth: the simulator's event list (machine model and switching, independent of the detectors).
    """
    doc = unrated[path.stem]
    truth = [e for e in _truth(path)["events"] if e["kind"] in KINDS]
    found = [e for e in doc["events"] if e["kind"] in KINDS]
    assert sorted((e["kind"], e["phase"]) for e in found) == sorted((e["kind"], e["phase"]) for e in truth), doc["verdict"]
    for t in truth:
        (f,) = [e for e in found if e["kind"] == t["kind"] and e["phase"] == t["phase"]]
        ref = t.get("rest_s", t["start_s"]) if t["kind"] == "stall" else t["start_s"]
        assert abs(f["start_s"] - ref) < 0.05, (t, f["start_s"])
        if t["kind"] == "start":
            assert f["figures"]["success"] is (t["outcome"] == "accelerated")


@pytest.mark.parametrize("path", PATHS, ids=lambda p: p.stem)
def test_without_nameplate_no_x_fla_and_no_negative_duration(path, unrated):
    """No "x FLA" text or per-unit-of-FLA figure without an FLA; every duration >= 0 (a duration is never negative)."""
    doc = unrated[path.stem]
    assert not [t for t in _texts(doc) if "x FLA" in t]
    assert not [k for e in doc["events"] for k in e["figures"] if "pu_fla" in k]
    assert doc["summary"]["max_line_current_x_fla"] is None
    assert _durations_ok(doc) == []


@pytest.mark.parametrize("path", sorted((Path(__file__).parent / "data" / "golden").glob("*.json")), ids=lambda p: p.stem)
def test_with_nameplate_no_negative_duration(path):
    """The same duration property on the stored results of every sample with its nameplate (pinned to a fresh
    analysis by test_golden_results)."""
    assert _durations_ok(json.loads(path.read_text())) == []


def test_jam_without_nameplate_is_a_stall_against_the_running_current(unrated):
    """jam.h5: the motor ran at 49.5 A, then locked at 362.7 A (truth windows 'running' and 'stalled').

    The stall is reported as a ratio to the running current before it (7.3), never as x FLA.
    """
    truth = {w["name"]: w for w in _truth(SAMPLES / "jam.h5")["windows"]}
    ratio = truth["stalled"]["I_rms"]["a"] / truth["running"]["I_rms"]["a"]
    (st,) = [e for e in unrated["jam"]["events"] if e["kind"] == "stall"]
    assert st["figures"]["i_over_running"] == pytest.approx(ratio, rel=0.03)
    assert "running current" in unrated["jam"]["verdict"]


def test_start_open_line_without_nameplate_is_a_failed_start(unrated):
    """start_open_line.h5: single-phased from energisation, no starting torque (truth: speed 0, outcome 'failed')."""
    doc = unrated["start_open_line"]
    (start,) = [e for e in doc["events"] if e["kind"] == "start"]
    assert start["figures"]["success"] is False
    assert start["figures"]["acceleration_time_s"] is None
    assert "successful start" not in doc["verdict"]
    assert "could not start" in doc["verdict"]


# -- de-energised stretches -----------------------------------------------------------------------
@pytest.fixture(scope="module")
def jam_64s() -> dict:
    """The jam scenario run for 64 s, the relay opening all lines at 36 s (28 s of a dead circuit: 0.15 V of noise)."""
    data = tomllib.loads((SAMPLES / "jam.scenario.toml").read_text())
    data["scenario"]["duration_s"] = 64.0
    data["switches"]["ops"] = [{"line": c, "time_s": 36.0, "action": "open"} for c in "ABC"]
    data["truth"] = {"windows": [{"name": "running", "start_s": 1.0, "end_s": 2.9}]}
    cap, truth = simulate(scenario_from_dict(data, "jam64", base=SAMPLES))
    res = analyze(cap, speed=False)
    return {"doc": result_dict(res), "cycles": res.cycles, "truth": truth}


def test_jam_64s_long_stall_onset_at_the_true_standstill(jam_64s):
    """A 33 s stall: its onset is where the rotor stopped (the simulator's truth), within a cycle.

    The locked rotor's impedance drifts slowly over a long stall (about 1.5 % in 30 s here); compared
    with its final value only, the onset came out at 17.2 s instead of 3.33 s.  Truth from the
    simulator's own rotor speed (no external source; the physics: at standstill the rotor branch
    r2/s is constant, any machines textbook's equivalent circuit).
    """
    (t_true,) = [e["start_s"] for e in jam_64s["truth"]["events"] if e["kind"] == "stall"]
    stalls = [e for e in jam_64s["doc"]["events"] if e["kind"] == "stall"]
    assert len(stalls) == 1
    assert abs(stalls[0]["start_s"] - t_true) <= 1.0 / 60.0


def test_jam_64s_dead_circuit_gives_no_unbalance(jam_64s):
    """No unbalance event from a de-energised circuit; the dead stretch is a timeline state.

    Physics bound: the three line-to-line voltages of any three-phase set have a NEMA unbalance of at most
    200 % (max deviation from the mean of three non-negative numbers, NEMA MG-1 14.36 definition), and a supply
    that feeds a motor at locked rotor on three lines has V2 < V1; a de-energised circuit has no unbalance at all.
    """
    doc = jam_64s["doc"]
    assert not [e for e in doc["events"] if e["kind"] == "unbalance"], doc["verdict"]
    assert "unbalance" not in doc["verdict"]
    assert doc["summary"]["states_s"].get("de-energised", 0.0) > 27.0
    for k in ("max_I2_I1_pct", "max_V2_V1_pct"):
        assert doc["summary"][k] is not None and doc["summary"][k] <= 100.0
    assert doc["summary"]["max_V_unbal_nema_pct"] <= 200.0


def test_jam_64s_ratio_columns_absent_while_dead(jam_64s):
    """Every ratio/unbalance column is NaN with a reason in the cycles after the relay opened (36 s + 2 cycles)."""
    cyc = jam_64s["cycles"]
    dead = cyc["t_s"].to_numpy(float) > 36.05
    for c in ("V2_V1_pct", "V_unbal_vuf_pct", "V_unbal_nema_pct", "I2_I1_pct", "I_unbal_nema_pct", "PF"):
        assert np.isnan(cyc.loc[dead, c].to_numpy(float)).all(), c
    assert (cyc.loc[dead, "level_gate"].str.len() > 0).all()
    live = cyc["t_s"].to_numpy(float) < 35.9
    assert (cyc.loc[live, "level_gate"] == "").all()
    assert np.isfinite(cyc.loc[live, "V2_V1_pct"].to_numpy(float)).all()


@pytest.mark.parametrize("name", ["open_phase_stall", "start_open_line", "jam"])
def test_summary_ratio_maxima_within_physics(name):
    """open_phase_stall gave max V2/V1 = 2281 % from a decaying rotor voltage after switching off (issue 17/18).

    Bound: with one line open V2/V1 = I2/I1 = 100 % (truth windows of these samples: V1 = V2, I1 = I2; Fortescue);
    a live supply never exceeds it, so no summary maximum above 100 % (tolerance 1 point for noise).
    """
    doc = json.loads((Path(__file__).parent / "data" / "golden" / f"{name}.result.json").read_text())
    for k in ("max_I2_I1_pct", "max_V2_V1_pct"):
        assert doc["summary"][k] <= 101.0, (k, doc["summary"][k])


def test_gate_on_hand_made_table():
    """A hand-made cycle table: a live and a dead row; gate 10 % of 400 V (IEC 61000-4-30 5.5) and 5 % of 10 A."""
    import pandas as pd

    from waveforms.measure.gate import gate_cycles

    cyc = pd.DataFrame({"t_s": [0.01, 0.03], "Vab_mag": [400.0, 0.1], "V1": [400.0, 0.1], "V2_V1_pct": [1.0, 90.0],
                        "V_unbal_nema_pct": [0.5, 60.0], "I1": [10.0, 0.01], "I2_I1_pct": [2.0, 3000.0], "PF": [0.8, 0.1]})
    out, notes = gate_cycles(cyc, declared_ll_v=400.0, fla_a=10.0)
    assert out["V2_V1_pct"].tolist()[0] == 1.0 and math.isnan(out["V2_V1_pct"].tolist()[1])
    assert math.isnan(out["I2_I1_pct"].iloc[1]) and math.isnan(out["PF"].iloc[1]) and out["PF"].iloc[0] == 0.8
    assert out["level_gate"].tolist()[0] == "" and "IEC 61000-4-30" in out["level_gate"].iloc[1]
    assert len(notes) == 2
    assert cyc["V2_V1_pct"].iloc[1] == 90.0  # the input is not modified
