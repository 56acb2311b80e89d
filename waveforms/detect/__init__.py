"""Event detectors: one module per kind of event, run through one registry.

Each detector reads the per-cycle measurement table (and, where it needs them,
the half-cycle table, the speed track, the nameplate and -- for point-on-wave
refinement only -- the capture's samples) and the events of the earlier
detectors it declares, and returns its `Findings` (events and notes).
"""

from .context import DetectionInput, DetectParams
from .event import EVENT_COLUMNS, EVENT_KINDS, Event, events_frame
from .registry import DETECTORS, Detections, Findings, detect, detector_names, register, run_detectors

__all__ = [
    "DETECTORS", "DetectParams", "Detections", "DetectionInput", "EVENT_COLUMNS", "EVENT_KINDS", "Event", "Findings",
    "detect", "detector_names", "events_frame", "register", "run_detectors",
]
