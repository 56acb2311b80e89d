"""3-wire systems: dips and swells on the line-to-line voltages; a neutral shift is not a dip or swell (issue 19 item 5).

Sources: IEC 61000-4-30 (5.4.1, from memory): on a 3-wire system dips and swells are evaluated on the
line-to-line voltages, on a 4-wire system on the line-to-neutral ones.  Kirchhoff's voltage law,
``vab = va - vb``.  Fortescue's symmetrical components, ``V0 = (Va + Vb + Vc) / 3``, which no
line-to-line voltage contains; a bolted ground fault on an ungrounded system puts the neutral at
``-Ea`` and the healthy lines at sqrt(3) x their line-to-neutral voltage (Blackburn, *Symmetrical
Components for Power Systems Engineering*, ungrounded systems; from memory).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from waveforms.analysis import analyze
from waveforms.capture import from_arrays, standard_channels
from waveforms.detect.neutral_shift import neutral_shift_cycles
from waveforms.io import read_capture
from waveforms.measure import measure
from waveforms.motor.nameplate import load_nameplate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
FS = 5000.0


def _capture(v_ln: np.ndarray, wiring: str):
    i = 0.1 * v_ln
    return from_arrays(np.vstack([v_ln, i]), standard_channels(), FS, nominal_frequency_hz=50.0, nominal_voltage_v=400.0,
                       wiring=wiring)


def _three_phase(t, mags=(1.0, 1.0, 1.0), shift=None):
    ph = np.array([0.0, -2.0, 2.0])[:, None] * np.pi / 3
    v = 230.0 * math.sqrt(2) * np.asarray(mags)[:, None] * np.cos(2 * np.pi * 50 * t[None] + ph)
    return v if shift is None else v + shift


def test_line_to_line_urms_half_from_line_to_neutral_samples_is_the_rms_of_the_difference():
    t = np.arange(int(2 * FS)) / FS
    rng = np.random.default_rng(1)
    v = _three_phase(t, (1.0, 0.9, 1.05)) + rng.normal(0, 2.0, (3, t.size))
    half = measure(_capture(v, "3-wire")).half_cycles
    assert {"Vab_rms_half", "Vbc_rms_half", "Vca_rms_half"} <= set(half)
    # Kirchhoff's voltage law vab = va - vb; Urms(1/2) = one-cycle RMS refreshed every half cycle (IEC 61000-4-30 5.4.1)
    n_cyc = int(FS / 50)
    k = np.searchsorted(half["t_s"].to_numpy(), 1.0)
    end = int(round(half["t_s"].iloc[k] * FS))
    vab = v[0, end - n_cyc:end] - v[1, end - n_cyc:end]
    assert half["Vab_rms_half"].iloc[k] == pytest.approx(np.sqrt(np.mean(vab ** 2)), rel=2e-3)
    assert "Vab_rms_half" not in measure(_capture(v, "4-wire")).half_cycles  # 4-wire: line-to-neutral only (no source)


def test_a_bolted_ground_fault_on_an_ungrounded_system_is_a_neutral_shift_not_a_dip_or_swell():
    t = np.arange(int(3 * FS)) / FS
    v = _three_phase(t)
    fault = (t >= 1.0) & (t < 2.0)
    v = np.where(fault[None], v - v[0], v)  # the neutral moves to line A: Va -> 0, Vb, Vc -> sqrt(3) x 230 V (Blackburn)
    for wiring in ("3-wire", "4-wire"):
        res = analyze(_capture(v, wiring), speed=False)
        assert not [e for e in res.events if e.kind in ("dip", "swell", "interruption")], (wiring, res.verdict)
        shift = [n for n in res.notes if "neutral shift" in n]
        assert len(shift) == 1 and "lowest on line A" in shift[0]
        assert "from 0.99" in shift[0] or "from 1.00" in shift[0]


def test_the_neutral_shift_test_keeps_a_single_line_dip_on_a_grounded_system():
    # Va to 70 %: V0 = 0.3/3 = 10 % but |Vab| = |Vca| = |0.7 - a^2| / sqrt(3) = 85.4 % (phasor arithmetic): a dip on the
    # line-to-line voltages too, so no neutral shift; the dip is reported on Va (4-wire) or on Vab, Vca (3-wire)
    t = np.arange(int(3 * FS)) / FS
    dip = (t >= 1.0) & (t < 1.5)
    v = np.where(dip[None], _three_phase(t, (0.7, 1.0, 1.0)), _three_phase(t))
    hand_ll = abs(0.7 - np.exp(-2j * np.pi / 3)) / math.sqrt(3)
    assert hand_ll == pytest.approx(0.854, abs=1e-3)
    r4 = analyze(_capture(v, "4-wire"), speed=False)
    d4 = [e for e in r4.events if e.kind == "dip"]
    assert len(d4) == 1 and d4[0].figures["channels"] == ["Va"] and d4[0].figures["residual_pct"] == pytest.approx(70, abs=1.5)
    r3 = analyze(_capture(v, "3-wire"), speed=False)
    d3 = [e for e in r3.events if e.kind == "dip"]
    assert len(d3) == 1 and d3[0].figures["channels"] == ["Vab", "Vca"]
    assert d3[0].figures["residual_pct"] == pytest.approx(100 * hand_ll, abs=1.5)
    assert not any("neutral shift" in n for n in r3.notes + r4.notes)


def test_ground_fault_elsewhere_sample_gives_a_neutral_shift_note_and_no_dip_or_swell():
    cap = read_capture(SAMPLES / "site" / "ground_fault_elsewhere.h5")
    assert cap.wiring == "3-wire"  # a resistance-grounded source: no neutral is distributed (the simulator says so)
    res = analyze(cap, speed=False)
    assert not [e for e in res.events if e.kind in ("dip", "swell", "interruption")], res.verdict
    shift = [n for n in res.notes if "neutral shift" in n]
    # truth: bolted fault on line A of another feeder 1.5 -> 3.0 s, line-to-ground 1 / 173 / 172 %, line-to-line unchanged
    assert len(shift) == 1 and "lowest on line A" in shift[0]
    assert ("from 1.49" in shift[0] or "from 1.50" in shift[0]) and shift[0].split(" to ")[1][:4] in ("2.99", "3.00", "3.01")
    # the hook-up check does not take the earthed line's lead for a dead one (a neutral shift: Vb, Vc 60 deg apart)
    assert res.hookup is not None and not [f for f in res.hookup.findings if f.check == "dead_sensor"]
    # declared 4-wire (a logger set to 4-wire) the line-to-neutral dip and swells are still the neutral's movement
    res4 = analyze(cap.replace(wiring="4-wire"), speed=False)
    assert not [e for e in res4.events if e.kind in ("dip", "swell", "interruption")], res4.verdict


@pytest.mark.parametrize("wiring", ["4-wire", "3-wire"])
def test_dip_one_phase_sample_keeps_its_dip(wiring):
    # source phase A to 0.50 pu, 1.5 -> 1.7 s on a solidly grounded source: on line-to-neutral voltages a dip on Va;
    # on line-to-line ones |0.5 - a^2| / sqrt(3) = 76 % on Vab and Vca (phasor arithmetic), before the source impedance
    cap = read_capture(SAMPLES / "dip_one_phase.csv")
    assert cap.wiring == "4-wire"  # the file declares it
    res = analyze(cap.replace(wiring=wiring), nameplate=load_nameplate(SAMPLES / "pump2.nameplate.toml"), speed=False)
    dips = [e for e in res.events if e.kind == "dip"]
    assert len(dips) == 1 and dips[0].start_s == pytest.approx(1.5, abs=0.02)
    if wiring == "4-wire":
        assert dips[0].figures["channels"] == ["Va"]
    else:
        assert dips[0].figures["channels"] == ["Vab", "Vca"]
        assert dips[0].figures["residual_pct"] == pytest.approx(100 * abs(0.5 - np.exp(-2j * np.pi / 3)) / math.sqrt(3), abs=4)
    assert not any("neutral shift" in n for n in res.notes)


def test_neutral_shift_cycles_needs_balanced_line_to_line_voltages():
    from waveforms.detect.examples import example_input

    inp = example_input()
    mask, fig = neutral_shift_cycles(inp)
    assert not mask.any() and np.nanmax(fig["v0_pct"]) < 1.0  # a healthy balanced set: V0 ~ 0 (Fortescue)


def test_wiring_default_follows_the_channels(tmp_path):
    # a motor circuit is 3-wire: line-to-neutral leads alone do not make a 4-wire system; a measured neutral does
    # (common practice, no source)
    t = np.arange(1000) / FS
    v = _three_phase(t)
    rows = "".join(f"{t[n]:.6f},{v[0, n]:.3f},{v[1, n]:.3f},{v[2, n]:.3f},{0.1 * v[0, n]:.3f}\n" for n in range(t.size))
    (tmp_path / "a.csv").write_text("time,Va,Vb,Vc,Ia\n" + rows)
    (tmp_path / "b.csv").write_text("time,Va,Vb,Vc,In\n" + rows)
    a, b = read_capture(tmp_path / "a.csv"), read_capture(tmp_path / "b.csv")
    assert a.wiring == "3-wire" and any("wiring taken as 3-wire" in n for n in a.provenance.notes)
    assert b.wiring == "4-wire"


def test_interval_flags_follow_the_line_to_line_voltages_on_a_3_wire_system():
    # IEC 61000-4-30 4.7 flags intervals holding a dip, swell or interruption; on a 3-wire system those are judged on
    # the line-to-line voltages (5.4.1, from memory), which a bolted ground fault on an ungrounded system leaves balanced
    # (Kirchhoff's voltage law: vab = va - vb carries no V0)
    t = np.arange(int(2.0 * FS)) / FS
    fault = (t >= 0.8) & (t < 1.2)
    v = _three_phase(t)
    v = np.where(fault[None], v - v[0][None], v)  # line A at earth: the neutral moves to -Ea
    three = measure(_capture(v, "3-wire")).intervals("basic")
    four = measure(_capture(v, "4-wire")).intervals("basic")
    assert not three["flagged"].any()
    during = (four["t_end_s"] > 0.8) & (four["t_start_s"] < 1.2 + 0.02)  # a Urms(1/2) window reaches one cycle back
    assert four.loc[during, "dip"].all() and four.loc[during, "flagged"].all()  # 4-wire: Va at earth is a dip there
    assert not four.loc[~during & (four["t_start_s"] > 0.1), "flagged"].any()
