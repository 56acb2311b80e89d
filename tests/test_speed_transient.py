"""Acceleration / slowdown times from a per-cycle RMS envelope (rule: common practice, no source)."""

from __future__ import annotations

import numpy as np
import pytest

from waveforms.errors import InvalidParameterError
from waveforms.speed import acceleration_interval, slowdown_interval

T = np.arange(0.01, 10.0, 0.02)  # 50 Hz cycle centres


def test_start_interval():
    # off until 1.0 s, 160 A flat to 3.0 s, linear fall to 25 A at 4.0 s, then running
    i = np.interp(T, [0, 0.999, 1.0, 3.0, 4.0, 10.0], [0.2, 0.2, 160.0, 160.0, 25.0, 25.0])
    tr = acceleration_interval(T, i)
    assert tr is not None and tr.kind == "acceleration"
    assert tr.start_s == pytest.approx(1.01, abs=0.011)
    # ends where i <= 25 + 0.1 x 135 = 38.5 A on the fall: 3.0 + (160 - 38.5)/135 = 3.9 s
    assert tr.end_s == pytest.approx(3.9, abs=0.021)
    assert tr.i_after_a == pytest.approx(25.0) and tr.i_peak_a == pytest.approx(160.0)


def test_no_start_when_running_throughout_and_censored_start():
    assert acceleration_interval(T, np.full(T.size, 25.0)) is None
    # a step up from a running 25 A is not a start from rest
    i = np.interp(T, [0, 2.0, 2.001, 3.0, 4.0, 10.0], [25.0, 25.0, 160.0, 160.0, 25.0, 25.0])
    assert acceleration_interval(T, i) is None
    # the record opens with the inrush: the start is flagged as censored at the first cycle
    i = np.interp(T, [0, 2.0, 3.0, 10.0], [160.0, 160.0, 25.0, 25.0])
    tr = acceleration_interval(T, i)
    assert tr is not None and tr.start_censored and tr.start_s == pytest.approx(T[0])


def test_slowdown_interval():
    # running at 25 A, climbing to 150 A (stall) between 5 and 7 s
    i = np.interp(T, [0, 5.0, 7.0, 10.0], [25.0, 25.0, 150.0, 150.0])
    tr = slowdown_interval(T, i)
    assert tr is not None and tr.kind == "slowdown"
    # starts at 25 + 12.5 A (5.2 s), ends at 150 - 12.5 A (6.8 s)
    assert tr.start_s == pytest.approx(5.2, abs=0.021)
    assert tr.end_s == pytest.approx(6.8, abs=0.021)
    assert slowdown_interval(T, np.full(T.size, 25.0)) is None


def test_bad_inputs():
    with pytest.raises(InvalidParameterError, match="equal length"):
        acceleration_interval(T, T[:-1])
    with pytest.raises(InvalidParameterError, match="increase strictly"):
        slowdown_interval(T[::-1], T)
