"""The speed track on the bundled sample captures (simulated, invented site) against their truth files.

Truth: the simulator's 10 ms speed track (docs/simulator.md).  Targets from the issue: |slip error| <= 0.002
for 2 s windows where the true slip is steady, and zero speed estimates while the rotor is stalled.  The
signature lines in these captures follow Thomson & Fenger 2001 / Hurst & Habetler 1996 (from memory).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from waveforms.io.registry import read_capture
from waveforms.speed import track_speed

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
H5 = sorted(SAMPLES.glob("*.h5"))


def _truth_stats(truth, track):
    ts = np.asarray(truth["speed_track"]["t_s"])
    ss = np.asarray(truth["speed_track"]["slip"])
    out = []
    for a, b in zip(track.t_start_s, track.t_end_s, strict=True):
        w = ss[(ts >= a) & (ts < b)]
        out.append((w.mean(), w.min(), w.max()))
    return np.array(out).reshape(-1, 3)


def test_samples_present():
    assert len(H5) >= 5


@pytest.mark.parametrize("path", H5, ids=[p.stem for p in H5])
def test_sample_capture_against_truth(path):
    cap = read_capture(path)
    assert cap.nameplate is not None
    truth = json.loads((path.parent / f"{path.stem}.truth.json").read_text())
    tr = track_speed(cap, window_s=2.0, hop_s=1.0)
    assert len(tr) >= 3
    st = _truth_stats(truth, tr)
    est = (tr.status == "estimate").to_numpy()
    steady = (st[:, 2] - st[:, 1]) < 0.002
    stalled = st[:, 1] > 0.9
    err = np.abs(tr.slip.to_numpy() - st[:, 0])
    # the rotor runs (truth slip below 0.3) somewhere in the capture, or it is stalled throughout
    runs = bool(np.any(np.asarray(truth["speed_track"]["slip"]) < 0.3))
    running = steady & (st[:, 2] < 0.3) & (tr.status != "no_current").to_numpy()
    if runs:
        # the checks below must see at least one window, or they pass on nothing
        assert (est & steady).any()
        assert running.any()
    else:
        assert stalled.all()
    assert np.all(err[est & steady] <= 2e-3)  # issue target for 2 s windows
    assert not np.any(est & stalled)          # zero false estimates on a stalled rotor
    # every steady running window (truth slip below 0.3 throughout) is estimated
    assert np.all(est[running])


def test_supply_frequency_from_the_measurement_engine():
    # healthy_run: supply 59.98 Hz (sample_captures/README.md); the cycle table's frequency_hz feeds the track
    from waveforms.measure import measure

    path = SAMPLES / "healthy_run.h5"
    cap = read_capture(path)
    truth = json.loads((SAMPLES / "healthy_run.truth.json").read_text())
    cyc = measure(cap).cycles
    tr = track_speed(cap, supply_hz=cyc[["t_s", "frequency_hz"]], window_s=2.0, hop_s=1.0)
    assert (tr.status == "estimate").all()
    np.testing.assert_allclose(tr.f_supply_hz, 59.98, atol=2e-3)
    st = _truth_stats(truth, tr)
    assert np.max(np.abs(tr.slip - st[:, 0])) <= 2e-3
