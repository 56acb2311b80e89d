"""End to end: every bundled sample capture's ground truth is reproduced by `analyze`.

The truth files (`sample_captures/*.truth.json`) are written by the simulator
from its own switching record and rotor speed (waveforms.sim): open-phase
onset = the current zero at which the line's switch interrupted, stall =
rotor speed below 5 % of synchronous (the truth file's ``definitions``).
Tolerances are those the issue asks for: open-phase onset within 2 ms, stall
start/end within 100 ms, right line, right upstream/downstream call, and no
event of a kind the truth does not list.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from waveforms.analysis import analyze
from waveforms.io import read_capture
from waveforms.report import result_dict, validate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
TRUTHS = sorted(SAMPLES.glob("*.truth.json"))


def _capture_file(truth: Path) -> Path:
    stem = truth.name[: -len(".truth.json")]
    for ext in (".h5", ".csv"):
        p = SAMPLES / f"{stem}{ext}"
        if p.exists():
            return p
    raise AssertionError(f"no capture file for {truth.name}")


_CACHE: dict[str, tuple] = {}


def _analysed(truth: Path):
    if truth.name not in _CACHE:
        cap = read_capture(_capture_file(truth))
        _CACHE[truth.name] = (json.loads(truth.read_text()), analyze(cap, speed=False, quality=False))
    return _CACHE[truth.name]


def test_samples_are_bundled():
    # guards the parametrised tests below against passing on an empty folder
    assert len(TRUTHS) >= 8
    kinds = {e["kind"] for t in TRUTHS for e in json.loads(t.read_text())["events"]}
    assert {"open_phase", "stall", "start", "dip", "unbalance"} <= kinds


@pytest.mark.parametrize("truth", TRUTHS, ids=lambda p: p.name.split(".")[0])
def test_no_event_of_a_wrong_kind(truth):
    doc, res = _analysed(truth)
    expected = {e["kind"] for e in doc["events"]}
    found = {e.kind for e in res.events}
    assert found <= expected, f"unexpected {found - expected}: {[e.summary for e in res.events]}"
    for kind in expected:
        assert res.events_of(kind), f"missed {kind}"


@pytest.mark.parametrize("truth", [t for t in TRUTHS if any(e["kind"] == "open_phase" for e in json.loads(t.read_text())["events"])],
                         ids=lambda p: p.name.split(".")[0])
def test_open_phase_onset_line_and_location(truth):
    doc, res = _analysed(truth)
    want = [e for e in doc["events"] if e["kind"] == "open_phase"]
    got = res.events_of("open_phase")
    assert len(got) == len(want)
    for w, g in zip(want, got, strict=True):
        assert g.phase == w["phase"]
        assert abs(g.start_s - w["start_s"]) <= 0.002  # issue 6: onset within 2 ms
        assert g.figures["location"] == w["location"]
        if w["end_s"] is None:
            assert g.end_s is None
        else:
            assert g.end_s is not None and abs(g.end_s - w["end_s"]) <= 0.005


@pytest.mark.parametrize("truth", [t for t in TRUTHS if any(e["kind"] == "stall" for e in json.loads(t.read_text())["events"])],
                         ids=lambda p: p.name.split(".")[0])
def test_stall_start_and_end(truth):
    doc, res = _analysed(truth)
    want = [e for e in doc["events"] if e["kind"] == "stall"]
    got = res.events_of("stall")
    assert len(got) == len(want)
    for w, g in zip(want, got, strict=True):
        assert abs(g.start_s - w["start_s"]) <= 0.100  # issue 6: stall start within 100 ms
        assert g.end_s is not None and abs(g.end_s - w["end_s"]) <= 0.100


@pytest.mark.parametrize("truth", [t for t in TRUTHS if any(e["kind"] == "start" for e in json.loads(t.read_text())["events"])],
                         ids=lambda p: p.name.split(".")[0])
def test_start_outcome(truth):
    doc, res = _analysed(truth)
    want = [e for e in doc["events"] if e["kind"] == "start"]
    got = res.events_of("start")
    assert len(got) == len(want)
    for w, g in zip(want, got, strict=True):
        assert abs(g.start_s - w["start_s"]) <= 0.002  # energisation refined to the sample
        assert g.figures["success"] is (w["outcome"] == "accelerated")
        if w["outcome"] == "accelerated":
            # our end of start is "current back to 110 % of running" (relay practice), later than the
            # truth's 90 % speed: it must not be earlier, and not more than 0.5 s later
            assert 0.0 <= g.end_s - w["end_s"] <= 0.5


@pytest.mark.parametrize("truth", [t for t in TRUTHS if any(e["kind"] == "dip" for e in json.loads(t.read_text())["events"])],
                         ids=lambda p: p.name.split(".")[0])
def test_dip_timing_and_residual(truth):
    doc, res = _analysed(truth)
    want = [e for e in doc["events"] if e["kind"] == "dip"]
    got = res.events_of("dip")
    assert len(got) == len(want)
    for w, g in zip(want, got, strict=True):
        assert g.phase == w["phase"]
        # IEC 61000-4-30 5.4: Urms(1/2) is time-stamped at the end of its one-cycle window and refreshed
        # every half cycle, so start and end lag the source change by up to about 1.5 cycles
        cyc = 1.0 / doc["supply"]["frequency_hz"]
        assert 0.0 <= g.start_s - w["start_s"] <= 1.5 * cyc
        assert 0.0 <= g.end_s - w["end_s"] <= 1.5 * cyc + 0.010
        # residual at the logger is the source residual less the source-impedance drop: within 5 points
        assert abs(g.figures["residual_pct"] - 100 * w["residual_pu"]) <= 5.0


@pytest.mark.parametrize("truth", [t for t in TRUTHS if t.name.startswith("open_phase_stall")], ids=lambda p: "open_phase_stall")
def test_single_phased_then_stalled_story(truth):
    doc, res = _analysed(truth)
    op = res.events_of("open_phase")[0]
    assert op.figures["motor_state"] == "ran single-phased, then stalled"
    assert {"single-phased", "single-phased, stalled"} <= set(res.timeline["state"])
    assert "single-phased" in res.verdict and "stalled" in res.verdict


@pytest.mark.parametrize("truth", TRUTHS, ids=lambda p: p.name.split(".")[0])
def test_result_json_validates(truth):
    _, res = _analysed(truth)
    doc = result_dict(res)
    validate(doc)  # JSON Schema shipped in waveforms/report/result.schema.json
    assert doc["events"] == json.loads(json.dumps(doc["events"], allow_nan=False))
