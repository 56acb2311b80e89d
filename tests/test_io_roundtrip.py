"""Round trips CSV -> Capture -> native HDF5 -> Capture, and Capture -> CSV -> Capture."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pytest

from waveforms import from_arrays, read_capture, standard_channels
from waveforms.capture import Gap
from waveforms.errors import WriteError
from waveforms.io.csv_writer import write_csv
from waveforms.io.hdf5_native import write_native

from _io_support import DATA, wave


@pytest.mark.parametrize("fixture", ["csv_comma_seconds.csv", "csv_semicolon_decimal_comma.csv", "csv_tab_iso8601.tsv"])
def test_csv_to_native_to_capture(tmp_path, fixture):
    a = read_capture(DATA / fixture)
    b = read_capture(write_native(a, tmp_path / "x.h5"))
    np.testing.assert_array_equal(a.read(), b.read())  # float64 stored: bit for bit
    for field in ("sample_rate_hz", "start_time", "nominal_frequency_hz", "nominal_voltage_v", "wiring", "channels", "gaps", "n_samples"):
        assert getattr(a, field) == getattr(b, field), field
    assert b.provenance.mapping == a.provenance.mapping
    assert b.provenance.notes == a.provenance.notes
    assert any(a.provenance.sha256[:12] in h for h in b.provenance.history)
    np.testing.assert_array_equal(a.time_s(), b.time_s())


def _capture():
    fs = 3000.0
    t = np.arange(3000) / fs
    ch = standard_channels("LN", True, neutral_current=True)
    x = np.vstack([wave("v", p, t, 60.0) for p in "ABC"] + [wave("i", p, t, 60.0) for p in "ABC"] + [0.01 * wave("i", "A", t, 180.0)])
    x[:, 700:760] = np.nan
    start = dt.datetime(2024, 5, 1, 8, 0, 0, 123456, tzinfo=dt.timezone(dt.timedelta(hours=-5)))
    return from_arrays(x, ch, fs, start, nominal_frequency_hz=60.0, nominal_voltage_v=480.0, wiring="4-wire", gaps=(Gap(700, 760),)), x


@pytest.mark.parametrize("delimiter", [",", ";", "\t"])
def test_capture_to_csv_and_back_without_mapping(tmp_path, delimiter):
    cap, x = _capture()
    p = write_csv(cap, tmp_path / "out.csv", delimiter=delimiter)
    back = read_capture(p)  # no mapping, no options
    assert back.channel_names == cap.channel_names
    assert [(c.kind, c.conductor, c.reference) for c in back.channels] == [(c.kind, c.conductor, c.reference) for c in cap.channels]
    assert back.sample_rate_hz == cap.sample_rate_hz
    assert back.start_time == cap.start_time and back.start_time.utcoffset() == cap.start_time.utcoffset()
    assert (back.nominal_frequency_hz, back.nominal_voltage_v, back.wiring) == (60.0, 480.0, "4-wire")
    assert [(g.start_index, g.stop_index) for g in back.gaps] == [(700, 760)]
    y = back.read()
    assert np.array_equal(np.isnan(y), np.isnan(x))
    np.testing.assert_allclose(y, x, rtol=1e-9, atol=1e-9)  # 10 significant digits written


def test_csv_round_trip_then_native(tmp_path):
    cap, x = _capture()
    back = read_capture(write_native(read_capture(write_csv(cap, tmp_path / "a.csv")), tmp_path / "a.h5"))
    assert back.provenance.importer == "hdf5-native"
    np.testing.assert_allclose(back.read(), x, rtol=1e-9, atol=1e-9)
    assert [(g.start_index, g.stop_index) for g in back.gaps] == [(700, 760)]


def test_writers_refuse_to_overwrite_input(tmp_path):
    src = tmp_path / "in.csv"
    src.write_bytes((DATA / "csv_comma_seconds.csv").read_bytes())
    cap = read_capture(src)
    before = src.read_bytes()
    with pytest.raises(WriteError, match=r"in\.csv: refusing to overwrite the input capture"):
        write_csv(cap, src)
    assert src.read_bytes() == before


def test_native_float32(tmp_path):
    cap, x = _capture()
    back = read_capture(write_native(cap, tmp_path / "f.h5", dtype="float32"))
    np.testing.assert_allclose(back.read(), x.astype(np.float32).astype(np.float64), rtol=0, atol=0)
