"""The simulator's consecutive files and trend logs (waveforms.sim.sequence, waveforms.sim.trend_log)."""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import numpy as np
import pytest

from waveforms.sim.sequence import file_spans_s, incident_truth
from waveforms.sim.trend_log import trend_frame

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
T0 = dt.datetime(2026, 5, 14, 22, 0, tzinfo=dt.timezone.utc)


def test_incident_truth_counts_the_gaps_inside_an_incident():
    # no external source: interval arithmetic. Files [0,6) [7,13) [14,20) [21,27); open from 8.5 to 23.0 s
    spans = file_spans_s(4, 6.0, 1.0)
    inc = incident_truth([{"kind": "open_phase", "phase": "B", "start_s": 8.5, "end_s": 23.0}], spans,
                         ["f1", "f2", "f3", "f4"], T0, 27.0)
    (i,) = inc
    assert i["files"] == ["f2", "f3", "f4"] and i["first_file"] == "f2" and i["last_file"] == "f4"
    assert i["first_seen_s"] == 8.5 and i["last_seen_s"] == 23.0
    assert i["gap_not_covered_s"] == pytest.approx(2.0)
    assert not i["open_before_first_file"]


def test_incident_open_before_the_first_file_that_sees_it():
    # no external source: an event that starts in a gap is first seen at the next file's start
    spans = file_spans_s(3, 5.0, 2.0)
    (i,) = incident_truth([{"kind": "stall", "phase": None, "start_s": 5.5, "end_s": None}], spans, ["a", "b", "c"], T0, 19.0)
    assert i["first_file"] == "b" and i["first_seen_s"] == 7.0 and i["open_before_first_file"]
    assert i["last_seen_s"] == 19.0 and i["true_end_s"] is None


def test_trend_rms_and_power_of_a_balanced_sinusoidal_set():
    # Textbook: a sinusoid of peak A has RMS A/sqrt(2); balanced three-phase P = 3 V I cos(phi),
    # Q = 3 V I sin(phi) (IEEE Std 1459-2010, clause 3.1 sinusoidal single-phase definitions, summed over phases)
    fs, f1 = 6000.0, 50.0
    t = np.arange(int(fs * 2)) / fs
    ph = np.array([0.0, -2 * np.pi / 3, 2 * np.pi / 3])[:, None]
    v = 230 * np.sqrt(2) * np.cos(2 * np.pi * f1 * t + ph)
    phi = np.deg2rad(30.0)
    i = 10 * np.sqrt(2) * np.cos(2 * np.pi * f1 * t + ph - phi)
    fr = trend_frame(v, i, fs, f1, 0.2, T0)
    assert len(fr) == 10
    assert np.allclose(fr["Va_rms"], 230, rtol=1e-9) and np.allclose(fr["Ic_rms"], 10, rtol=1e-9)
    assert np.allclose(fr["P_kW"], 3 * 230 * 10 * np.cos(phi) / 1e3, rtol=1e-9)
    assert np.allclose(fr["Q_kvar"][1:], 3 * 230 * 10 * np.sin(phi) / 1e3, rtol=1e-6)
    assert np.allclose(fr["PF"], np.cos(phi), rtol=1e-9)


def test_bundled_sequence_truth_names_its_files():
    # no external source: the bundled files and their truth agree
    truth = json.loads((SAMPLES / "sequence" / "booster_sequence.sequence.truth.json").read_text())
    for f in truth["files"]:
        assert (SAMPLES / "sequence" / f["file"]).is_file()
    (inc,) = truth["incidents"]
    assert inc["kind"] == "open_phase" and inc["line"] == "B" and inc["n_files"] == 3
