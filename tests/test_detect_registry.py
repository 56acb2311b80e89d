"""The detector registry: pure detectors, declared needs, topological run order.

Consistency and registry rules of the project (no external source).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from waveforms.analysis import detection_input, measure_capture
from waveforms.detect import DetectParams, Findings, detect, detector_names, registry
from waveforms.errors import InvalidParameterError
from waveforms.io import read_capture

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"


def _plain(found: Findings) -> tuple:
    return tuple(e.to_dict() for e in found.events), found.notes


@pytest.fixture(scope="module", params=["open_phase_stall.h5", "dip_one_phase.csv"])
def inp(request):
    # open_phase_stall: open phase + stall (open_phase reads the stall events); dip_one_phase: no nameplate,
    # so the detectors' notes include the assumed reference currents
    cap = read_capture(SAMPLES / request.param)
    return lambda: detection_input(cap, measure_capture(cap), None, cap.nameplate, DetectParams())


def test_built_in_order_follows_the_declared_needs():
    order = detector_names()
    assert order == ("stall", "open_phase", "dips", "start", "unbalance")  # ties by name
    for name in order:
        for need in registry.DETECTORS[name].needs:
            assert order.index(need) < order.index(name)


def test_running_twice_gives_identical_results(inp):
    one = inp()
    first = detect(one)
    second = detect(one)  # the same input object again: nothing was appended to it
    third = detect(inp())  # and a fresh one
    for other in (second, third):
        assert {n: _plain(f) for n, f in other.by_detector.items()} == {n: _plain(f) for n, f in first.by_detector.items()}
        assert other.notes == first.notes
    assert first.events


def test_a_subset_gives_each_detector_its_full_run_result(inp):
    full = detect(inp())
    for name in detector_names():
        alone = detect(inp(), only=(name,))
        assert list(alone.by_detector) == [name]  # what it needs runs for it, but is not reported
        assert _plain(alone.by_detector[name]) == _plain(full.by_detector[name])
    pair = detect(inp(), only=("unbalance", "stall"))
    assert set(pair.by_detector) == {"stall", "unbalance"}
    assert [e.to_dict() for e in pair.events] == [
        e.to_dict() for e in full.events if e.detector in ("stall", "unbalance")]


def test_a_cycle_in_the_needs_is_refused(monkeypatch):
    detector_names()  # built-ins loaded
    monkeypatch.setattr(registry, "DETECTORS", dict(registry.DETECTORS))
    nothing = lambda inp, prior: Findings()  # noqa: E731
    registry.register("loop_a", needs=("loop_b",))(nothing)
    registry.register("loop_b", needs=("loop_a",))(nothing)
    with pytest.raises(InvalidParameterError, match=r"needs form a cycle: loop_a -> loop_b -> loop_a"):
        detector_names()


def test_an_unknown_need_and_an_unknown_name_are_refused(monkeypatch):
    detector_names()
    monkeypatch.setattr(registry, "DETECTORS", dict(registry.DETECTORS))
    registry.register("orphan", needs=("no_such_detector",))(lambda inp, prior: Findings())
    with pytest.raises(InvalidParameterError, match=r"'orphan' needs \['no_such_detector'\], which are not registered"):
        detector_names()
    monkeypatch.undo()
    with pytest.raises(InvalidParameterError, match=r"unknown detector\(s\) \['stal'\]"):
        detect(None, only=("stal",))


def test_a_plugin_detector_gets_only_the_events_it_declares(monkeypatch, inp):
    detector_names()
    monkeypatch.setattr(registry, "DETECTORS", dict(registry.DETECTORS))
    seen = {}

    def count_open_phases(i, prior):
        seen["prior"] = {k: len(v) for k, v in prior.items()}
        return Findings(notes=(f"{len(prior['open_phase'])} open phase(s) before",))

    registry.register("count_open_phases", needs=("open_phase",))(count_open_phases)
    order = detector_names()
    assert order.index("count_open_phases") > order.index("open_phase")
    full = detect(inp())
    assert list(seen["prior"]) == ["open_phase"]
    assert seen["prior"]["open_phase"] == len(full.by_detector["open_phase"].events)
