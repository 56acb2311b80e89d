"""Simulator of a three-phase induction motor on a supply, recorded by a logger.

One concept per module: `machine` (equivalent-circuit parameters),
`topology` (star/delta, open lines), `dynamics` (the model's differential
equations), `steady` (initial operating point), `supply`, `loads`,
`signatures` (slip and eccentricity side-bands), `logger` (the recording
instrument), `scenario` (the scenario file), `simulate` (the run),
`truth` (ground truth of a run) and `output` (writing capture and truth).

Entry points (imported lazily, so that ``import waveforms.sim`` stays cheap)::

    from waveforms.sim import load_scenario, simulate
    capture, truth = simulate(load_scenario("sample_captures/healthy_run.scenario.toml"))

The analysis side of a motor (nameplate, thermal model, circuit estimate from
a nameplate) is `waveforms.motor`; the simulator uses it, never the reverse
except `waveforms.motor.estimate`, which fits `machine.MachineParameters`.
"""

from __future__ import annotations

from typing import Any

_LAZY = {
    "simulate": "simulate", "run": "simulate", "Simulation": "simulate",
    "load_scenario": "scenario", "scenario_from_dict": "scenario", "Scenario": "scenario",
    "MachineParameters": "machine", "load_machine": "machine",
    "write_simulation": "output",
}

__all__ = sorted(_LAZY)


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(f"{__name__}.{_LAZY[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
