"""The bundled site samples (sample_captures/site/): present, readable, small, and their truth as documented.

Consistency checks against the samples' own scenario files and README, no external source.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from waveforms.io import read_capture

SITE = Path(__file__).resolve().parent.parent / "sample_captures" / "site"

#: name -> (logger_at, open line, location), as listed in sample_captures/README.md
EXPECTED = {
    "cap_bus_open": ("feeder", "C", "downstream"),
    "cap_motor_open": ("motor", "A", "upstream"),
    "two_pumps_feeder": ("feeder", "B", "downstream"),
    "transformer_primary_open": ("motor", "A", "transformer_primary"),
}


def test_every_site_sample_is_listed():
    assert sorted(p.name[: -len(".scenario.toml")] for p in SITE.glob("*.scenario.toml")) == sorted(EXPECTED)
    assert sum(p.stat().st_size for p in SITE.iterdir()) < 1.2e6


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_site_sample_truth(name):
    cap = read_capture(SITE / f"{name}.h5")
    truth = json.loads((SITE / f"{name}.truth.json").read_text())
    logger_at, line, location = EXPECTED[name]
    assert truth["scenario"] == name and cap.n_samples == truth["capture"]["n_samples"]
    assert truth["site"]["logger_at"] == logger_at and truth["site"]["logger_currents"]
    ev = [e for e in truth["events"] if e["kind"] == "open_phase"]
    assert [(e["phase"], e["location"]) for e in ev] == [(line, location)] and {e["kind"] for e in truth["events"]} == {"open_phase"}
    assert 2.0 <= ev[0]["start_s"] < 2.0 + 1 / 60 and ev[0]["end_s"] is None
    assert all(v == 0 for v in truth["logger"]["clipped_samples"].values())
    # the point of these samples: no current channel goes dead after the opening
    x = cap.read()
    i = np.array([x[list(cap.channel_names).index(c)] for c in ("Ia", "Ib", "Ic")])
    after = slice(int(2.5 * cap.sample_rate_hz), None)
    rms = np.sqrt(np.mean(i[:, after] ** 2, axis=1))
    assert rms.min() > 10.0, rms
    single = truth["windows"][1]
    assert min(single["I"][c]["mag"] for c in "abc") == pytest.approx(rms.min(), rel=0.05)
