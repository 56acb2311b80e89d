"""RMS trend logs (waveforms.io.trend, waveforms.trends) against the simulator's truth and IEC 61000-4-30.

The trend logs are computed from one simulated run (invented scenario
sample_captures/trend/booster_trend.scenario.toml: a start at 2.0 s, a three-phase dip to 70 % from
20.0 to 20.5 s, line C open from 32.0 to 44.0 s, a jam at 52.0 s) at two resolutions, one row per
cycle and one per second.  The truth is the simulator's (switch instants, supply dip, rest instant);
every event the trend analysis finds must lie within one log interval of it.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from waveforms.cli import cli
from waveforms.detect import DetectParams
from waveforms.errors import CaptureReadError
from waveforms.io import read_capture
from waveforms.io.trend import is_trend_log, map_columns, read_trend
from waveforms.motor.nameplate import load_nameplate
from waveforms.trends.analysis import analyze_trend
from waveforms.trends.detect import LIMITS, TrendInput, supply_events
from waveforms.trends.result import trend_result_dict

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
PLATE = SAMPLES / "pump2.nameplate.toml"


@pytest.fixture(scope="module")
def logs(tmp_path_factory):
    """Per-cycle (Parquet) and per-second (CSV) trend logs of one simulated run, with its truth."""
    from waveforms.sim.sequence import load_layout_scenario
    from waveforms.sim.simulate import run
    from waveforms.sim.trend_log import write_trend_log

    out = tmp_path_factory.mktemp("trend")
    sc, lay = load_layout_scenario(SAMPLES / "trend" / "booster_trend.scenario.toml", "trend")
    sim = run(sc)
    truth = write_trend_log(sc, out / "per_second.csv", 1.0, sim=sim)
    write_trend_log(sc, out / "per_cycle.parquet", 1 / 60, sim=sim)
    return {"per_second": out / "per_second.csv", "per_cycle": out / "per_cycle.parquet"}, truth


def _truth(truth, kind):
    return [e for e in truth["events"] if e["kind"] == kind]


@pytest.mark.parametrize("which", ["per_second", "per_cycle"])
def test_trend_events_lie_within_one_interval_of_the_truth(logs, which):
    # source: the simulator's truth (commanded switch instants, the supply's dip, the rotor's rest instant)
    paths, truth = logs
    log = read_trend(paths[which])
    res = analyze_trend(log, load_nameplate(PLATE), nominal_voltage_v=460)
    dt = log.resolution_s
    got = {k: [e for e in res.events if e.kind == k] for k in ("open_phase", "dip", "start", "stall")}
    (op,), (want_op,) = got["open_phase"], _truth(truth, "open_phase")
    assert op.phase == want_op["phase"] == "C"
    assert abs(op.start_s - want_op["start_s"]) <= dt and abs(op.end_s - want_op["end_s"]) <= dt
    (dip,), (want_dip,) = got["dip"], _truth(truth, "dip")
    assert abs(dip.start_s - want_dip["start_s"]) <= dt and abs(dip.end_s - want_dip["end_s"]) <= dt
    (st,), (want_st,) = got["start"], _truth(truth, "start")
    assert st.figures["success"] and abs(st.start_s - want_st["start_s"]) <= dt
    # the truth ends the start at 0.9 of synchronous speed; a trend log has no speed, so the end is the first
    # interval below half the locked-rotor current: within one interval or 0.15 s of it (no external source)
    assert abs(st.end_s - want_st["end_s"]) <= max(dt, 0.15)
    (sl,), (want_sl,) = got["stall"], _truth(truth, "stall")
    # a trend log cannot tell pull-out from standstill: the onset lies between them, within one interval
    assert want_sl["pull_out_s"] - dt <= sl.start_s <= want_sl["rest_s"] + dt
    assert sl.end_s is None and want_sl["end_s"] is None
    for e in res.events:
        assert e.figures["resolution_s"] == dt
    assert not [e for e in res.events if e.kind in ("unbalance", "swell", "interruption")]


def test_per_cycle_dip_residual_matches_the_simulated_dip(logs):
    # source: simulator truth residual 0.7 pu of the source EMF; at the motor terminals the source
    # impedance drop makes it a little deeper; one-cycle RMS sees it, a one-second RMS averages it away
    paths, truth = logs
    (want,) = _truth(truth, "dip")
    cyc = [e for e in analyze_trend(read_trend(paths["per_cycle"]), None, nominal_voltage_v=460).events if e.kind == "dip"][0]
    sec = [e for e in analyze_trend(read_trend(paths["per_second"]), None, nominal_voltage_v=460).events if e.kind == "dip"][0]
    assert cyc.figures["residual_pct"] == pytest.approx(100 * want["residual_pu"], abs=2.0)
    assert sec.figures["residual_pct"] > cyc.figures["residual_pct"] + 10


def test_without_nameplate_stall_is_not_assessed(logs):
    # no external source: the locked-rotor current comes from the nameplate only
    paths, _ = logs
    res = analyze_trend(read_trend(paths["per_second"]), None)
    assert not [e for e in res.events if e.kind == "stall"]
    assert any("stall not assessed" in n for n in res.notes)
    assert "Stall not assessed" in res.verdict


def test_iec_61000_4_30_polyphase_dip_hysteresis():
    # IEC 61000-4-30:2015 clause 5.4.2.2: a polyphase dip begins when one channel falls below the dip
    # threshold (90 %) and ends when all channels are at or above threshold + hysteresis (2 %);
    # clause 5.5.2: an interruption when all channels fall below the interruption threshold.
    t = np.arange(10.0)
    v = np.full((3, 10), 100.0)
    v[0, 2] = 85.0     # begins: one channel below 90
    v[1, 3] = 91.0     # still in the dip: above 90 but below 92 (hysteresis)
    v[2, 4] = 91.5
    v[:, 7] = 3.0      # all channels below 10 %: an interruption
    inp = TrendInput(t_s=t, resolution_s=1.0, i_a=None, v_v=v, v_ll=False, fla_a=None, lra_a=None, declared_v=100.0)
    ev = supply_events(inp, DetectParams())
    assert [(e.kind, e.start_s, e.end_s) for e in ev] == [("dip", 2.0, 5.0), ("interruption", 7.0, 8.0)]
    # only line A fell below the threshold; B and C stayed inside the hysteresis band that kept the dip going
    assert ev[0].phase == "A" and ev[0].figures["phases"] == "A" and ev[0].figures["residual_pct"] == 85.0


def test_result_json_follows_the_schema_and_says_what_a_trend_log_cannot_show(logs):
    # no external source: the shipped JSON Schema (result.schema.json, docs/result.md)
    from waveforms.report.result_json import validate

    paths, _ = logs
    doc = trend_result_dict(analyze_trend(read_trend(paths["per_second"]), load_nameplate(PLATE)))
    validate(doc)
    assert doc["trend"]["cannot_show"] == list(LIMITS) and doc["speed"]["available"] is False
    assert all(e["resolution_s"] == 1.0 for e in doc["events"])


def test_headers_rms_spellings_and_the_waveform_refusal(tmp_path):
    # no external source: the RMS spellings the trend importer takes are the ones the waveform reader refuses
    t, cols = map_columns(["Timestamp", "Va_rms", "Vb_rms", "Vc_rms", "Ia_rms", "Ib_rms", "Ic_rms", "PF", "f [Hz]"])
    assert t == "Timestamp" and {"Va_rms", "Ia_rms", "PF", "frequency_hz"} <= set(cols)
    p = tmp_path / "log.csv"
    pd.DataFrame({"Time": ["2026-01-01T00:00:00+01:00", "2026-01-01T00:00:01+01:00"], "Irms L1": [1, 2],
                  "Irms L2": [1, 2], "Irms L3": [1, 2], "P [W]": [1000.0, 2000.0]}).to_csv(p, index=False)
    assert is_trend_log(p)
    both = tmp_path / "both.csv"  # waveform channels beside RMS columns: a waveform capture, not a trend log
    both.write_text("Time,Va,Vb,Vc,Ia_rms,Ib_rms,Ic_rms\n0,1,1,1,1,1,1\n")
    assert not is_trend_log(both)
    log = read_trend(p)
    assert log.resolution_s == 1.0 and log.table["P_kW"].tolist() == [1.0, 2.0]
    with pytest.raises(CaptureReadError, match="RMS trend log"):
        read_capture(p, format="trend")
    with pytest.raises(CaptureReadError, match="trend log"):  # the CSV importer's refusal points to the trend analysis
        read_capture(p)
    bad = tmp_path / "bad.csv"
    bad.write_text("Time,Ia_rms,Ib_rms,Ic_rms\n2026-01-01T00:00:01Z,1,1,1\n2026-01-01T00:00:00Z,1,1,1\n")
    with pytest.raises(CaptureReadError, match=r"bad\.csv: column 'Time' row 2: times must increase"):
        read_trend(bad)
    wave = tmp_path / "wave.csv"
    wave.write_text("t,Va,Ia,Ia_rms\n0,1,1,1\n")
    with pytest.raises(CaptureReadError, match=r"Ia_rms.*trend log.*ignore = \['Ia_rms'\]"):
        read_capture(wave)


def test_analyze_and_batch_recognise_the_bundled_trend_log(tmp_path):
    # no external source: the command line picks the trend recipe by the file's columns
    sample = SAMPLES / "trend" / "booster_trend.csv"
    truth = json.loads((SAMPLES / "trend" / "booster_trend.truth.json").read_text())
    r = CliRunner().invoke(cli, ["analyze", str(sample), "--motor", str(PLATE), "--out", str(tmp_path / "a")])
    assert r.exit_code == 0, r.output
    doc = json.loads((tmp_path / "a" / "result.json").read_text())
    assert doc["capture"]["importer"] == "trend" and (tmp_path / "a" / "report.html").is_file()
    assert "cannot show" in (tmp_path / "a" / "report.html").read_text()
    kinds = sorted(e["kind"] for e in doc["events"])
    assert kinds == sorted(e["kind"] for e in truth["events"])  # start, dip, open phase, stall
    from waveforms.batch import run

    res = run([SAMPLES / "trend"], out=tmp_path / "b", jobs=1, motor=PLATE, fresh_workers=False)
    row = res.summary.iloc[0]
    assert row["status"] == "ok" and row["verdict"] == "open phase + stall + dip"
    assert set(res.incidents["kind"]) == {"open_phase", "stall"}
