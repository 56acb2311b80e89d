"""The thermal model judges the motor's own current when the logger sees a feeder (issue 19; waveforms.motor.branch).

Source of the check: Kirchhoff's current law at the logger point (any circuits textbook, e.g. Alexander & Sadiku,
*Fundamentals of Electric Circuits*; chapter from memory): the feeder current is the motor's plus the other
equipment's, so the motor's current inferred from the feeder logger must equal what a logger on the motor's own
leads records in the same simulated site (same seed, same machines; the simulator solves the network, it does not
use the inference).  A balanced set is ``I, a^2 I, a I`` (Fortescue 1918).
"""

from __future__ import annotations

import functools

import numpy as np
import pytest

from _site_support import SAMPLES, scenario_dict
from waveforms.analysis import analyze
from waveforms.motor.nameplate import load_nameplate
from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import simulate

IMP = {"source_r_ohm": 0.01, "source_x_ohm": 0.06}
PLATE = load_nameplate(SAMPLES / "pump2.nameplate.toml")


def _second_motor() -> dict:
    return {"name": "second motor", "load": {"kind": "constant", "torque_n_m": 120.0},
            "machine": {"name": "second motor (invented)", "rs_ohm": 0.087, "xls_ohm": 0.302, "xm_ohm": 13.08,
                        "xlr_ohm": 0.302, "rr_ohm": 0.228, "base_frequency_hz": 60.0, "poles": 4,
                        "inertia_kg_m2": 2.06, "friction_n_m_s": 0.05, "connection": "star", "rated_voltage_v": 460.0}}


SITES = {
    "second_motor": {"second_motor": _second_motor()},
    "bank_bus": {"capacitor": [{"at": "bus", "connection": "delta", "fla_pu": 0.3}]},
}


@functools.lru_cache(maxsize=None)
def _run(name: str, logger_at: str):
    site = dict(SITES[name], logger_at=logger_at)
    d = scenario_dict(site, duration_s=2.5, supply=IMP, switches={"ops": [{"line": "B", "time_s": 1.0, "action": "open"}]},
                      rate_hz=5000.0, initial={"state": "steady"})
    cap, _truth = simulate(scenario_from_dict(d, "branch-test.toml", SAMPLES))
    return analyze(cap, nameplate=PLATE, speed=False)


@pytest.mark.parametrize("name", sorted(SITES))
def test_feeder_logger_thermal_equals_the_motor_leads_logger(name):
    feeder = _run(name, "feeder")
    own = _run(name, "motor")
    (op,) = [e for e in feeder.events if e.kind == "open_phase"]
    assert "branch_inferred" in op.figures and op.figures["location"] == "downstream"
    assert any("branch current inferred by Kirchhoff" in n for n in feeder.notes)
    f, m = feeder.thermal.summary, own.thermal.summary
    # the motor's current, not the feeder's: heating and thermal capacity as on the motor's own leads.  A capacitor
    # bank keeps its current at its own impedance (within 5 %, our tolerance); a second motor answers the voltage
    # unbalance the open line causes with its own negative-sequence current (its negative-sequence impedance is about
    # its locked-rotor impedance, common practice, no source), which the inference cannot tell from the motor's
    # change at the onset: the motor's figures read low there, within 20 % (measured about 9 % and 16 %)
    tol = 0.05 if name == "bank_bus" else 0.20
    for key in ("max_heating_pu", "thermal_capacity_used_pct", "thermal_capacity_end_pct"):
        assert f[key] == pytest.approx(m[key], rel=tol), key
        if name == "second_motor":
            assert f[key] <= m[key] * 1.05, key  # it reads low, never high
    assert f["initial_state"] == m["initial_state"]


def test_without_the_inference_the_feeder_current_would_have_been_judged():
    # the failure this guards against: on the feeder the logged current is well above the motor's own (the second
    # motor's current added), which the old thermal figures judged against pump 2's FLA
    feeder = _run("second_motor", "feeder")
    own = _run("second_motor", "motor")
    # (compared after the onset's transient, at 2.0 s: 140 A logged against 110 A on the motor's leads)
    k_f = int(np.searchsorted(feeder.cycles["t_s"], 2.0))
    k_m = int(np.searchsorted(own.cycles["t_s"], 2.0))
    logged = max(float(feeder.cycles[f"I{c}_rms"].iloc[k_f]) for c in "abc")
    motor = max(float(own.cycles[f"I{c}_rms"].iloc[k_m]) for c in "abc")
    assert logged > 1.2 * motor
    # the thermal model's largest line current is the motor's inferred one, not the logged feeder current
    assert feeder.thermal.summary["max_current_pu"] < 0.85 * logged / PLATE.fla_a


def test_the_report_says_the_plotted_currents_are_the_feeders(tmp_path):
    # the current plot shows the logged currents; on a feeder the report says they are not the motor's alone
    from waveforms.report import write_report

    write_report(_run("second_motor", "feeder"), tmp_path / "feeder", html=True)
    write_report(_run("second_motor", "motor"), tmp_path / "own", html=True)
    assert "The logger sees a feeder" in (tmp_path / "feeder" / "report.html").read_text()
    assert "The logger sees a feeder" not in (tmp_path / "own" / "report.html").read_text()
