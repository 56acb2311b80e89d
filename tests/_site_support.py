"""Small site scenarios for the simulator's site tests (invented data, short runs)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np

from waveforms.sim.scenario import scenario_from_dict
from waveforms.sim.simulate import Simulation, run
from waveforms.sim.truth import phasors

SAMPLES = Path(__file__).resolve().parents[1] / "sample_captures"
PUMP_LOAD = {"kind": "quadratic", "torque_n_m": 190.0, "reference_speed_rpm": 1740, "breakaway_n_m": 12.0}


def scenario_dict(site: dict[str, Any], duration_s: float = 0.3, supply: dict[str, Any] | None = None, switches: dict[str, Any] | None = None,
                  rate_hz: float = 10000.0, initial: dict[str, Any] | None = None, nameplate: bool = True) -> dict[str, Any]:
    d: dict[str, Any] = {
        "scenario": {"name": "site-test", "duration_s": duration_s, "machine": "pump2.machine.toml"},
        "supply": {"voltage_ll_v": 460, "frequency_hz": 60, **(supply or {})},
        "load": PUMP_LOAD, "switches": switches or {},
        "logger": {"adc_bits": 0, "sample_rate_hz": rate_hz}, "site": site,
    }
    if nameplate:
        d["scenario"]["nameplate"] = "pump2.nameplate.toml"
    if initial:
        d["initial"] = initial
    return d


def simulate_site(site: dict[str, Any], **kw: Any) -> Simulation:
    return run(scenario_from_dict(scenario_dict(site, **kw), "site-test.toml", SAMPLES))


def phasor(sim: Simulation, x: np.ndarray, t0: float, t1: float) -> np.ndarray:
    """Fundamental RMS phasors of the rows of ``x`` over [t0, t1) (least squares at the supply frequency)."""
    sl = slice(int(np.searchsorted(sim.t_s, t0)), int(np.searchsorted(sim.t_s, t1)))
    return phasors(x[:, sl], sim.t_s[sl], sim.scenario.supply.f_hz)


def window(sim: Simulation, t0: float, t1: float) -> slice:
    return slice(int(np.searchsorted(sim.t_s, t0)), int(np.searchsorted(sim.t_s, t1)))
