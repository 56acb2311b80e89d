"""`analyze` on incomplete inputs: currents only, voltages only, no nameplate, line-to-line voltages.

Whatever cannot be assessed is said in the notes, never filled with a made-up
figure; the outputs still validate against the result.json schema.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from waveforms.analysis import analyze
from waveforms.capture import from_arrays
from waveforms.io import read_capture
from waveforms.report import result_dict, validate, write_report

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"


@pytest.fixture(scope="module")
def restored():
    return read_capture(SAMPLES / "open_phase_restored.h5")


def _subset(cap, names, **meta):
    data = cap.read(channels=names)
    chans = [cap.channel(n) for n in names]
    return from_arrays(data, chans, cap.sample_rate_hz, cap.start_time, nominal_frequency_hz=cap.nominal_frequency_hz,
                       nominal_voltage_v=cap.nominal_voltage_v, nameplate=meta.get("nameplate", cap.nameplate))


def test_currents_only(restored, tmp_path):
    cap = _subset(restored, ["Ia", "Ib", "Ic"])
    res = analyze(cap, speed=False, quality=False)
    op = res.events_of("open_phase")
    assert len(op) == 1 and op[0].phase == "A"
    assert op[0].figures["location"] == "unknown"  # no voltages: the open point cannot be placed
    assert any("dips" in n or "voltage" in n for n in res.notes)
    write_report(res, tmp_path)
    validate(result_dict(res))


def test_voltages_only(restored, tmp_path):
    cap = _subset(restored, ["Va", "Vb", "Vc"], nameplate=None)
    res = analyze(cap, speed=False, quality=False)
    # the single-phased motor's unbalanced current drops an unbalanced voltage across the source
    # impedance; without currents nothing tells it from a supply unbalance, so only that may appear
    assert {e.kind for e in res.events} <= {"unbalance"} and res.thermal is None
    assert any("open phase not assessed" in n for n in res.notes)
    write_report(res, tmp_path)
    validate(result_dict(res))


def test_no_nameplate_still_finds_the_open_phase(restored):
    cap = _subset(restored, list(restored.channel_names), nameplate=None)
    res = analyze(cap, speed=True, quality=False)
    assert [e.kind for e in res.events] == ["open_phase"]
    assert res.speed is None and res.thermal is None
    assert "No nameplate" in res.verdict


def test_line_to_line_voltages(restored):
    # Vab = Va - Vb etc. (definition of a line-to-line voltage, common practice, no source)
    from waveforms.capture import standard_channels

    ln = restored.read(channels=["Va", "Vb", "Vc"])
    ll = np.vstack([ln[0] - ln[1], ln[1] - ln[2], ln[2] - ln[0]])
    data = np.vstack([ll, restored.read(channels=["Ia", "Ib", "Ic"])])
    cap = from_arrays(data, standard_channels("LL"), restored.sample_rate_hz, restored.start_time,
                      nominal_frequency_hz=restored.nominal_frequency_hz, nameplate=restored.nameplate, wiring="3-wire")
    res = analyze(cap, speed=False, quality=False)
    op = res.events_of("open_phase")
    assert len(op) == 1 and op[0].phase == "A" and op[0].figures["location"] == "downstream"
