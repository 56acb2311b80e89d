"""Rotor speed, slip and rotation direction from the stator currents (no tachometer).

Public API:

* `track_speed` -- one row per window: slip, rpm, component used, confidence, status.
* `window_detail` -- the full result of one window (spectrum, bands, peaks), for `plot_spectrum`.
* `SpeedSettings` -- the search parameters.
* `acceleration_interval`, `slowdown_interval` -- transient times from the per-cycle RMS current.
* `rotation_direction`, `sequence_from_waveforms`, `fortescue` -- phase sequence and rotation.
* `plot_spectrum` -- the spectrum with the search bands shaded and the components marked.
* `signatures` -- the published component formulas.
"""

from .estimator import TRACK_COLUMNS, SpeedSettings, WindowResult, track_speed, window_detail

__all__ = ["TRACK_COLUMNS", "SpeedSettings", "WindowResult", "track_speed", "window_detail"]
