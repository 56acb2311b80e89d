"""The detector registry: each detector declares the earlier detectors whose events it reads.

A detector is a pure function ``(inp, prior) -> Findings``: ``inp`` is the
shared, read-only `DetectionInput`; ``prior`` maps each detector named in its
``needs`` to that detector's events (e.g. the dip detector leaves out the
voltage depression that an upstream open phase explains, so it needs
``open_phase``).  It returns its events and notes and changes nothing else,
so running it twice, or as part of a subset, gives the same result.

The run order is a topological order of the declared needs (ties by name,
so it does not depend on which module was imported first); a cycle is refused.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterable, Mapping

from ..errors import InvalidParameterError
from .context import DetectionInput
from .event import Event


@dataclasses.dataclass(frozen=True)
class Findings:
    """What one detector found: its events and its notes (what it could not do or assumed)."""

    events: tuple[Event, ...] = ()
    notes: tuple[str, ...] = ()


DetectorFunc = Callable[[DetectionInput, Mapping[str, tuple[Event, ...]]], Findings]


@dataclasses.dataclass(frozen=True)
class Detector:
    """A registered detector: its name, the detectors whose events it reads, and the function."""

    name: str
    run: DetectorFunc
    needs: tuple[str, ...] = ()


DETECTORS: dict[str, Detector] = {}


def register(name: str, needs: Iterable[str] = ()) -> Callable[[DetectorFunc], DetectorFunc]:
    """Decorator: add a detector under ``name`` (unique) that reads the events of the detectors ``needs``.

    Examples
    --------
    The built-in unbalance detector reads the events of the open-phase and dip
    detectors (it leaves their cycles out):

    >>> _ = detector_names()  # registers the built-in detectors
    >>> DETECTORS["unbalance"].needs
    ('open_phase', 'dips')
    """

    def deco(fn: DetectorFunc) -> DetectorFunc:
        if name in DETECTORS:
            raise InvalidParameterError(f"detector {name!r} is registered twice")
        DETECTORS[name] = Detector(name=name, run=fn, needs=tuple(needs))
        return fn

    return deco


def _load_builtin() -> None:
    from . import dips, open_phase, stall, start, unbalance  # noqa: F401


def run_order(detectors: Mapping[str, Detector] | None = None) -> tuple[str, ...]:
    """Detector names in a topological order of their needs (ties: by name).

    Raises
    ------
    InvalidParameterError
        A detector needs one that is not registered, or the needs form a cycle (named).

    Examples
    --------
    >>> def nothing(inp, prior):
    ...     return Findings()
    >>> reg = {"b": Detector("b", nothing, needs=("a",)), "a": Detector("a", nothing), "c": Detector("c", nothing, ("b",))}
    >>> run_order(reg)
    ('a', 'b', 'c')
    """
    reg = DETECTORS if detectors is None else detectors
    for d in reg.values():
        missing = [n for n in d.needs if n not in reg]
        if missing:
            raise InvalidParameterError(f"detector {d.name!r} needs {missing}, which are not registered; known: {list(reg)}")
    done: list[str] = []
    left = sorted(reg)
    while left:
        ready = next((n for n in left if all(m in done for m in reg[n].needs)), None)
        if ready is None:
            raise InvalidParameterError(f"the detectors' needs form a cycle: {_cycle(reg, left)}")
        done.append(ready)
        left.remove(ready)
    return tuple(done)


def _cycle(reg: Mapping[str, Detector], left: list[str]) -> str:
    """One cycle among the detectors ``left`` (each has an unmet need among them), as ``a -> b -> a``."""
    path = [left[0]]
    while True:
        nxt = next(m for m in reg[path[-1]].needs if m in left)
        if nxt in path:
            loop = path[path.index(nxt):] + [nxt]
            return " -> ".join(loop)
        path.append(nxt)


def detector_names() -> tuple[str, ...]:
    """Registered detectors in run order.

    Examples
    --------
    >>> "open_phase" in detector_names()
    True
    """
    _load_builtin()
    return run_order()


def _with_needs(names: Iterable[str]) -> set[str]:
    out: set[str] = set()
    todo = list(names)
    while todo:
        n = todo.pop()
        if n not in out:
            out.add(n)
            todo.extend(DETECTORS[n].needs)
    return out


@dataclasses.dataclass(frozen=True)
class Detections:
    """The outcome of `detect`: every requested detector's `Findings`, and the events and notes together."""

    by_detector: dict[str, Findings]

    @property
    def events(self) -> list[Event]:
        """All events, sorted by start and kind."""
        return sorted((e for f in self.by_detector.values() for e in f.events), key=lambda e: (e.start_s, e.kind))

    @property
    def notes(self) -> list[str]:
        """All notes in run order, each once."""
        return list(dict.fromkeys(n for f in self.by_detector.values() for n in f.notes))


def detect(inp: DetectionInput, only: Iterable[str] | None = None) -> Detections:
    """Run every registered detector (or those named in ``only``, with what they need), in run order.

    A detector named in ``only`` gets the events of the detectors it needs, run
    for it but not reported, so its findings equal those of a full run.

    Examples
    --------
    Two seconds of a motor at 10 A on a 400 V, 50 Hz supply whose line A opens
    at 1.000 s between the logger and the motor: the other two currents rise
    to 17.3 A (about sqrt 3 times) and are in antiphase (single phasing):

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> from waveforms.detect import DetectionInput
    >>> from waveforms.measure import measure
    >>> fs = 5000.0
    >>> t = np.arange(10_000) / fs
    >>> ph = np.array([0.0, -2.0, 2.0]) * np.pi / 3
    >>> v = 230 * np.sqrt(2) * np.cos(2 * np.pi * 50 * t[None] + ph[:, None])
    >>> i = 10 * np.sqrt(2) * np.cos(2 * np.pi * 50 * t[None] + ph[:, None] - 0.5)
    >>> i_bc = 17.3 * np.sqrt(2) * np.cos(2 * np.pi * 50 * t - np.pi / 2 - 0.5)
    >>> lost = t >= 1.0
    >>> i[0, lost], i[1, lost], i[2, lost] = 0.0, i_bc[lost], -i_bc[lost]
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), fs, nominal_frequency_hz=50.0, nominal_voltage_v=400.0)
    >>> m = measure(cap)
    >>> found = detect(DetectionInput(m.cycles, m.half_cycles, fla_a=10.0, declared_voltage_ll_v=400.0, capture=cap),
    ...                only=["open_phase"])
    >>> [(e.kind, e.phase, round(e.start_s, 3), e.end_s) for e in found.events]
    [('open_phase', 'A', 1.0, None)]
    """
    order = detector_names()
    wanted = set(order) if only is None else set(only)
    bad = sorted(wanted - set(order))
    if bad:
        raise InvalidParameterError(f"unknown detector(s) {bad}; known: {list(order)}")
    run = _with_needs(wanted)
    found: dict[str, Findings] = {}
    for name in order:
        if name in run:
            d = DETECTORS[name]
            found[name] = d.run(inp, {n: found[n].events for n in d.needs})
    return Detections({n: f for n, f in found.items() if n in wanted})


def run_detectors(inp: DetectionInput, only: Iterable[str] | None = None) -> list[Event]:
    """The events of `detect`, sorted by start and kind.

    Examples
    --------
    The events of `detect` alone; with a cycle table of a steady, balanced
    motor nothing is found:

    >>> import numpy as np
    >>> import pandas as pd
    >>> from waveforms.detect import DetectionInput
    >>> t = np.arange(100) / 50.0
    >>> cycles = pd.DataFrame({"t_s": t + 0.01, "t_start_s": t, "t_end_s": t + 0.02,
    ...                        **{f"I{c}_rms": np.full(100, 10.0) for c in "abc"}})
    >>> run_detectors(DetectionInput(cycles, fla_a=10.0), only=["open_phase"])
    []
    """
    return detect(inp, only).events
