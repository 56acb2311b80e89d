"""The hook-up checks on the shipped samples, each changed in memory the ways a logger is hooked up wrong.

External facts used (each named again beside its check):
* Fortescue 1918 (symmetrical components): one channel of a balanced set reversed leaves |X1| = 1/3 and
  |X0| = |X2| = 2/3 of the phase value, so the residual |Xa + Xb + Xc| = 3|X0| is twice a phase value.
* Kirchhoff's current law: with one line of a three-wire motor open the other two currents are equal and opposite.
* Thresholds (lag range, antiphase tolerance, balance limits) are our choices: common practice, no source.
"""

from __future__ import annotations

import numpy as np
import pytest

from _hookup_support import EXPECTED_CHANNELS, EXPECTED_CHECK, FAULTS, SAMPLE_FILES, fault
from waveforms.hookup import check_hookup
from waveforms.io import read_capture

_CACHE: dict = {}


def _sample(path):
    if path not in _CACHE:
        cap = read_capture(path)
        from _hookup_support import arrays, rebuild

        _CACHE[path] = rebuild(cap, arrays(cap))  # in memory: the faults below copy it
    return _CACHE[path]


# (sample, fault) pairs where no finding is an acceptable answer, with the physical reason; a finding, if any,
# must still be the right one.
MAY_MISS = {
    ("start_open_line", f): "no three-phase stretch at all (line C open from energisation): nothing to compare with"
    for f in FAULTS if f != "two-CT"
}
MAY_MISS.update({
    ("pushed_reverse", f): "no three-phase stretch at all (line A open from energisation): nothing to compare with"
    for f in FAULTS if f != "two-CT"
})
MAY_MISS.update({
    ("open_phase_50hz", "Ib falls off"): "line B opens soon after 3 s for real: no steady window shows the dead clamp",
    ("open_phase_stall", "Ib falls off"): "line B opens at 3.5 s for real: no steady window shows the dead clamp",
    ("open_phase_50hz", "V falls off"): "line C opens at 2.0 s for real: no window with three currents after 3 s",
    ("open_phase_stall", "V falls off"): "line B opens at 3.5 s for real: no window with three currents after 3 s",
})


@pytest.mark.parametrize("path", SAMPLE_FILES, ids=lambda p: p.stem)
def test_no_hookup_finding_on_any_shipped_sample_as_recorded(path):
    # consistency with the simulator's own hook-up, no external source: every sample is wired right
    cap, res = check_hookup(read_capture(path))
    assert res.findings == () and res.rules == ()


@pytest.mark.parametrize("name", FAULTS)
@pytest.mark.parametrize("path", SAMPLE_FILES, ids=lambda p: p.stem)
def test_each_fault_is_named_with_its_channel_on_each_sample(path, name):
    cap = fault(_sample(path), name)
    _, res = check_hookup(cap, cap.nameplate)
    checks = [f.check for f in res.findings]
    if not checks and (path.stem, name) in MAY_MISS:
        return
    assert checks == [EXPECTED_CHECK[name]], [f.what for f in res.findings]
    f = res.findings[0]
    if name in EXPECTED_CHANNELS:
        assert set(f.channels) == EXPECTED_CHANNELS[name], f.what
    if name in ("V reversed", "V dead", "V falls off"):
        assert f.channels in (("Vb",), ("Vbc",))
    assert f.corrects and res.corrected, f.action


def test_reversed_current_residual_is_twice_a_line_current():
    # Fortescue 1918: a balanced set with one member reversed has |X0| = 2/3, residual |sum| = 2 x the phase value
    cap = fault(_sample(SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("healthy_run")]), "V reversed")
    _, res = check_hookup(cap)
    ev = res.findings[0].evidence
    assert ev["residual_as_recorded_pu"] == pytest.approx(2.0, abs=0.05)
    assert ev["residual_reversed_pu"] < 0.05
    assert ev["balance_as_recorded"] == pytest.approx(0.5, abs=0.03)  # |X1| 1/3 vs |X2| 2/3 (Fortescue)


def test_dead_clamp_evidence_is_three_phase_not_antiphase():
    # Kirchhoff: an open line leaves the other two in antiphase; a dead clamp leaves them 120 deg apart at unchanged
    # magnitude, with a zero-sum residual equal to the missing current (about one line current)
    path = SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("healthy_run")]
    cap = fault(_sample(path), "Ib falls off")
    _, res = check_hookup(cap, cap.nameplate)
    ev = res.findings[0].evidence
    assert ev["angle_between_recorded_deg"] == pytest.approx(120.0, abs=5.0)
    assert ev["residual_over_line_current"] == pytest.approx(1.0, abs=0.1)
    assert ev["recorded_over_three_phase_level"] == pytest.approx(1.0, abs=0.05)
    assert not ev["from_start"] and 3.0 <= ev["first_seen_s"] <= 4.0


def test_ambiguous_evidence_is_not_corrected():
    # a current set that fits no motoring assignment (Ib turned by 90 deg): warning, nothing corrected
    from _hookup_support import arrays, rebuild
    from scipy.signal import hilbert

    cap = _sample(SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("healthy_run")])
    d = arrays(cap)
    d["Ib"] = np.imag(hilbert(d["Ib"]))  # 90 deg phase shift of one clamp: no wiring mistake does that
    _, res = check_hookup(rebuild(cap, d))
    assert [f.check for f in res.findings] == ["current_assignment"]
    assert not res.findings[0].corrects and res.rules == () and res.findings[0].confidence == "low"


def test_as_recorded_reports_but_corrects_nothing():
    path = SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("healthy_run")]
    cap = fault(_sample(path), "Ib negated")
    from waveforms.hookup import HookupSettings

    out, res = check_hookup(cap, settings=HookupSettings(as_recorded=True))
    assert out is cap and res.rules == () and res.findings[0].check == "current_assignment"
    assert "I2_I1_pct" in res.absent_ratios and res.ratio_note


def test_open_delta_third_voltage_is_derived():
    # Kirchhoff's voltage law: Vab + Vbc + Vca = 0, so two line-to-line channels give the third exactly
    from _hookup_support import arrays, rebuild

    path = SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("jam")]
    cap = _sample(path)
    d = arrays(cap)
    out, res = check_hookup(rebuild(cap, d, drop=("Vca",)))
    assert [f.check for f in res.findings] == ["missing_channel"]
    assert "Vca" in out.channel_names
    np.testing.assert_allclose(out.read(0, 5000, ["Vca"])[0], d["Vca"][:5000], atol=3e-3 * np.abs(d["Vca"]).max())  # logger noise and quantisation


def test_scaling_wrong_ct_ratio():
    # common practice, no source: a running motor draws between 0.1 and 3 x FLA at normal slip
    from _hookup_support import arrays, rebuild

    cap = _sample(SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("healthy_run")])
    d = arrays(cap)
    for c in ("Ia", "Ib", "Ic"):
        d[c] = d[c] * 10.0  # CT ratio entered ten times too large
    _, res = check_hookup(rebuild(cap, d), cap.nameplate)
    assert [f.check for f in res.findings] == ["scaling"]
    assert "CT ratio or nameplate suspect" in res.findings[0].what and not res.findings[0].corrects


@pytest.mark.parametrize("name", ["Ib negated", "Ia negated"])
def test_reversed_clamp_without_voltages_by_the_zero_sum(name):
    # Kirchhoff: a motor's three line currents sum to zero; one reversed leaves twice a line current
    # (Fortescue 1918: residual 3|X0| = 2 x the phase value)
    from _hookup_support import arrays, rebuild

    cap = fault(_sample(SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("dol_start")]), name)
    d = arrays(cap)
    only_i = rebuild(cap, d, drop=("Va", "Vb", "Vc"))
    _, res = check_hookup(only_i)
    (f,) = res.findings
    assert f.check == "current_assignment" and f.channels == (name[:2],) and f.corrects
    assert f.evidence["residual_as_recorded_pu"] == pytest.approx(2.0, abs=0.05)


def test_reversed_clamp_residual_with_voltages():
    cap = fault(_sample(SAMPLE_FILES[[p.stem for p in SAMPLE_FILES].index("healthy_run")]), "Ib negated")
    _, res = check_hookup(cap)
    ev = res.findings[0].evidence
    assert ev["residual_as_recorded_pu"] == pytest.approx(2.0, abs=0.05) and ev["residual_as_corrected_pu"] < 0.05


@pytest.mark.parametrize("machine, volts, torque", [("3hp", 220.0, 0.0), ("3hp", 220.0, 12.0), ("50hp", 460.0, 150.0)])
def test_simulated_motors_no_load_to_full_load(machine, volts, torque):
    # Krause, Wasynczuk & Sudhoff example machines (tests/_motor_support.py; table number from memory), simulated at
    # no load (lag near 90 deg, the edge of the motoring range) and loaded: no finding as wired, each fault named
    from _motor_support import KRAUSE_3HP, KRAUSE_50HP, scenario
    from waveforms.sim.simulate import simulate

    m = {"3hp": KRAUSE_3HP, "50hp": KRAUSE_50HP}[machine]
    cap, _ = simulate(scenario(m, volts, duration_s=1.5, fs=6000.0, initial={"state": "steady"},
                               load={"kind": "constant", "torque_n_m": torque}))
    assert check_hookup(cap)[1].findings == ()
    for name in ("Ib negated", "moved", "moved back", "Ia/Ib swapped", "A-C-B", "dead Ib", "two-CT", "V reversed", "V dead",
                 "V moved"):
        res = check_hookup(fault(cap, name))[1]
        assert [f.check for f in res.findings] == [EXPECTED_CHECK[name]], (name, [f.what for f in res.findings])
        assert res.findings[0].corrects
