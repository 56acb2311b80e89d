"""The bundled site samples (sample_captures/site/): present, readable, small, and their truth as documented.

Consistency checks against the samples' own scenario files and README, no external source.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from waveforms.io import read_capture
from waveforms.sim.scenario import load_scenario
from waveforms.sim.simulate import simulate

SITE = Path(__file__).resolve().parent.parent / "sample_captures" / "site"

#: name -> (logger_at, [(event kind, line, location)]), as listed in sample_captures/README.md
EXPECTED = {
    "cap_bus_open": ("feeder", [("open_phase", "C", "downstream")]),
    "cap_motor_open": ("motor", [("open_phase", "A", "upstream")]),
    "two_pumps_feeder": ("feeder", [("open_phase", "B", "downstream")]),
    "transformer_primary_open": ("motor", [("open_phase", "A", "transformer_primary")]),
    "six_lead_open_phase": (None, [("open_phase", "A", "downstream")]),
    "ground_fault_elsewhere": ("motor", [("ground_fault", "A", "another feeder")]),
}


def test_every_site_sample_is_listed():
    assert sorted(p.name[: -len(".scenario.toml")] for p in SITE.glob("*.scenario.toml")) == sorted(EXPECTED)
    assert sum(p.stat().st_size for p in SITE.iterdir()) < 2e6


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_site_sample_truth(name):
    cap = read_capture(SITE / f"{name}.h5")
    truth = json.loads((SITE / f"{name}.truth.json").read_text())
    logger_at, events = EXPECTED[name]
    assert truth["scenario"] == name and cap.n_samples == truth["capture"]["n_samples"]
    if logger_at is None:
        assert "site" not in truth and truth["capture"]["currents"] == "winding"
    else:
        assert truth["site"]["logger_at"] == logger_at and truth["site"]["logger_currents"]
    assert [(e["kind"], e["phase"], e["location"]) for e in truth["events"]] == events
    ev = truth["events"][0]
    assert ev["start_s"] == pytest.approx(2.0 if ev["kind"] == "open_phase" else 1.5, abs=1 / 60)
    assert all(v == 0 for v in truth["logger"]["clipped_samples"].values())
    # the point of these samples: no current channel goes dead in the second window (after the event)
    x = cap.read()
    names = ("Iab", "Ibc", "Ica") if truth["capture"]["currents"] == "winding" else ("Ia", "Ib", "Ic")
    assert list(truth["capture"]["current_channels"]) == list(names)
    i = np.array([x[list(cap.channel_names).index(c)] for c in names])
    w = truth["windows"][1]
    sl = slice(int(w["start_s"] * cap.sample_rate_hz), int(w["end_s"] * cap.sample_rate_hz))
    rms = np.sqrt(np.mean(i[:, sl] ** 2, axis=1))
    assert rms.min() > 10.0, rms
    assert [w["I"][c]["mag"] for c in "abc"] == pytest.approx(rms, rel=0.02)


def test_a_site_sample_regenerates_identically():
    # deterministic simulation: the transformer sample re-simulated gives the stored samples and events
    cap, truth = simulate(load_scenario(SITE / "transformer_primary_open.scenario.toml"))
    stored = read_capture(SITE / "transformer_primary_open.h5")
    assert np.allclose(cap.read(), stored.read(), rtol=0, atol=1e-6)
    assert truth["events"] == json.loads((SITE / "transformer_primary_open.truth.json").read_text())["events"]
