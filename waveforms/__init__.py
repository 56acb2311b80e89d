"""Three-phase motor waveform analysis: phase loss, stall, slip, thermal stress.

The flow runs one way::

    file -> importer -> Capture -> per-cycle measurements -> speed track
         -> events and thermal -> report
"""

from .capture import Capture, Channel, from_arrays, standard_channels
from .errors import CaptureReadError, InvalidParameterError, WaveformsError
from .io import ReadOptions, read_capture

__version__ = "0.1.0"
#: The name the tool presents itself under (console command, help, reports, result.json).
PROGRAM_NAME = "motor-waveforms"

__all__ = [
    "Capture", "CaptureReadError", "Channel", "InvalidParameterError", "ReadOptions",
    "PROGRAM_NAME", "WaveformsError", "from_arrays", "read_capture", "standard_channels", "__version__",
]
