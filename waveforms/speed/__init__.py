"""Rotor speed, slip and rotation direction from the stator currents (no tachometer).

Public API:

* `track_speed` -- one row per window: slip, rpm, component used, prominence [dB], status.
* `window_detail` -- the full result of one window (spectrum, bands, peaks), for `plot_spectrum`.
* `SpeedSettings` -- the search parameters.
* `acceleration_interval`, `slowdown_interval` -- transient times from the per-cycle RMS current.
* `track_transient` -- short windows over a start or slowdown, searching all slips.
* `rotation_direction`, `direction_from_cycles`, `direction_from_waveforms` -- phase sequence and rotation.
* `plot_spectrum` -- the spectrum with the search bands shaded and the components marked.
* `signatures` -- the published component formulas.
"""

from .direction import direction_from_cycles, direction_from_waveforms, rotation_direction
from .estimator import TRACK_COLUMNS, SpeedSettings, WindowResult, track_speed, track_transient, window_detail
from .transient import Transient, acceleration_interval, slowdown_interval

__all__ = [
    "TRACK_COLUMNS", "SpeedSettings", "Transient", "WindowResult", "acceleration_interval",
    "direction_from_cycles", "direction_from_waveforms", "plot_spectrum", "rotation_direction",
    "slowdown_interval", "track_speed", "track_transient", "window_detail",
]


def __getattr__(name: str):
    # the plot pulls in matplotlib: import it only when asked for
    if name == "plot_spectrum":
        from .plot import plot_spectrum

        return plot_spectrum
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
