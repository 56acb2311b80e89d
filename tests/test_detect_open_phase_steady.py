"""An open line already open when the capture begins, kept live by other equipment: no dead line, no onset.

The same simulated sites as tests/test_detect_open_phase_change.py (waveforms.sim, ``[site]``: a capacitor
bank above and below the open point, a second motor on the logged feeder, an open transformer primary),
with the line opened at 0.5 s and the capture cut to begin at 2.0 s, when the motor runs steadily
single-phased.  The circuit theory the checks rest on:

* Kirchhoff's current law at the logger point: the logged current is the branch's plus the other
  equipment's (any circuits textbook, e.g. Alexander & Sadiku, *Fundamentals of Electric Circuits*;
  chapter from memory).  A branch that lost line X carries +s and -s on the other two lines, whose
  positive- and negative-sequence parts are equal in size; balanced other equipment adds positive
  sequence only (C. L. Fortescue, AIEE Transactions 37, 1918).
* Which side draws the unbalance: a supply unbalance drives the motor (V2 = Z2 I2, inductive), a load
  below the logger pulls V2 only through the supply (V2 = -Zs I2): the reasoning of a
  negative-sequence directional element (common practice, no source).
* A running motor's single-phase current lags its driving line-to-line voltage by 0-90 deg (motoring;
  common practice, no source).

The ground truth (line, location) comes from the simulator's truth file.
"""

from __future__ import annotations

import datetime as dt
import functools

import numpy as np
import pytest

from test_detect_open_phase_change import SITES, simulate_site
from waveforms.analysis import analyze
from waveforms.capture import ArraySource
from waveforms.detect.open_phase_steady import assess_steady, line_to_line_fits

A = np.exp(2j * np.pi / 3)
E = np.array([1, A * A, A])
CUT_S = 2.0


@functools.lru_cache(maxsize=None)
def _cut(name: str, opened: bool = True):
    """(capture cut to begin at CUT_S, truth) of one site whose line opened at 0.5 s (or stayed closed)."""
    cap, truth = simulate_site(name, opened, open_s=0.5, duration_s=3.5)[:2]
    k = int(CUT_S * cap.sample_rate_hz)
    x = cap.read(k, cap.n_samples, list(cap.channel_names))
    cut = cap.replace(source=ArraySource(x), start_time=cap.start_time + dt.timedelta(seconds=CUT_S), gaps=())
    return cut, truth


@functools.lru_cache(maxsize=None)
def _analysed(name: str, opened: bool = True):
    cap, truth = _cut(name, opened)
    return analyze(cap, speed=False), truth


@pytest.mark.parametrize("name", sorted(SITES))
def test_line_open_before_the_capture_is_found_and_placed(name):
    res, truth = _analysed(name)
    (t_ev,) = [e for e in truth["events"] if e["kind"] == "open_phase"]
    ops = [e for e in res.events if e.kind == "open_phase"]
    assert len(ops) == 1, [e.summary for e in res.events]
    e = ops[0]
    f = e.figures
    assert f["present_at_capture_start"] and e.start_s < 0.05 and e.end_s is None
    assert f["location"] == t_ev["location"]
    if f["location"] == "transformer_primary":
        # 2:1:1: the line carrying the double current is named (which primary line opened needs the vector group)
        assert f["current_split"][("A", "B", "C").index(e.phase)] == pytest.approx(2.0, abs=0.45)
    else:
        assert e.phase == t_ev["phase"]
    if f.get("detection") == "steady currents at the start":
        z = complex(*f["negative_sequence_impedance_pu"])
        if f["location"] == "downstream":  # drawn below the logger: -Zs, or V2 too small to measure against I2
            assert z.imag < 0 or abs(z) < 0.03
        else:  # imposed from above: the motor's own Z2, inductive
            assert z.imag > 0.03
    # an open line is not a hook-up error, and the motor's open line is not the supply's unbalance
    assert not (res.hookup and res.hookup.findings), [x.what for x in res.hookup.findings]
    assert not [u for u in res.events if u.kind == "unbalance"]
    assert "already open when the capture began" in res.verdict


@pytest.mark.parametrize("name", ["bank_bus_30pct", "bank_bus_50pct", "second_motor_30pct", "second_motor_100pct"])
def test_feeder_branch_split_by_kirchhoff(name):
    res, _ = _analysed(name)
    (e,) = [e for e in res.events if e.kind == "open_phase"]
    f = e.figures
    assert f["detection"] == "steady currents at the start"
    assert f["remaining_current_a"] > 0.1 * f["logger_live_line_current_a"]  # no dead line at the logger
    # the pump's single-phase current: about sqrt 3 times its three-phase current (common practice), and the
    # pump runs near its 58.4 A FLA at this load (our band): 1.3-2.3 x FLA
    assert 1.3 * 58.4 <= f["single_phase_current_a"] <= 2.3 * 58.4
    assert f["live_line_current_a"] == f["single_phase_current_a"]
    assert f["remaining_load"].startswith("capacitive" if name.startswith("bank") else "inductive")
    # the same currents from a line-to-line load are named, and the verdict says the call rests on the split alone
    assert "between lines" in f["alternative"] and "rests on the steady currents alone" in res.verdict


@pytest.mark.parametrize("name", sorted(SITES))
def test_same_site_healthy_from_the_start_gives_nothing(name):
    res, _ = _analysed(name, False)
    assert res.events == [], [e.summary for e in res.events]
    assert not (res.hookup and res.hookup.findings)


def test_one_split_motors_for_any_branch_and_other_load():
    # the three choices of the open line give single-phase currents 120 deg apart against their own driving voltage
    # (Fortescue's operator a), so exactly one lags it by 0-90 deg; the split recovers the branch and the other load
    rng = np.random.default_rng(7)
    v = 265.0 * E
    for _ in range(300):
        x = int(rng.integers(3))
        y, z = (x + 1) % 3, (x + 2) % 3
        lag = np.radians(rng.uniform(5.0, 85.0))
        s = rng.uniform(20.0, 200.0) * np.exp(-1j * lag) * (v[y] - v[z]) / abs(v[y] - v[z])
        other = rng.uniform(0.0, 150.0) * np.exp(-1j * np.radians(rng.uniform(-90.0, 80.0)))
        i = other * E
        i[y] += s
        i[z] -= s
        fits = line_to_line_fits(i, v)
        good = [f for f in fits if f["plausible"]]
        assert [f["line"] for f in good] == ["ABC"[x]]
        assert good[0]["single_phase_current_a"] == pytest.approx(abs(s), rel=1e-9)
        assert good[0]["other_load_current_a"] == pytest.approx(abs(other), rel=1e-9, abs=1e-9)


def test_supply_unbalance_and_reversed_clamp_are_not_called():
    v = 265.0 * E
    motor = 50.0 * np.exp(-1j * np.radians(30)) * E
    # a motor on a 4 % supply unbalance: I2 = V2 / Z2 with Z2 its locked-rotor impedance, 0.15 pu, inductive
    # (Fortescue; the size from memory): imposed from above, under the 5 % that an open line upstream leaves
    z2 = 0.15 * (265.0 / 50.0) * np.exp(1j * np.radians(80))
    v2 = 0.04 * 265.0 * np.array([1, A, A * A])
    assert assess_steady(motor + v2 / z2, v + v2) is None
    # a reversed clamp: the zero sum is lost (twice a line current left over; Kirchhoff), so no split is judged
    rev = motor * np.array([1, -1, 1])
    assert assess_steady(rev, v) is None
    # no voltages: nothing is called
    assert assess_steady(np.array([50, -50, 0], complex), None) is None
