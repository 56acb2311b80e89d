"""Scenario builders for the simulator tests (test data only; no real site)."""

from __future__ import annotations

import copy
import math
from typing import Any

import numpy as np

from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import Simulation, run

#: Krause, Wasynczuk & Sudhoff 3 hp, 220 V, 4-pole machine, reactances at 60 Hz
#: (values as tabulated in several independent public copies; table number from memory).
KRAUSE_3HP = {"rs_ohm": 0.435, "xls_ohm": 0.754, "xm_ohm": 26.13, "xlr_ohm": 0.754, "rr_ohm": 0.816,
              "base_frequency_hz": 60.0, "poles": 4, "inertia_kg_m2": 0.089, "connection": "star", "rated_voltage_v": 220.0}

#: Krause et al. 50 hp, 460 V, 4-pole machine as a star.
KRAUSE_50HP = {"rs_ohm": 0.087, "xls_ohm": 0.302, "xm_ohm": 13.08, "xlr_ohm": 0.302, "rr_ohm": 0.228,
               "base_frequency_hz": 60.0, "poles": 4, "inertia_kg_m2": 1.662, "connection": "star", "rated_voltage_v": 460.0}


def scenario(machine: dict[str, Any], voltage_ll_v: float, duration_s: float = 1.0, fs: float = 6000.0, **tables: Any):
    """A scenario with an ideal logger (no ADC, no noise) unless ``logger`` is given."""
    d: dict[str, Any] = {
        "scenario": {"name": "test", "duration_s": duration_s, "seed": 7},
        "machine": copy.deepcopy(machine),
        "supply": {"voltage_ll_v": voltage_ll_v, "frequency_hz": 60.0},
        "logger": {"sample_rate_hz": fs, "adc_bits": 0},
    }
    for k, v in tables.items():
        if isinstance(v, dict) and isinstance(d.get(k), dict):
            d[k].update(v)
        else:
            d[k] = v
    return scenario_from_dict(d)


def simulate(machine: dict[str, Any], voltage_ll_v: float, **kw: Any) -> Simulation:
    return run(scenario(machine, voltage_ll_v, **kw))


def last_cycles(sim: Simulation, n_cycles: int) -> slice:
    """Sample slice of the last whole ``n_cycles`` cycles (integer number of samples per cycle assumed)."""
    fs = sim.scenario.logger.sample_rate_hz
    per = fs / sim.scenario.supply.f_hz
    assert abs(per - round(per)) < 1e-9, "tests use a whole number of samples per cycle"
    n = int(round(per)) * n_cycles
    return slice(sim.t_s.size - n, sim.t_s.size)


def rms(x: np.ndarray, axis: int = -1) -> np.ndarray:
    return np.sqrt(np.mean(np.asarray(x) ** 2, axis=axis))


def speed_rpm(slip: float, f_hz: float = 60.0, poles: int = 4) -> float:
    return (1.0 - slip) * 120.0 * f_hz / poles


def fundamental_phasor(x: np.ndarray, t: np.ndarray, f_hz: float) -> complex:
    """RMS phasor by a one-bin DFT over whole cycles (numpy; common practice, no source)."""
    return complex(np.sqrt(2.0) * np.mean(x * np.exp(-2j * math.pi * f_hz * t)))
