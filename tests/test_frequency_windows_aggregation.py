"""Issue 18 items 5-7: nominal frequency and nameplate frequency, speed windows inside a state, interval flags and PF.

Sources: IEC 61000-4-30:2015 4.7 (an interval is flagged during a dip, a swell or an interruption) and
5.4 (90 % / 110 % / 10 % thresholds; from memory); IEEE 1459-2010 (PF = P / S, the ratio of the powers, so
over an interval the ratio of the interval's powers); Fortescue (1918): a balanced set has no negative
sequence, so no unbalance.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from _measure_support import capture_of, three_phase
from waveforms.analysis import analyze
from waveforms.detect.context import speed_summary
from waveforms.io import read_capture
from waveforms.measure.aggregate import aggregate
from waveforms.measure.frequency import nominal_from_measured, tracked_band_hz
from waveforms.motor.nameplate import load_nameplate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
FS = 5000.0


def _balanced(f_hz: float, nominal_hz: float | None, seconds: float = 3.0):
    t = np.arange(int(seconds * FS)) / FS
    meta = {"nominal_voltage_v": 400.0}
    cap = capture_of(three_phase(t, 230.0, f_hz), three_phase(t, 50.0, f_hz, phi_rad=-0.5), FS, **meta)
    return cap.replace(nominal_frequency_hz=nominal_hz)


# -- item 5 -------------------------------------------------------------------------------------
def test_fifty_hz_capture_with_sixty_hz_nameplate_warns():
    """open_phase_50hz.h5 (a 50 Hz supply, truth.json supply.frequency_hz) with the 60 Hz pump2 nameplate."""
    cap = read_capture(SAMPLES / "open_phase_50hz.h5")
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    assert plate.rated_frequency_hz == 60.0
    res = analyze(cap, plate, speed=False)
    checks = [q for q in res.quality if q["check"] == "nameplate_frequency"]
    assert len(checks) == 1 and "60 Hz motor" in checks[0]["message"]
    assert checks[0]["measured_frequency_hz"] == pytest.approx(50.0, abs=0.2)
    # and its own 50 Hz nameplate gives no such warning
    assert not [q for q in analyze(cap, speed=False).quality if q["check"] == "nameplate_frequency"]


def test_fundamental_outside_the_tracked_band_is_a_data_quality_warning():
    """41 Hz on a declared 60 Hz system (outside 46.2-85.7 Hz): a warning, no ratio values, no false unbalance or dip.

    The signal is a balanced set (Fortescue: no negative sequence), so any unbalance event would be false.
    """
    lo, hi = tracked_band_hz(60.0)
    assert lo > 41.0
    res = analyze(_balanced(41.0, 60.0), speed=False)
    checks = {q["check"] for q in res.quality}
    assert {"frequency_band", "frequency_off_nominal"} <= checks
    assert not [e for e in res.events if e.kind in ("unbalance", "dip", "interruption")], res.verdict
    assert res.cycles["V_unbal_nema_pct"].isna().all()


def test_one_nominal_rule_the_capture_not_the_nameplate():
    """No declared frequency: 50 Hz from the measured 50 Hz, even with a 60 Hz nameplate (which is warned about)."""
    cap = _balanced(50.0, None)
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    res = analyze(cap, plate, speed=False)
    assert res.capture.nominal_frequency_hz == 50.0
    assert any("nominal frequency 50 Hz inferred" in n for n in res.notes)
    assert [q for q in res.quality if q["check"] == "nameplate_frequency"]
    assert nominal_from_measured(50.4) == 50.0 and nominal_from_measured(59.6) == 60.0


def test_tracked_band_matches_the_period_rule():
    """Periods 0.7-1.3 x nominal: 1/1.3 and 1/0.7 of 50 Hz are 38.46 and 71.43 Hz (arithmetic)."""
    lo, hi = tracked_band_hz(50.0)
    assert lo == pytest.approx(50.0 / 1.3) and hi == pytest.approx(50.0 / 0.7)


# -- item 6 -------------------------------------------------------------------------------------
def test_speed_windows_must_lie_wholly_inside_the_state():
    """A rotor that locks at 30.33 s: the 25-35 s window straddles the change and belongs to neither state."""
    track = pd.DataFrame({"t_start_s": [15.0, 20.0, 25.0, 31.0], "t_end_s": [25.0, 30.0, 35.0, 41.0],
                          "t_s": [20.0, 25.0, 30.0, 36.0], "slip": [0.04, 0.04, 0.0402, np.nan],
                          "rpm": [1728.0, 1728.0, 1727.6, np.nan], "status": ["estimate"] * 3 + ["no_signature"]})
    running = speed_summary(track, 0.0, 30.33)
    stalled = speed_summary(track, 30.33, None)
    assert running["speed_windows"] == 2 and stalled["speed_windows"] == 1
    assert "slip_median" not in stalled  # no running slip reported for the stalled rotor


# -- item 7 -------------------------------------------------------------------------------------
def _cycles(n: int = 20) -> pd.DataFrame:
    k = np.arange(n)
    return pd.DataFrame({"cycle": k, "t_s": (k + 0.5) / 50, "t_start_s": k / 50, "t_end_s": (k + 1) / 50,
                         "Va_rms": np.full(n, 230.0)})


INFO = {"channels": {"Va": "LN"}, "nominal_voltage_v": 398.4, "harmonic_window_cycles": 10}


def test_a_swell_flags_its_interval():
    """IEC 61000-4-30 4.7: a half cycle at 115 % of declared flags the interval, like a dip does."""
    v = np.full(40, 230.0)
    v[30] = 1.15 * 398.4 / math.sqrt(3)
    half = pd.DataFrame({"t_s": (np.arange(40) + 2) / 100, "Va_rms_half": v})
    out = aggregate(_cycles(), half, "basic", INFO)
    assert out["swell"].tolist() == [False, True]
    assert out["flagged"].tolist() == [False, True]
    assert out["dip"].tolist() == [False, False]


def test_power_factor_is_sum_p_over_sum_s():
    """IEEE 1459-2010 PF = P / S over the interval: five cycles at P = S = 1 kVA and five at P = 0, S = 3 kVA give
    5 / 20 = 0.25, where a mean of per-cycle PF would say 0.5."""
    cyc = _cycles(10)
    cyc["P_w"] = [1000.0] * 5 + [0.0] * 5
    cyc["S_va"] = [1000.0] * 5 + [3000.0] * 5
    cyc["PF"] = cyc["P_w"] / cyc["S_va"]
    cyc["Pa_w"], cyc["Sa_va"], cyc["PFa"] = cyc["P_w"], cyc["S_va"], cyc["PF"]
    cyc["P1_w"] = [1000.0] * 5 + [0.0] * 5
    cyc["Q1_var"] = [0.0] * 5 + [3000.0] * 5
    cyc["DPF"] = cyc["P1_w"] / np.hypot(cyc["P1_w"], cyc["Q1_var"])
    half = pd.DataFrame({"t_s": (np.arange(20) + 2) / 100, "Va_rms_half": np.full(20, 230.0)})
    out = aggregate(cyc, half, "basic", INFO)
    assert out["PF"].iloc[0] == pytest.approx(0.25)
    assert out["PFa"].iloc[0] == pytest.approx(0.25)
    assert out["DPF"].iloc[0] == pytest.approx(5000.0 / math.hypot(5000.0, 15000.0))
    assert cyc["PF"].mean() == pytest.approx(0.5)  # what the old mean of ratios gave


def test_jam_at_30s_straddling_window_belongs_to_no_state():
    """The issue's case: a 64 s capture whose rotor locks at 30.33 s (the jam scenario, seizure at 30.0 s).

    Truth (simulator): rest at 30.34 s.  The 25-35 s window straddles the change: no state; the stall's
    speed figures count only windows wholly inside it, and none of them carries a running slip.
    """
    import tomllib

    from waveforms.sim.scenario import scenario_from_dict
    from waveforms.sim.simulate import simulate

    d = tomllib.loads((SAMPLES / "jam.scenario.toml").read_text())
    d["scenario"]["duration_s"] = 64.0
    d["load"]["jam"] = {"time_s": 30.0, "torque_n_m": 1500.0}
    d["switches"]["ops"] = [{"line": c, "time_s": 50.0, "action": "open"} for c in "ABC"]
    d["truth"] = {"windows": [{"name": "running", "start_s": 1.0, "end_s": 29.0}]}
    cap, truth = simulate(scenario_from_dict(d, "jam30", base=SAMPLES))
    rest_s = [e for e in truth["events"] if e["kind"] == "stall"][0]["rest_s"]
    res = analyze(cap)
    sp = res.speed
    straddle = (sp["t_start_s"] < rest_s) & (sp["t_end_s"] > rest_s)
    assert straddle.any() and (sp.loc[straddle, "state"] == "").all()
    assert (sp.loc[sp["t_end_s"] <= 30.0, "state"] == "three-phase").all()
    (stall,) = [e for e in res.events if e.kind == "stall"]
    inside = (sp["t_start_s"] >= stall.start_s) & (sp["t_end_s"] <= stall.end_s)
    assert stall.figures["speed_windows"] == int(inside.sum())
    assert "slip_median" not in stall.figures or stall.figures["slip_median"] > 0.9
