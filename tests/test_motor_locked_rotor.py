"""Locked-rotor current of the bundled pump motor against its NEMA code letter and the trade's range."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from tests._motor_support import last_cycles, rms, simulate
from waveforms.sim.machine import load_machine
from waveforms.motor.nameplate import load_nameplate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"

#: NEMA MG-1 10.37.2 locked-rotor kVA per horsepower, lower bound included, upper
#: excluded (REFERENCES.md [pub]); typed here from the standard's table, not taken from
#: the package.
NEMA_KVA_PER_HP = {"F": (5.0, 5.6), "G": (5.6, 6.3), "H": (6.3, 7.1)}


@pytest.fixture(scope="module")
def pump2_locked() -> tuple[float, float]:
    m = load_machine(SAMPLES / "pump2.machine.toml")
    d = {k: getattr(m, k) for k in ("rs_ohm", "xls_ohm", "xm_ohm", "xlr_ohm", "rr_ohm", "base_frequency_hz", "poles",
                                     "inertia_kg_m2", "connection", "rated_voltage_v")}
    sim = simulate(d, 460.0, duration_s=0.6, scenario={"locked_rotor": True}, initial={"state": "rest"})
    sl = last_cycles(sim, 12)
    return float(np.mean(rms(sim.i_line_a[:, sl]))), float(np.mean(sim.torque_n_m[sl]))


def test_locked_rotor_current_lies_in_the_code_letter_range(pump2_locked: tuple[float, float]) -> None:
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    i_lr, _ = pump2_locked
    # NEMA MG-1 10.37.2: locked-rotor kVA = sqrt(3) V I_LR / 1000 at rated voltage and frequency
    kva_per_hp = math.sqrt(3) * plate.rated_voltage_v * i_lr / 1000.0 / plate.rated_power_hp
    lo, hi = NEMA_KVA_PER_HP[plate.nema_code_letter]
    assert lo <= kva_per_hp < hi


def test_locked_rotor_current_is_several_times_full_load(pump2_locked: tuple[float, float]) -> None:
    # Locked-rotor current 5-8 x FLA for NEMA designs (REFERENCES.md [mem], from memory).
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    i_lr, t_lr = pump2_locked
    assert 5.0 <= i_lr / plate.fla_a <= 8.0
    # and there is starting torque: NEMA MG-1 12.38.1 gives a Design B minimum locked-rotor
    # torque of 140 % of full-load torque for a 50 hp, 4-pole, 60 Hz motor (from memory)
    rated_torque = plate.rated_power_kw * 1000 / (plate.rated_speed_rpm * 2 * math.pi / 60)
    assert t_lr >= 1.4 * rated_torque


def test_nameplate_full_load_current_matches_the_model_at_rated_output() -> None:
    # The bundled nameplate states what the model does at 50 hp output (consistency of the
    # sample data): shaft power = T w at the rated speed, FLA = the line current there.
    plate = load_nameplate(SAMPLES / "pump2.nameplate.toml")
    m = load_machine(SAMPLES / "pump2.machine.toml")
    d = {k: getattr(m, k) for k in ("rs_ohm", "xls_ohm", "xm_ohm", "xlr_ohm", "rr_ohm", "base_frequency_hz", "poles",
                                     "inertia_kg_m2", "connection", "rated_voltage_v", "friction_n_m_s")}
    w_rated = plate.rated_speed_rpm * 2 * math.pi / 60
    t_shaft = plate.rated_power_kw * 1000 / w_rated
    sim = simulate(d, 460.0, duration_s=0.5, load={"kind": "constant", "torque_n_m": t_shaft})
    sl = last_cycles(sim, 12)
    assert float(np.mean(sim.omega_m_rad_s[sl])) * 60 / (2 * math.pi) == pytest.approx(plate.rated_speed_rpm, abs=1.0)
    assert float(np.mean(rms(sim.i_line_a[:, sl]))) == pytest.approx(plate.fla_a, rel=5e-3)
