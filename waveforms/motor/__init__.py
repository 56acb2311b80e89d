"""Motor nameplate, machine model and simulator, thermal model.

Simulator entry points (imported lazily, so that ``waveforms.motor.nameplate``
stays cheap to import)::

    from waveforms.motor import load_scenario, simulate
    capture, truth = simulate(load_scenario("sample_captures/healthy_run.scenario.toml"))
"""

from __future__ import annotations

from typing import Any

_LAZY = {
    "simulate": "simulate", "run": "simulate", "Simulation": "simulate",
    "load_scenario": "scenario", "scenario_from_dict": "scenario", "Scenario": "scenario",
    "MachineParameters": "machine", "load_machine": "machine",
    "write_simulation": "output",
    "machine_from_nameplate": "estimate",
}

__all__ = sorted(_LAZY)


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(f"{__name__}.{_LAZY[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
