"""What the analysis needs of a motor: nameplate, thermal model, circuit estimate.

`nameplate` (the rated values; a plain record that `waveforms.capture` and
`waveforms.io` may use), `thermal` (thermal stress from measured currents) and
`estimate` (equivalent-circuit parameters fitted to a nameplate).  The
simulator is its own package, `waveforms.sim`.

Entry points are imported lazily, so that ``waveforms.motor.nameplate`` stays
cheap to import::

    from waveforms.motor import load_nameplate, machine_from_nameplate
"""

from __future__ import annotations

from typing import Any

_LAZY = {
    "Nameplate": "nameplate", "load_nameplate": "nameplate",
    "ThermalParams": "thermal", "assess_thermal": "thermal",
    "machine_from_nameplate": "estimate",
}

__all__ = sorted(_LAZY)


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(f"{__name__}.{_LAZY[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
