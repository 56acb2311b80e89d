"""A time-stamp gap splits the analysis (issue 20): no event spans it, its samples are never allocated.

Behaviour checks of the package's own rules (waveforms.segments): no external source.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path

import numpy as np
from click.testing import CliRunner

from waveforms import timebase
from waveforms.capture import Gap
from waveforms.cli import cli
from waveforms.detect.event import Event
from waveforms.segments import GappedSource, clip_events, place_gapped

sys.path.insert(0, str(Path(__file__).resolve().parent))
from _hostile_support import _csv, _rows, _time_col  # noqa: E402


def test_gapped_source_reads_as_the_full_grid():
    """Every read of a GappedSource equals the same range of place_on_grid's full NaN-filled array (no external source)."""
    rng = np.random.default_rng(7)
    t = np.arange(2000) / 1000.0
    t[500:] += 0.25  # 250 missing samples
    t[1500:] += 1.0  # 1000 more
    vals = rng.normal(size=(3, t.size))
    rep = timebase.analyse_stamps(t)
    full, gaps_full = timebase.place_on_grid(vals, rep)
    src, gaps = place_gapped(vals, rep)
    assert isinstance(src, GappedSource) and src.n_samples == full.shape[1]
    assert [(g.start_index, g.stop_index) for g in gaps] == [(g.start_index, g.stop_index) for g in gaps_full]
    for a, b in [(0, full.shape[1]), (490, 760), (600, 700), (1740, 1760), (3000, 3250), (0, 0)]:
        np.testing.assert_array_equal(src.read(a, b, [2, 0]), full[[2, 0], a:b])
    assert src._values.nbytes == vals.nbytes  # only the rows are stored, not the gap


def test_events_are_cut_at_a_gap_and_a_resumed_start_is_dropped():
    """An event reaching into a gap ends at its start; a start at the gap's end is dropped (no external source)."""
    gaps = [(10.0, 3610.0)]
    dip = Event("dip", "A", 9.0, 3611.0, "dip")
    start = Event("start", None, 3610.02, 3612.0, "start")
    stall = Event("stall", None, 3610.01, None, "stall")
    later = Event("dip", "B", 3620.0, 3621.0, "dip")
    out, notes = clip_events([dip, start, stall, later], gaps)
    assert [e.kind for e in out] == ["dip", "stall", "dip"]
    assert out[0].end_s == 10.0 and out[0].figures["cut_at_gap_s"] == 10.0
    assert out[1].start_s == 3610.01 and out[1].figures["present_when_data_resumed"]
    assert out[2] == later
    assert any("dropped" in n for n in notes)
    for e in out:
        end = np.inf if e.end_s is None else e.end_s
        assert not (e.start_s < 10.0 < end) and not (10.0 <= e.start_s < 3610.0)  # none spans or lies in the gap


def _gap_of(seconds: float):
    def change(t: np.ndarray) -> np.ndarray:
        t = t.copy()
        t[2500:] += seconds
        return t
    return change


def test_a_gap_in_a_csv_splits_the_analysis(tmp_path: Path):
    """analyze on a CSV with a 30 s gap: no event spans it, no start at the resumption, a "no data" period (no external source)."""
    path = _csv(_rows(_time_col(_gap_of(30.0))), "gap30.csv")(tmp_path)
    res = CliRunner().invoke(cli, ["analyze", str(path), "--out", str(tmp_path / "out"), "--no-html", "--no-speed"])
    assert res.exit_code == 0, res.output
    doc = json.loads((tmp_path / "out" / "result.json").read_text(encoding="utf-8"))
    g0, g1 = 0.5, 30.5
    for e in doc["events"]:
        end = np.inf if e["end_s"] is None else e["end_s"]
        assert not (e["start_s"] < g0 < end), e
        assert not (g0 <= e["start_s"] < g1 + 0.06), e
    assert "successful start" not in doc["verdict"] and "30.5" not in doc["verdict"]
    nodata = [p for p in doc["timeline"] if p["state"] == "no data"]
    assert len(nodata) == 1 and nodata[0]["start_s"] <= g0 + 0.02 and nodata[0]["end_s"] >= g1 - 0.02
    assert any("split the analysis" in n for n in doc["notes"])


def test_the_gap_is_not_allocated(tmp_path: Path):
    """Reading the one-hour-gap CSV stores the rows only: a few MB, not 18 million samples per channel (no external source)."""
    from _hostile_support import _gap
    from waveforms.io import read_capture

    path = _csv(_rows(_time_col(_gap)), "gap.csv")(tmp_path)
    cap = read_capture(path)
    assert cap.n_samples == 5000 + 3600 * 5000
    assert isinstance(cap.source, GappedSource)
    assert cap.source._values.nbytes <= 6 * 5000 * 8
    assert cap.gaps and isinstance(cap.gaps[0], Gap)
    assert np.isnan(cap.read(1_000_000, 1_000_010)).all()
