"""Issue 17's acceptance on every other shipped sample: each hook-up fault named with its channel in the verdict and
in data_quality, corrected, and the correctly wired file's findings and figures given back.

Consistency checks against the shipped sample as recorded (no external source), with the acceptance figures of the
issue: I2/I1 within 5 points and V2/V1 within 0.3 points; events of the same kind, on the same line (as the fault's
relabelling names it) and starting within one cycle.  Physics behind the exceptions: Fortescue 1918 (a line-to-neutral
voltage derived from the other two lacks the zero-sequence part, V2 moves by up to |V0|).
"""

from __future__ import annotations

import functools

import numpy as np
import pytest

from _hookup_support import EXPECTED_CHANNELS, EXPECTED_CHECK, SAMPLE_FILES, arrays, fault, rebuild
from waveforms.analysis import analyze
from waveforms.io import read_capture

STEMS = [p.stem for p in SAMPLE_FILES if p.stem not in ("healthy_run", "start_open_line", "pushed_reverse")]
# healthy_run: tests/test_hookup_chain.py; start_open_line, pushed_reverse: never three-phase (tests/test_hookup_checks.py)
FAULTS = ("Ib negated", "A-C-B", "moved", "moved back", "Ia/Ib swapped", "dead Ib", "two-CT", "V reversed", "V dead",
          "V moved")

# (sample, fault): what may differ from the correctly wired file, and why
EXCEPT = {
    ("dip_one_phase", "V dead"): "phase",  # Vb derived as -(Va + Vc) (no V0): a one-phase dip of A also shows in the
    # derived Vb, so the dip is no longer one line's (Fortescue: the dip's own zero sequence is lost)
    ("open_phase_stall", "V moved"): "dips",  # a 2 ms half-cycle RMS dip to 88.8 % at the stall onset (threshold 90 %):
    # the half-cycle windows follow the first voltage channel, which now carries another line
}


@functools.lru_cache(maxsize=None)
def _cap(stem):
    path = next(p for p in SAMPLE_FILES if p.stem == stem)
    cap = read_capture(path)
    return rebuild(cap, arrays(cap))


@functools.lru_cache(maxsize=None)
def _base(stem):
    return analyze(_cap(stem), speed=False)


def _median(res, col):
    c = res.cycles
    v = c[col].to_numpy(float)[np.isfinite(c["frequency_hz"].to_numpy(float))]
    return float(np.nanmedian(v))


@pytest.mark.parametrize("name", FAULTS)
@pytest.mark.parametrize("stem", STEMS)
def test_fault_named_corrected_and_the_correct_findings_given_back(stem, name):
    base, cap = _base(stem), _cap(stem)
    res = analyze(fault(cap, name), speed=False)
    (f,) = res.hookup.findings
    assert f.check == EXPECTED_CHECK[name] and f.corrects
    expected = EXPECTED_CHANNELS.get(name, set())
    if name in ("V reversed", "V dead"):
        expected = {"Vb"} if "Vb" in cap.channel_names else {"Vbc"}
    if expected:
        assert set(f.channels) == expected, f.what
    assert res.verdict.startswith("Hook-up corrected before analysis: " + f.what), res.verdict
    notes = [q for q in res.quality if q["check"] == f"hookup_{f.check}"]
    assert notes and all(n in notes[0]["channel"].split(",") for n in f.channels) and f.what in notes[0]["message"]
    exception = EXCEPT.get((stem, name), "")
    rb = [e for e in base.events if not (exception == "dips" and e.kind == "dip")]
    rr = [e for e in res.events if not (exception == "dips" and e.kind == "dip")]
    assert [e.kind for e in rr] == [e.kind for e in rb], ([e.summary for e in rb], [e.summary for e in rr])
    cycle_s = 1.0 / float(cap.nominal_frequency_hz or 60.0)
    for eb, er in zip(rb, rr):
        assert abs(er.start_s - eb.start_s) <= cycle_s
        if exception == "phase" and er.kind == "dip":
            continue
        if name == "A-C-B":  # events name the line as labelled in the file: B and C exchanged
            assert er.phase == {"B": "C", "C": "B"}.get(eb.phase, eb.phase)
        elif name == "V moved":  # clamps or voltage leads moved: the true line is one of the two readings given
            assert eb.phase in (er.phase, er.figures.get("line_if_voltage_leads_moved", er.phase))
        else:
            assert er.phase == eb.phase
    assert abs(_median(res, "I2_I1_pct") - _median(base, "I2_I1_pct")) < 5.0
    tol = 0.3 + (_median(base, "V0_V1_pct") if name == "V dead" and "Vb" in cap.channel_names else 0.0)
    assert abs(_median(res, "V2_V1_pct") - _median(base, "V2_V1_pct")) < tol
