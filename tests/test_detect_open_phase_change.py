"""An open line that still carries current (issue 19 items 2-3): found from the change at its onset.

Simulator captures (waveforms.sim, ``[site]``; 2 s at 5 kS/s, the open point acting at 1.0 s) of a
capacitor bank at 10, 30 and 50 % of the pump's FLA (on the bus above the open point, and at the motor
terminals below it), a second motor of 30 % and 100 % of the pump's rating on the logged feeder, and an
open primary line of the delta-wye transformer feeding the pump.  The circuit theory the checks rest
on:

* Fortescue's symmetrical components (C. L. Fortescue, AIEE Transactions 37, 1918): a motor that
  loses one line draws ``I2 = -I1``; the change of the negative-sequence voltage over that of the
  current, ``dV2/dI2``, is ``-Zs`` (the supply seen backwards) when the change is drawn below the
  logger and ``+Z2`` (the motor's own negative-sequence impedance) when it is imposed from above.
  Using that sign to tell the side is the reasoning of a negative-sequence directional element
  (common practice, no source).
* Kirchhoff's current law at the logger point: the logged current is the lost branch's plus the
  other equipment's, so the change of the logged current is the lost branch's own (any circuits
  textbook, e.g. Alexander & Sadiku, *Fundamentals of Electric Circuits*; chapter from memory).
* A delta-wye transformer with one primary line open feeds the secondary from one primary
  line-to-line voltage: the secondary currents split about 2:1:1 (from memory, issue 19).

The ground truth (onset to the sample, line, location) comes from the simulator's truth file.
"""

from __future__ import annotations

import functools
import math

import numpy as np
import pytest

from _site_support import SAMPLES, scenario_dict
from waveforms.analysis import analyze, detection_input, measure_capture
from waveforms.detect import DetectParams
from waveforms.detect.unbalance import detect_unbalance
from waveforms.io import read_capture
from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import simulate

IMP = {"source_r_ohm": 0.01, "source_x_ohm": 0.06}
CYCLE_S = 1.0 / 60.0


def _second_motor(k: float) -> dict:
    """The sludge pump's 50 hp machine scaled to ``k`` times its rating (impedances / k, inertia and torque x k)."""
    return {"name": f"second motor {k:g} pu", "load": {"kind": "constant", "torque_n_m": 120.0 * k},
            "machine": {"name": "second motor (invented)", "rs_ohm": 0.087 / k, "xls_ohm": 0.302 / k, "xm_ohm": 13.08 / k,
                        "xlr_ohm": 0.302 / k, "rr_ohm": 0.228 / k, "base_frequency_hz": 60.0, "poles": 4,
                        "inertia_kg_m2": 2.06 * k, "friction_n_m_s": 0.05 * k, "connection": "star", "rated_voltage_v": 460.0}}


def _bank(at: str, pu: float, connection: str = "delta") -> dict:
    site = {"logger_at": "feeder" if at == "bus" else "motor", "capacitor": [{"at": at, "connection": connection, "fla_pu": pu}]}
    if at == "motor":
        site.update({"cable_r_ohm": 0.02, "cable_x_ohm": 0.03})
    return site


TRANSFORMER = {"kva": 300, "primary_voltage_ll_v": 4160, "secondary_voltage_ll_v": 460, "vector_group": "Dyn11",
               "impedance_pct": 5.0, "x_over_r": 5.0, "magnetising_pct": 1.0}

#: name -> (site, supply, line opened at the motor's switch or None for the transformer primary)
SITES = {
    "bank_bus_10pct": (_bank("bus", 0.10), IMP, "C"),
    "bank_bus_30pct": (_bank("bus", 0.30, "star"), IMP, "C"),
    "bank_bus_50pct": (_bank("bus", 0.50), IMP, "C"),
    "bank_motor_10pct": (_bank("motor", 0.10), IMP, "A"),
    "bank_motor_30pct": (_bank("motor", 0.30), IMP, "A"),
    "bank_motor_50pct": (_bank("motor", 0.50), IMP, "A"),
    "second_motor_30pct": ({"logger_at": "feeder", "second_motor": _second_motor(0.3)}, IMP, "B"),
    "second_motor_100pct": ({"logger_at": "feeder", "second_motor": _second_motor(1.0)}, IMP, "B"),
    "transformer_primary": ({"logger_at": "motor", "transformer": TRANSFORMER},
                            {"voltage_ll_v": 4160, "source_r_ohm": 0.5, "source_x_ohm": 2.0}, None),
}


def simulate_site(name: str, opened: bool, open_s: float = 1.0, duration_s: float = 2.0):
    """(capture, truth) of one site of `SITES`, its line opening at ``open_s`` (or staying closed)."""
    site, supply, line = SITES[name]
    site = dict(site)
    switches: dict = {}
    if opened and line:
        switches = {"ops": [{"line": line, "time_s": open_s, "action": "open"}]}
    if opened and "transformer" in site:
        site["transformer"] = dict(site["transformer"], ops=[{"line": "A", "time_s": open_s, "action": "open"}])
    d = scenario_dict(site, duration_s=duration_s, supply=supply, switches=switches, rate_hz=5000.0, initial={"state": "steady"})
    return simulate(scenario_from_dict(d, "site-test.toml", SAMPLES))


@functools.lru_cache(maxsize=None)
def _simulated(name: str, opened: bool):
    """(capture, truth) of one site, with or without the open line (cached for the session)."""
    return simulate_site(name, opened)


@functools.lru_cache(maxsize=None)
def _analysed(name: str, opened: bool):
    cap, truth = _simulated(name, opened)
    return analyze(cap, speed=False), truth


@pytest.mark.parametrize("name", sorted(SITES))
def test_open_line_found_at_its_onset_and_placed(name):
    res, truth = _analysed(name, True)
    (t_ev,) = [e for e in truth["events"] if e["kind"] == "open_phase"]
    ops = [e for e in res.events if e.kind == "open_phase"]
    assert len(ops) == 1, [e.summary for e in res.events]
    e = ops[0]
    # onset within 2 cycles of the truth (issue 19 acceptance); in fact to a few samples
    assert abs(e.start_s - t_ev["start_s"]) <= 2 * CYCLE_S
    loc = e.figures["location"]
    assert loc in (t_ev["location"], "unknown")
    if "detection" not in e.figures:
        # a small bank leaves the open line below 10 % of the others: the dead-line detector's case, same verdict
        assert name.endswith("10pct") and e.phase == t_ev["phase"]
        return
    assert e.figures["detection"] == "change at onset"
    assert loc in (t_ev["location"], "unknown")  # stated right, or honestly "cannot be told"
    if loc == "unknown":
        assert e.figures["location_reason"].startswith("cannot be told")
    assert e.figures["location_reason"]
    if loc == "transformer_primary":
        # 2:1:1: the line carrying the double current is the one named (which primary line opened needs the vector group)
        split = e.figures["current_split"]
        assert split[("A", "B", "C").index(e.phase)] == pytest.approx(2.0, abs=0.45)
    else:
        assert e.phase == t_ev["phase"]
    # Fortescue: below the logger dV2/dI2 is the supply's impedance seen backwards (negative reactance or tiny),
    # above it the motor's own negative-sequence impedance (inductive)
    z = complex(*e.figures["negative_sequence_impedance_pu"])
    if loc == "downstream":
        assert z.imag < 0 or abs(z) < 0.03
    else:
        assert z.imag > 0.03
    # no supply unbalance blamed for the motor's own open line
    assert not [u for u in res.events if u.kind == "unbalance"]
    assert "supply voltage unbalance" not in res.verdict


@pytest.mark.parametrize("name", ["bank_bus_30pct", "second_motor_30pct", "second_motor_100pct"])
def test_feeder_branch_current_inferred_by_kirchhoff(name):
    # Kirchhoff at the logger point: logged = lost branch + other equipment; the other equipment keeps its current
    res, _ = _analysed(name, True)
    (e,) = [e for e in res.events if e.kind == "open_phase"]
    f = e.figures
    assert f["remaining_current_a"] > 0.1 * f["logger_live_line_current_a"]  # no dead line at the logger
    assert "Kirchhoff" in f["branch_inferred"]
    # the inferred branch current before the onset is the pump's own three-phase current: about its FLA share
    # (the pump's quadratic load at 190 N m is near its rating; our band)
    assert 0.6 * 58.4 <= f["inferred_branch_current_a"] <= 1.2 * 58.4
    # a single-phased motor draws about sqrt 3 times its three-phase current at the same shaft power (common practice)
    assert 1.2 <= f["single_phase_current_a"] / f["inferred_branch_current_a"] <= 2.5
    kind = "capacitive" if name.startswith("bank") else "inductive"
    assert f["remaining_load"].startswith(kind)


@pytest.mark.parametrize("name", sorted(SITES))
def test_same_site_without_the_open_line_gives_no_event(name):
    res, truth = _analysed(name, False)
    assert truth.get("events", []) == []
    assert res.events == [], [e.summary for e in res.events]
    assert not (res.hookup and res.hookup.findings)


@pytest.mark.parametrize("name", ["cap_bus_open", "cap_motor_open", "transformer_primary_open", "two_pumps_feeder"])
def test_shipped_site_samples_found_without_a_hookup_warning(name):
    # the hook-up's clamp check looked at the single-phased windows too and warned; the open line is now told apart
    # (waveforms.hookup.check.balanced_part)
    import json

    truth = json.loads((SAMPLES / "site" / f"{name}.truth.json").read_text())
    res = analyze(read_capture(SAMPLES / "site" / f"{name}.h5"), speed=False)
    (t_ev,) = [e for e in truth["events"] if e["kind"] == "open_phase"]
    (e,) = [e for e in res.events if e.kind == "open_phase"]
    assert abs(e.start_s - t_ev["start_s"]) <= 2 * CYCLE_S
    assert e.figures["location"] == t_ev["location"]
    assert not (res.hookup and res.hookup.findings), [f.what for f in res.hookup.findings]
    # the voltage depression the open line causes is the open phase's own, not a separate dip: on a transformer
    # primary the depressed secondary channel need not be the named (double-current) line (vector group, Dyn11 here)
    assert not [d for d in res.events if d.kind in ("dip", "interruption")], [d.summary for d in res.events]
    # the timeline follows the event: single-phased from the onset, though no channel went dead (consistency, no
    # external source); an open transformer primary leaves three live lines at the motor (2:1:1), not single phasing
    tl = res.timeline
    after = tl[tl["end_s"] > e.start_s + CYCLE_S]
    want = "three-phase" if name == "transformer_primary_open" else "single-phased"
    assert list(after["state"]) == [want], tl
    assert float(after["start_s"].iloc[0]) <= e.start_s + CYCLE_S


@pytest.mark.parametrize("name", ["healthy_run", "dip_one_phase", "unbalanced_supply", "dip_three_phase", "dol_start", "jam"])
def test_no_new_open_phase_on_the_other_samples(name):
    # a dip, a supply unbalance, a start or a jam changes the currents but is no lost branch (consistency, no external source)
    path = next(p for p in SAMPLES.glob(f"{name}.*") if p.suffix in (".h5", ".csv"))
    res = analyze(read_capture(path), speed=False)
    assert not [e for e in res.events if e.kind == "open_phase"]


def _unbalance_of(path, open_phase_events=()):
    cap = read_capture(path)
    m = measure_capture(cap)
    inp = detection_input(cap, m, None, cap.nameplate, DetectParams(unbalance_min_s=0.5))
    return detect_unbalance(inp, {"open_phase": tuple(open_phase_events), "dips": ()}).events


def test_load_unbalance_never_reported_as_the_supply_s():
    # item 3: the pump's own open line behind a bank, the open-phase events withheld: what remains is a voltage unbalance
    # of about 1.3 % at the logger -- the drop of the pump's negative-sequence current across the supply impedance
    # (V2 = -Zs I2, Fortescue), the load's, not the supply's
    ev = _unbalance_of(SAMPLES / "site" / "cap_bus_open.h5")
    assert ev
    for e in ev:
        if e.start_s >= 2.0:
            assert e.figures["unbalance_of"] == "load"
            assert "supply voltage unbalance" not in e.summary and "derating" not in " ".join(e.figures)
            z = complex(*e.figures["negative_sequence_impedance_pu"])
            assert z.imag < 0


def test_supply_unbalance_still_the_supply_s():
    # a supply whose magnitudes differ (0.955 / 1.02 pu): V2 = +Z2 I2 with Z2 the motor's negative-sequence impedance,
    # about its locked-rotor impedance, 0.1-0.2 pu and inductive (Fortescue; magnitude from memory)
    (e,) = _unbalance_of(SAMPLES / "unbalanced_supply.h5")
    assert e.figures["unbalance_of"] == "supply"
    z = complex(*e.figures["negative_sequence_impedance_pu"])
    assert z.imag > 0 and 0.05 <= abs(z) <= 0.4
    assert "supply voltage unbalance" in e.summary and math.isfinite(e.figures["nema_derating_factor"])


def test_no_voltages_location_cannot_be_told():
    # currents only: the change alone fits a branch losing line C (Kirchhoff), but which side imposed it cannot be told
    from waveforms.capture import from_arrays, standard_channels

    cap, truth = _simulated("bank_bus_30pct", True)
    chans = [c for c in standard_channels() if c.kind == "current"]
    x = cap.read(0, cap.n_samples, [c.name for c in chans])
    cur = from_arrays(x, chans, cap.sample_rate_hz, nominal_frequency_hz=60.0)
    res = analyze(cur, nameplate=cap.nameplate, speed=False)
    (e,) = [e for e in res.events if e.kind == "open_phase"]
    assert e.phase == "C" and e.figures["location"] == "unknown"
    assert e.figures["location_reason"].startswith("cannot be told")
    assert abs(e.start_s - truth["events"][0]["start_s"]) <= 2 * CYCLE_S
    assert np.isfinite(e.figures["inferred_branch_current_a"])


def test_six_lead_sample_open_line_and_no_supply_unbalance():
    # winding currents of a delta motor with line A open: 1/3, 2/3, 1/3 of the line current (Kirchhoff at the delta's
    # corners), no dead channel; before issue 19 the verdict was "sustained supply voltage unbalance 1.4 %"
    import json

    truth = json.loads((SAMPLES / "site" / "six_lead_open_phase.truth.json").read_text())
    res = analyze(read_capture(SAMPLES / "site" / "six_lead_open_phase.h5"), speed=False)
    (t_ev,) = [e for e in truth["events"] if e["kind"] == "open_phase"]
    (e,) = [e for e in res.events if e.kind == "open_phase"]
    assert e.phase == t_ev["phase"] and e.figures["location"] == "downstream"
    assert abs(e.start_s - t_ev["start_s"]) <= 2 * CYCLE_S
    assert not [u for u in res.events if u.kind == "unbalance"]
    if e.figures.get("detection") == "change at onset":  # read as recorded (winding currents taken for line currents)
        assert "winding currents" in e.figures["winding_current_pattern"]
