"""The bundled sample captures: files present, readable, and their truth as documented."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from waveforms.io import read_capture
from waveforms.sim.output import truth_path
from waveforms.sim.scenario import load_scenario
from waveforms.sim.simulate import simulate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"

#: The event kinds of each sample, as listed in sample_captures/README.md.
EXPECTED = {
    "healthy_run": set(),
    "dol_start": {"start"},
    "open_phase_stall": {"open_phase", "stall"},
    "start_open_line": {"open_phase", "stall", "start"},
    "dip_three_phase": {"dip"},
    "dip_one_phase": {"dip"},
    "unbalanced_supply": {"unbalance"},
    "jam": {"stall"},
    "open_phase_restored": {"open_phase"},
    "open_phase_50hz": {"open_phase"},
    "pushed_reverse": {"open_phase", "start"},
}


def _capture_file(name: str) -> Path:
    for suffix in (".h5", ".csv"):
        if (SAMPLES / f"{name}{suffix}").exists():
            return SAMPLES / f"{name}{suffix}"
    raise AssertionError(f"no capture for {name}")


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_sample_capture_and_truth_agree(name: str) -> None:
    cap = read_capture(_capture_file(name))
    truth = json.loads(truth_path(_capture_file(name)).read_text())
    assert truth["scenario"] == name
    assert cap.n_samples == truth["capture"]["n_samples"]
    assert list(cap.channel_names) == truth["capture"]["channels"]
    assert {e["kind"] for e in truth["events"]} == EXPECTED[name]
    for e in truth["events"]:
        assert 0.0 <= e["start_s"] < cap.duration_s
        assert e["end_s"] is None or e["start_s"] < e["end_s"] <= cap.duration_s
    assert truth["windows"], "every sample names at least one steady window"
    assert all(v == 0 for v in truth["logger"]["clipped_samples"].values())


def test_total_size_is_a_few_megabytes() -> None:
    total = sum(p.stat().st_size for p in SAMPLES.iterdir() if p.is_file())
    assert total < 8e6


def test_a_sample_regenerates_identically() -> None:
    # Deterministic simulation: the shortest sample re-simulated gives the stored samples.
    sc = load_scenario(SAMPLES / "dip_one_phase.scenario.toml")
    cap, truth = simulate(sc)
    stored = read_capture(SAMPLES / "dip_one_phase.csv")
    assert np.allclose(cap.read(), stored.read(), rtol=0, atol=1e-6)
    saved = json.loads((SAMPLES / "dip_one_phase.truth.json").read_text())
    assert truth["events"] == saved["events"]
