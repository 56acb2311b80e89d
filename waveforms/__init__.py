"""Three-phase motor waveform analysis: phase loss, stall, slip, thermal stress.

The flow runs one way::

    file -> importer -> Capture -> per-cycle measurements -> speed track
         -> events and thermal -> report
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from .errors import CaptureReadError, InvalidParameterError, WaveformsError

if TYPE_CHECKING:
    from .capture import Capture, Channel, from_arrays, standard_channels
    from .io import ReadOptions, read_capture

#: Names served on first use (PEP 562), so that ``motor-waveforms --help`` does not import numpy (issue 10 item 5).
_LAZY = {"Capture": "capture", "Channel": "capture", "from_arrays": "capture", "standard_channels": "capture",
         "ReadOptions": "io", "read_capture": "io"}


def __getattr__(name: str) -> Any:
    if name in _LAZY:
        import importlib

        value = getattr(importlib.import_module(f".{_LAZY[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

__version__ = "0.1.0"
#: The name the tool presents itself under (console command, help, reports, result.json).
PROGRAM_NAME = "motor-waveforms"

__all__ = [
    "Capture", "CaptureReadError", "Channel", "InvalidParameterError", "ReadOptions",
    "PROGRAM_NAME", "WaveformsError", "from_arrays", "read_capture", "standard_channels", "__version__",
]
