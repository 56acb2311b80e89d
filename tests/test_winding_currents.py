"""Winding-current channels (a six-lead hook-up on a delta motor) turned into line currents.

Sources: Kirchhoff's current law at the corners of a delta, ``I_A = I_AB - I_CA``, ``I_B = I_BC - I_AB``,
``I_C = I_CA - I_BC`` with ``I_AB`` flowing from terminal A to terminal B (any circuits textbook, e.g.
Nilsson & Riedel, *Electric Circuits*, the delta-connected load; from memory); a balanced delta's line
current is sqrt(3) times the winding current and lags it by 30 deg (same chapter, from memory).  The
acceptance check (issue 19 item 4) re-simulates every shipped open-phase sample with the simulator's
six-lead logger option (``[logger] currents = "winding"``) and compares the findings with the
line-current version: a consistency check of the tool against its own simulator (no external source
beyond the circuit law the simulator and the conversion both rest on).
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest

from waveforms.analysis import analyze
from waveforms.capture import Channel, from_arrays, standard_channels
from waveforms.errors import InvalidParameterError
from waveforms.io import read_capture
from waveforms.recipe import default_recipe, run_recipe
from waveforms.sim.scenario import load_scenario
from waveforms.sim.simulate import simulate
from waveforms.winding import declare_windings, line_currents_from_windings

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
FS = 5000.0


def _winding_capture(i_w: np.ndarray, names=("Iab", "Ibc", "Ica")):
    chans = [Channel(n, "current", c, "winding", "A") for n, c in zip(names, "ABC", strict=True)]
    return from_arrays(i_w, chans, FS, nominal_frequency_hz=50.0)


def _phasor(x: np.ndarray, f_hz: float = 50.0) -> np.ndarray:
    t = np.arange(x.shape[-1]) / FS
    return 2.0 / x.shape[-1] * (x * np.exp(-2j * np.pi * f_hz * t)).sum(axis=-1) / math.sqrt(2)


def test_balanced_delta_line_current_is_root_three_winding_current_lagging_30_deg():
    t = np.arange(int(FS)) / FS
    w = np.vstack([10 * math.sqrt(2) * np.cos(2 * np.pi * 50 * t - k * 2 * np.pi / 3) for k in range(3)])
    cap, notes = line_currents_from_windings(_winding_capture(w))
    assert cap.channel_names == ("Ia", "Ib", "Ic") and all(c.reference == "line" for c in cap.channels)
    i_l, i_w = _phasor(cap.read()), _phasor(w)
    # textbook balanced delta (Nilsson & Riedel, from memory): |I_line| = sqrt(3) |I_phase|, I_A lags I_AB by 30 deg
    assert np.abs(i_l) == pytest.approx(np.full(3, 10 * math.sqrt(3)), rel=1e-6)
    assert np.degrees(np.angle(i_l / i_w)) == pytest.approx(np.full(3, -30.0), abs=1e-6)
    assert "Kirchhoff" in notes[0] and "Ia = Iab - Ica" in notes[0]
    assert any("Kirchhoff" in h for h in cap.provenance.history)


def test_each_line_current_is_kirchhoff_at_its_corner_and_a_circulating_current_drops_out():
    rng = np.random.default_rng(3)
    w = rng.normal(size=(3, 2000))
    circ = np.sin(2 * np.pi * 150 * np.arange(2000) / FS)  # zero sequence circulating in the delta (3rd harmonic)
    cap, _ = line_currents_from_windings(_winding_capture(w + circ))
    x = cap.read()
    # Kirchhoff's current law at corner A: in through line A = out through winding A-B - in through winding C-A
    assert np.allclose(x[0], w[0] - w[2]) and np.allclose(x[1], w[1] - w[0]) and np.allclose(x[2], w[2] - w[1])
    assert np.allclose(x.sum(axis=0), 0.0)  # three-wire: the line currents sum to zero (KCL at the motor)


def test_voltages_stay_and_the_winding_channels_are_replaced_in_place():
    t = np.arange(1000) / FS
    v = [230 * math.sqrt(2) * np.cos(2 * np.pi * 50 * t - k * 2 * np.pi / 3) for k in range(3)]
    w = [np.cos(2 * np.pi * 50 * t - k * 2 * np.pi / 3) for k in range(3)]
    chans = list(standard_channels(currents=False)) + [Channel(n, "current", c, "winding", "A") for n, c in zip(("Iab", "Ibc", "Ica"), "ABC")]
    cap0 = from_arrays(np.vstack(v + w), chans, FS, nominal_frequency_hz=50.0)
    cap, _ = line_currents_from_windings(cap0)
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia", "Ib", "Ic")  # no external source (layout)
    assert np.allclose(cap.read(channels=["Va"]), cap0.read(channels=["Va"]))


def test_missing_winding_or_a_star_nameplate_leaves_the_currents_unconverted_with_a_note():
    w = np.ones((2, 100))
    chans = [Channel(n, "current", c, "winding", "A") for n, c in zip(("Iab", "Ibc"), "AB")]
    cap, notes = line_currents_from_windings(from_arrays(w, chans, FS))
    assert cap.channel_names == ("Iab", "Ibc") and "all three windings" in notes[0]  # no external source
    cap, notes = line_currents_from_windings(_winding_capture(np.ones((3, 100))), "star")
    assert cap.channel_names == ("Iab", "Ibc", "Ica") and "star-connected" in notes[0]


def test_declare_windings_relabels_line_currents_and_refuses_twice():
    cap = from_arrays(np.ones((3, 100)), standard_channels(voltages=None), FS)
    dec = declare_windings(cap)
    assert [(c.name, c.reference, c.conductor) for c in dec.channels] == [("Iab", "winding", "A"), ("Ibc", "winding", "B"), ("Ica", "winding", "C")]
    with pytest.raises(InvalidParameterError, match="already has winding"):
        declare_windings(dec)


def test_a_csv_mapped_to_winding_currents_is_analysed_on_line_currents(tmp_path):
    # a mapping file's [channels.Iab] names our own winding channel (no external source: the mapping rules)
    t = np.arange(2000) / FS
    w = [20 * np.cos(2 * np.pi * 50 * t - k * 2 * np.pi / 3) for k in range(3)]
    csv = tmp_path / "six.csv"
    csv.write_text("time,CT1,CT2,CT3\n" + "".join(f"{t[n]:.6f},{w[0][n]:.5f},{w[1][n]:.5f},{w[2][n]:.5f}\n" for n in range(t.size)))
    from waveforms.io.registry import ReadOptions

    opts = ReadOptions(mapping={"channels": {"Iab": {"column": "CT1"}, "Ibc": {"column": "CT2"}, "Ica": {"column": "CT3"}}},
                       mapping_source="test")
    cap = read_capture(csv, options=opts)
    assert [(c.name, c.reference) for c in cap.channels] == [("Iab", "winding"), ("Ibc", "winding"), ("Ica", "winding")]
    state = run_recipe(default_recipe().without("report", "speed", "detect", "thermal"), cap)
    assert state.capture.channel_names == ("Ia", "Ib", "Ic")
    assert np.abs(_phasor(state.capture.read()))[0] == pytest.approx(20 / math.sqrt(2) * math.sqrt(3), rel=1e-3)


# -- acceptance (issue 19 item 4): every shipped open-phase sample, re-simulated on the six leads ------------------
OPEN_PHASE_SAMPLES = ("open_phase_stall", "start_open_line", "open_phase_restored", "open_phase_50hz")


def _delta_equivalent(sc):
    """A star machine as the delta machine with the same line behaviour (winding impedances x 3, star-delta transform)."""
    m = sc.machine
    md = dataclasses.replace(m, connection="delta", rs_ohm=3 * m.rs_ohm, xls_ohm=3 * m.xls_ohm, xm_ohm=3 * m.xm_ohm,
                             xlr_ohm=3 * m.xlr_ohm, rr_ohm=3 * m.rr_ohm)
    plate = None if sc.nameplate is None else dataclasses.replace(sc.nameplate, connection="delta")
    return dataclasses.replace(sc, machine=md, nameplate=plate)


def _findings(cap):
    res = analyze(cap, speed=False)
    ev = [(e.kind, e.phase, e.figures.get("location"), e.figures.get("outcome"), e.start_s, e.end_s) for e in res.events]
    return res, ev


@pytest.mark.parametrize("name", OPEN_PHASE_SAMPLES)
def test_six_lead_version_of_every_open_phase_sample_gives_the_same_verdict(name):
    sc = load_scenario(SAMPLES / f"{name}.scenario.toml")
    if sc.machine.connection != "delta":  # sludge pump 4 is star: its six-lead version is that of its delta equivalent
        sc = _delta_equivalent(sc)
    line_cap, _ = simulate(dataclasses.replace(sc, logger=dataclasses.replace(sc.logger, currents="line")))
    wind_cap, truth = simulate(dataclasses.replace(sc, logger=dataclasses.replace(sc.logger, currents="winding")))
    assert {c.reference for c in wind_cap.find("current")} == {"winding"}
    assert truth["capture"]["current_channels"]["Iab"].startswith("winding A-B")
    # the point of a six-lead capture: with a line open no winding channel is dead (2/3 and 1/3 of the line current)
    t_open = next(e["start_s"] for e in truth["events"] if e["kind"] == "open_phase")
    sl = slice(int((t_open + 0.5) * wind_cap.sample_rate_hz), int((t_open + 1.0) * wind_cap.sample_rate_hz))
    x = wind_cap.read(channels=["Iab", "Ibc", "Ica"])[:, sl]
    assert np.sqrt(np.mean(x ** 2, axis=1)).min() > 5.0
    res_l, ev_l = _findings(line_cap)
    res_w, ev_w = _findings(wind_cap)
    assert [e[:4] for e in ev_w] == [e[:4] for e in ev_l] and any(e[0] == "open_phase" for e in ev_l)
    cyc = 1.0 / sc.supply.frequency_hz
    for a, b in zip(ev_w, ev_l, strict=True):
        assert a[4] == pytest.approx(b[4], abs=cyc)
        assert (a[5] is None) == (b[5] is None) and (a[5] is None or a[5] == pytest.approx(b[5], abs=cyc))
    assert any("Kirchhoff" in n for n in res_w.notes)


def test_the_shipped_six_lead_sample_gives_the_verdict_of_open_phase_restored():
    # sample_captures/site/six_lead_open_phase.h5 is open_phase_restored recorded on the six leads (its README row)
    six = analyze(read_capture(SAMPLES / "site" / "six_lead_open_phase.h5"), speed=False)
    line = analyze(read_capture(SAMPLES / "open_phase_restored.h5"), speed=False)
    assert [(e.kind, e.phase, e.figures.get("location")) for e in six.events] == [("open_phase", "A", "downstream")]
    assert [(e.kind, e.phase, e.figures.get("location")) for e in line.events] == [("open_phase", "A", "downstream")]
    assert six.events[0].start_s == pytest.approx(line.events[0].start_s, abs=1 / 60)
    assert six.events[0].end_s == pytest.approx(line.events[0].end_s, abs=1 / 60)


def test_currents_winding_option_relabels_a_six_lead_file_written_as_ia_ib_ic(tmp_path):
    # a file whose six-lead clamps are labelled Ia Ib Ic: analyze --currents winding (recipe key import.currents)
    cap = read_capture(SAMPLES / "site" / "six_lead_open_phase.h5")
    as_lines = cap.replace(channels=tuple(dataclasses.replace(c, name=f"I{c.conductor.lower()}", reference="line")
                                          if c.kind == "current" else c for c in cap.channels))
    rec = default_recipe().without("report", "speed").with_params("import", {"currents": "winding"})
    state = run_recipe(rec, as_lines)
    assert [(e.kind, e.phase) for e in state.events] == [("open_phase", "A")]
    plain = run_recipe(default_recipe().without("report", "speed"), as_lines)
    # read as line currents, the open line is still found from the change at onset (detect/open_phase_change.py),
    # but its figures flag the 2:1:1 split below the logger as the pattern of winding currents (Kirchhoff at the
    # delta's corners: the two windings in series carry 1/3 of the line current, the third 2/3)
    ops = [e for e in plain.events if e.kind == "open_phase"]
    assert ops and all("winding_current_pattern" in e.figures for e in ops)
    assert not any("winding_current_pattern" in e.figures for e in state.events)
