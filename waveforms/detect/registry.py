"""The detector registry: one entry per detector module, run in a fixed order.

Detectors run in `RUN_ORDER`; each sees the events found before it
(`DetectionInput.events`), so that, e.g., the dip detector can leave out the
voltage depression that an upstream open phase explains.
"""

from __future__ import annotations

from collections.abc import Callable

from ..errors import InvalidParameterError
from .context import DetectionInput
from .event import Event

Detector = Callable[[DetectionInput], list[Event]]

DETECTORS: dict[str, Detector] = {}

#: Run order of the built-in detectors (later ones read earlier events);
#: detectors registered by other modules run after these, in registration order.
RUN_ORDER: tuple[str, ...] = ("stall", "start", "open_phase", "dips", "unbalance")


def register(name: str) -> Callable[[Detector], Detector]:
    """Decorator: add a detector under ``name`` (unique)."""

    def deco(fn: Detector) -> Detector:
        if name in DETECTORS:
            raise InvalidParameterError(f"detector {name!r} is registered twice")
        DETECTORS[name] = fn
        return fn

    return deco


def _load_builtin() -> None:
    # order matters: later detectors read earlier events
    from . import stall, start, open_phase, dips, unbalance  # noqa: F401


def detector_names() -> tuple[str, ...]:
    """Registered detectors in run order."""
    _load_builtin()
    return tuple(n for n in RUN_ORDER if n in DETECTORS) + tuple(n for n in DETECTORS if n not in RUN_ORDER)


def run_detectors(inp: DetectionInput, only: tuple[str, ...] | None = None) -> list[Event]:
    """Run every registered detector (or those named in ``only``); events sorted by start."""
    _load_builtin()
    if only is not None:
        bad = [n for n in only if n not in DETECTORS]
        if bad:
            raise InvalidParameterError(f"unknown detector(s) {bad}; known: {list(DETECTORS)}")
    for name in detector_names():
        if only is not None and name not in only:
            continue
        found = DETECTORS[name](inp)
        inp.events.extend(found)
    return sorted(inp.events, key=lambda e: (e.start_s, e.kind))
