"""CSV with two header lines (names, then units) and with a metadata block of key: value / key,value lines.

Layouts common in logger exports (common practice, no source); the checks are consistency
checks of what the file states, no external source.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from waveforms.errors import CaptureReadError
from waveforms.io import ReadOptions, read_capture
from waveforms.io.csv_stream import convert_csv_to_native
from waveforms.io.metadata import interpret


def _rows(n: int, rate: float, ncols: int) -> list[str]:
    t = np.arange(n) / rate
    return [",".join(f"{100 * np.sin(2 * np.pi * 50 * ti + k):.4f}" for k in range(ncols)) for ti in t]


def test_two_header_lines_give_units(tmp_path):
    p = tmp_path / "two.csv"
    p.write_text("Time,Va,Vb,Ia\ns,kV,kV,mA\n" + "\n".join(f"{i / 1000:.3f},{r}" for i, r in enumerate(_rows(40, 1000.0, 3))) + "\n")
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.channel_names == ("Va", "Vb", "Ia")
    assert [c.source_label for c in cap.channels] == ["Va [kV]", "Vb [kV]", "Ia [mA]"]
    assert [c.scale for c in cap.channels] == [1e3, 1e3, 1e-3]
    assert cap.sample_rate_hz == pytest.approx(1000.0)
    assert any("two header lines: names on line 1, units on line 2" in n for n in cap.provenance.notes)


def test_time_unit_from_the_units_line(tmp_path):
    p = tmp_path / "ms.csv"
    p.write_text("t;UL1;IL1\nms;V;A\n" + "\n".join(f"{i * 0.5};1;2" for i in range(20)) + "\n")
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.sample_rate_hz == pytest.approx(2000.0)


def test_metadata_block_states_rate_start_and_voltage(tmp_path):
    p = tmp_path / "meta.csv"
    body = "\n".join(_rows(100, 5000.0, 2))
    p.write_text("Invented recorder\nSampling interval: 200 us\nStart time,2024-03-01T10:00:00+01:00\n"
                 f"Nominal voltage;0.4 kV\nVa,Ia\n{body}\n")
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.sample_rate_hz == pytest.approx(5000.0)
    assert cap.start_time == dt.datetime(2024, 3, 1, 10, tzinfo=dt.timezone(dt.timedelta(hours=1)))
    assert cap.nominal_voltage_v == pytest.approx(400.0)
    notes = " | ".join(cap.provenance.notes)
    assert "metadata line 2: 'Sampling interval' = '200 us' read as sample_rate_hz = 5000" in notes
    assert "metadata line 4" in notes and "Invented recorder" in notes


def test_streamed_conversion_reads_the_same_header(tmp_path):
    p = tmp_path / "s.csv"
    p.write_text("Sample rate: 1 kHz\nVa,Ib\nV,A\n" + "\n".join(_rows(50, 1000.0, 2)) + "\n")
    mem = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    out = tmp_path / "s.h5"
    convert_csv_to_native(p, out, ReadOptions(nominal_frequency_hz=50.0))
    disk = read_capture(out)
    assert disk.sample_rate_hz == mem.sample_rate_hz == 1000.0
    np.testing.assert_array_equal(disk.read(), mem.read())


@pytest.mark.parametrize(("key", "value", "fragment"), [
    ("Sample rate", "fast", "'fast' is not a number"),
    ("Sample rate", "10 V", "unit 'v' does not fit sample_rate_hz"),
    ("Nominal voltage", "-400", "must be a positive number"),
])
def test_bad_metadata_values_are_one_line_errors(tmp_path, key, value, fragment):
    p = tmp_path / "bad.csv"
    p.write_text(f"{key}: {value}\nVa,Ia\n1,2\n3,4\n")
    with pytest.raises(CaptureReadError, match="bad.csv: metadata line 1") as e:
        read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert fragment in str(e.value) and "\n" not in str(e.value)


def test_rate_and_interval_must_agree():
    with pytest.raises(CaptureReadError, match="gives 2000 Hz, but the metadata above gave 1000 Hz"):
        interpret([("fs", "1000", "attribute /:fs"), ("dt", "0.0005", "attribute /:dt")], "x.h5")
