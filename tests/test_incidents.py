"""Incidents across consecutive captures (waveforms.incidents) against the simulator's truth.

The bundled sequence (sample_captures/sequence, invented scenario) is one 27 s simulated run cut
into four 6 s files with 1 s gaps; line B is open from 8.5 s to 23.0 s.  Its truth file
(written by waveforms.sim.sequence from the simulated switch instants) gives the incident's
boundaries; the join must find them within the files' resolution (one cycle at 60 Hz).
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import pandas as pd
import pytest

from waveforms.errors import InvalidParameterError
from waveforms.incidents import build_incidents, site_timelines

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
SEQ = SAMPLES / "sequence"
CYCLE_S = 1 / 60


def _summary(files):
    """A batch summary of captures (file, site, start, duration) with status ok."""
    return pd.DataFrame({"file": [f[0] for f in files], "site": [f[1] for f in files], "status": "ok",
                         "start": [f[2].isoformat() for f in files], "duration_s": [f[3] for f in files]})


def _events(rows):
    return pd.DataFrame.from_records(
        [{"file": r[0], "kind": r[1], "phase": r[2], "start_s": r[3], "end_s": r[4], "figures_json": json.dumps(r[5] if len(r) > 5 else {})}
         for r in rows], columns=["file", "kind", "phase", "start_s", "end_s", "figures_json"])


T0 = dt.datetime(2026, 5, 14, 22, 0, tzinfo=dt.timezone(dt.timedelta(hours=-5)))


def _at(s):
    return T0 + dt.timedelta(seconds=s)


@pytest.fixture(scope="module")
def batch_run(tmp_path_factory):
    from waveforms.batch import run

    out = tmp_path_factory.mktemp("seq")
    res = run([SEQ], out=out, jobs=1, motor=SAMPLES / "pump2.nameplate.toml", recipe="triage", fresh_workers=False)
    return res, json.loads((SEQ / "booster_sequence.sequence.truth.json").read_text())


def test_open_phase_over_three_files_is_one_incident_with_the_true_boundaries(batch_run):
    # source: the simulator's truth (switch instants of the simulated run), waveforms.sim.sequence
    res, truth = batch_run
    (want,) = truth["incidents"]
    inc = res.incidents[res.incidents["kind"] == "open_phase"]
    assert len(inc) == 1
    got = inc.iloc[0]
    assert got["line"] == want["line"] == "B"
    assert got["first_file"] == want["first_file"] and got["last_file"] == want["last_file"]
    assert got["files_spanned"] == want["n_files"] == 3
    t_first = dt.datetime.fromisoformat(got["first_onset"])
    t_last = dt.datetime.fromisoformat(got["last_seen"])
    assert abs((t_first - dt.datetime.fromisoformat(want["first_seen_time"])).total_seconds()) <= CYCLE_S
    assert abs((t_last - dt.datetime.fromisoformat(want["last_seen_time"])).total_seconds()) <= CYCLE_S
    assert got["gap_not_covered_s"] == pytest.approx(want["gap_not_covered_s"], abs=1e-3)
    assert not got["open_when_recording_began"]


def test_thermal_state_is_carried_into_the_files_that_begin_single_phased(batch_run):
    # no external source: files 3 and 4 begin single-phased (about 2 x FLA heating), where their own
    # initial state is cold; following file 2 by 1 s they start from its end state instead.
    res, _ = batch_run
    tab = res.thermal_carry.set_index("file")
    assert (res.out / "thermal_carry.csv").is_file()
    for f, prev in (("booster_sequence_3.h5", "booster_sequence_2.h5"), ("booster_sequence_4.h5", "booster_sequence_3.h5")):
        r = tab.loc[f]
        assert r["own_initial_pct"] == pytest.approx(0.0, abs=1e-9)
        assert r["carried_from"] == prev and r["gap_s"] == pytest.approx(1.0, abs=0.01)
        assert r["initial_pct"] >= tab.loc[prev, "end_pct"] - 1e-9 > 40.0  # heated on over the gap, never cooler
        assert r["basis"].startswith(f"initial state carried from {prev}, ended at ")
    assert tab["end_pct"].is_monotonic_increasing  # the motor runs hot and single-phased from file 2 on


def test_incident_files_and_timeline_are_written(batch_run):
    # no external source: the files exist, agree with the frame, and the page holds one figure per site
    res, _ = batch_run
    csv = pd.read_csv(res.files["incidents_csv"])
    pq = pd.read_parquet(res.files["incidents_parquet"])
    assert len(csv) == len(pq) == len(res.incidents)
    page = res.files["html"].read_text()
    assert page.count("<svg") == 1 and "Site timelines" in page


def test_no_predecessor_says_already_open_when_recording_began():
    # no external source: the first file of a site starts with the open phase
    s = _summary([("f3.h5", "yard", _at(14), 6.0), ("f4.h5", "yard", _at(21), 6.0)])
    e = _events([("f3.h5", "open_phase", "B", 0.013, None, {"present_at_capture_start": True}),
                 ("f4.h5", "open_phase", "B", 0.013, 2.0, {"present_at_capture_start": True})])
    (r,) = build_incidents(s, e).to_dict("records")
    assert r["open_when_recording_began"] and "already open when recording began" in r["note"]
    assert r["first_file"] == "f3.h5" and r["last_file"] == "f4.h5" and r["duration_s"] == pytest.approx(6.987 + 2.0)
    assert "already open when recording began" in site_timelines(s, build_incidents(s, e))[0]["began_open"][0]


def test_a_gap_longer_than_the_tolerance_breaks_the_incident():
    # no external source: 120 s between files > the 60 s default
    s = _summary([("a.h5", "yard", _at(0), 10.0), ("b.h5", "yard", _at(130), 10.0)])
    e = _events([("a.h5", "stall", None, 4.0, None), ("b.h5", "stall", None, 0.0, 3.0)])
    inc = build_incidents(s, e)
    assert len(inc) == 2 and not inc["open_when_recording_began"].any()
    assert "exceeds the gap tolerance" in inc.iloc[1]["note"]
    joined = build_incidents(s, e, gap_tolerance_s=200.0)
    assert len(joined) == 1 and joined.iloc[0]["gap_not_covered_s"] == pytest.approx(120.0)
    assert joined.iloc[0]["duration_s"] == pytest.approx(133.0 - 4.0)


def test_sites_lines_and_order_are_kept_apart():
    # no external source: files given out of order; another line, another site, never joined
    s = _summary([("b.h5", "yard", _at(11), 10.0), ("a.h5", "yard", _at(0), 10.0), ("c.h5", "dock", _at(11), 10.0)])
    e = _events([("a.h5", "open_phase", "A", 5.0, None), ("b.h5", "open_phase", "C", 0.0, 4.0),
                 ("c.h5", "open_phase", "A", 0.0, 4.0)])
    inc = build_incidents(s, e)
    assert len(inc) == 3 and set(inc["files_spanned"]) == {1}
    e2 = _events([("b.h5", "open_phase", "A", 0.0, 4.0), ("a.h5", "open_phase", "A", 5.0, None)])
    (r,) = build_incidents(s, e2).to_dict("records")
    assert r["files"] == "a.h5; b.h5" and r["gap_not_covered_s"] == pytest.approx(1.0)


def test_failed_start_series_and_site_pattern():
    # no external source: two failed attempts 5 minutes apart in two files of one motor; site from the name
    s = _summary([("m7_0001.h5", "x", _at(0), 60.0), ("m7_0002.h5", "x", _at(300), 60.0),
                  ("m8_0001.h5", "x", _at(300), 60.0)])
    e = _events([("m7_0001.h5", "start", None, 10.0, 12.0, {"success": False, "inrush_pu_fla": 6.1}),
                 ("m7_0002.h5", "start", None, 20.0, 23.0, {"success": False, "inrush_pu_fla": 6.3}),
                 ("m8_0001.h5", "start", None, 20.0, 21.0, {"success": True})])
    inc = build_incidents(s, e, site_from=r"^(?P<site>m\d+)_")
    (r,) = inc.to_dict("records")
    assert r["site"] == "m7" and r["kind"] == "failed_starts" and r["n_events"] == 2 and r["worst_current_x_fla"] == 6.3
    with pytest.raises(InvalidParameterError, match="site_from"):
        build_incidents(s, e, site_from="(")


def test_trend_files_give_incidents_within_one_interval(tmp_path):
    # source: the simulator's truth of the bundled trend log (sample_captures/trend, invented scenario):
    # line C open 32.0-44.0 s, stall from the rest instant 52.4 s to the end. The log is cut into three
    # consecutive files with one-row gaps; the incidents must keep the true boundaries within one interval.
    from waveforms.batch import run

    src = SAMPLES / "trend"
    truth = json.loads((src / "booster_trend.truth.json").read_text())
    rows = pd.read_csv(src / "booster_trend.csv")
    site = tmp_path / "harwick"
    site.mkdir()
    for k, (a, b) in enumerate(((0, 35), (36, 50), (51, 60))):
        rows.iloc[a:b].to_csv(site / f"trend_{k + 1}.csv", index=False)
    res = run([site], out=tmp_path / "out", jobs=1, motor=SAMPLES / "pump2.nameplate.toml", fresh_workers=False)
    t0 = dt.datetime.fromisoformat(truth["start_time"])
    inc = res.incidents.set_index("kind")
    (op,) = [e for e in truth["events"] if e["kind"] == "open_phase"]
    got = inc.loc["open_phase"]
    assert got["line"] == "C" and got["files_spanned"] == 2 and got["resolution_s"] == 1.0
    assert abs((dt.datetime.fromisoformat(got["first_onset"]) - t0).total_seconds() - op["start_s"]) <= 1.0
    assert abs((dt.datetime.fromisoformat(got["last_seen"]) - t0).total_seconds() - op["end_s"]) <= 1.0
    assert got["gap_not_covered_s"] == pytest.approx(1.0)
    (st,) = [e for e in truth["events"] if e["kind"] == "stall"]
    got = inc.loc["stall"]
    assert st["pull_out_s"] - 1.0 <= (dt.datetime.fromisoformat(got["first_onset"]) - t0).total_seconds() <= st["rest_s"] + 1.0
    assert got["still_present_at_end"] and got["last_file"] == "trend_3.csv"
