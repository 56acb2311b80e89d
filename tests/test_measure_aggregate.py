"""Interval aggregation (IEC 61000-4-30 style) and dip / interruption flags."""

from __future__ import annotations

import datetime as _dt

import numpy as np
import pytest

from _measure_support import capture_of, three_phase
from waveforms.errors import InvalidParameterError
from waveforms.measure import measure

FS = 5_000.0


def test_basic_and_3s_interval_lengths():
    # IEC 61000-4-30 4.4 (from memory): 10-cycle basic interval at 50 Hz; 3 s = 150 cycles.
    t = np.arange(int(FS * 7.0)) / FS
    m = measure(capture_of(three_phase(t, 230.0, 50.0), None, FS, nominal_voltage_v=400.0))
    basic = m.intervals("basic")
    assert (basic["n_cycles"].iloc[:-1] == 10).all()
    three = m.intervals("3s")
    assert three["n_cycles"].iloc[0] == 150
    np.testing.assert_allclose(basic["Va_rms"].iloc[1:-1], 230.0, rtol=1e-6)
    assert not basic["flagged"].any()


def test_twelve_cycles_at_sixty_hertz():
    t = np.arange(int(FS * 1.0)) / FS
    m = measure(capture_of(three_phase(t, 120.0, 60.0), None, FS, nominal_frequency_hz=60.0))
    assert (m.intervals("basic")["n_cycles"].iloc[:-1] == 12).all()


def test_rms_aggregation_is_root_mean_square():
    # IEC 61000-4-30 4.4: aggregation = square root of the arithmetic mean of the squared values.
    # Half of a 3 s interval at 230 V and half at 200 V -> sqrt((230^2 + 200^2)/2).
    t = np.arange(int(FS * 3.2)) / FS
    v = three_phase(t, 230.0, 50.0, -np.pi / 2)
    v = {c: np.where(t >= 1.5 + 0.0, x * 200.0 / 230.0, x) for c, x in v.items()}
    m = measure(capture_of(v, None, FS, nominal_voltage_v=400.0))
    row = m.intervals("3s").iloc[0]
    cyc = m.cycles.iloc[:150]
    assert row["Va_rms"] == pytest.approx(np.sqrt(np.mean(np.square(cyc["Va_rms"]))), rel=1e-12)
    assert row["Va_rms"] == pytest.approx(np.sqrt((230.0**2 + 200.0**2) / 2), rel=2e-3)


def test_dip_and_interruption_flags():
    # IEC 61000-4-30 5.4 (from memory): dip when Urms(1/2) < 90 % of the declared voltage, interruption
    # when all channels < 10 %.  Declared = 400 V line-to-line -> 230.9 V line-to-neutral.
    t = np.arange(int(FS * 3.0)) / FS
    v = three_phase(t, 400.0 / np.sqrt(3), 50.0)
    dip = (t >= 0.52) & (t < 0.61)
    gone = (t >= 1.62) & (t < 1.81)
    v = {c: np.where(dip, 0.7 * x, np.where(gone, 0.01 * x, x)) for c, x in v.items()}
    m = measure(capture_of(v, None, FS, nominal_voltage_v=400.0))
    basic = m.intervals("basic")
    flagged = basic.loc[basic["dip"], "t_start_s"].to_numpy()
    assert flagged.size >= 1
    assert ((flagged > 0.3) & (flagged < 0.7) | (flagged > 1.4) & (flagged < 1.9)).all()
    intr = basic.loc[basic["interruption"]]
    assert len(intr) >= 1 and ((intr["t_start_s"] > 1.4) & (intr["t_end_s"] < 2.1)).all()
    assert not basic.loc[basic["t_start_s"] > 2.3, "flagged"].any()
    assert (basic["flagged"] == (basic["dip"] | basic["interruption"])).all()


def test_declared_voltage_inferred_from_the_nearest_standard_voltage_else_the_median():
    # IEC 60038 Table 1 (from memory): 230/400 V is the 50 Hz low-voltage system.  240 V line-to-neutral
    # (415.7 V line-to-line, 3.9 % above 400 V) is judged against 400 / sqrt(3) = 230.94 V, inferred; 300 V
    # line-to-neutral (519.6 V, 30 % above 400 V and 25 % below 690 V) is near no standard value: its median
    from waveforms.measure.aggregate import declared_voltages

    t = np.arange(int(FS * 1.0)) / FS
    m = measure(capture_of(three_phase(t, 240.0, 50.0), None, FS))
    assert declared_voltages(m.half_cycles, m.info)["Va"] == pytest.approx(400.0 / np.sqrt(3.0), rel=1e-6)
    m = measure(capture_of(three_phase(t, 300.0, 50.0), None, FS))
    assert declared_voltages(m.half_cycles, m.info)["Va"] == pytest.approx(300.0, rel=1e-3)


def test_ten_minute_intervals_are_clock_aligned():
    # IEC 61000-4-30 4.5 (from memory): 10-min intervals on the clock.  A capture starting 30 s before a
    # 10-min boundary splits there.
    t = np.arange(int(FS * 60.0)) / FS
    start = _dt.datetime(2031, 5, 4, 3, 9, 30, tzinfo=_dt.timezone.utc)
    m = measure(capture_of(three_phase(t, 230.0, 50.0), None, FS, start_time=start))
    ten = m.intervals("10min")
    assert len(ten) == 2
    assert ten["t_end_s"].iloc[0] == pytest.approx(30.0, abs=0.021)
    assert ten["n_cycles"].sum() == len(m.cycles)


def test_unknown_kind_is_refused():
    t = np.arange(int(FS * 0.3)) / FS
    m = measure(capture_of(three_phase(t, 230.0, 50.0), None, FS))
    with pytest.raises(InvalidParameterError, match="interval kind='1h' must be one of"):
        m.intervals("1h")
