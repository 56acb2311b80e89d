"""CSV importer: each dialect of the foundation issue against closed-form fixture signals.

The fixtures (tests/data/make_fixtures.py) hold v = 325 sin(2 pi f t - phi), i = 14 sin(...)
written with 6 decimals; the imported samples are compared with numpy evaluations of the
same formulas, to the rounding of the file (half a unit of the last written digit).
"""

from __future__ import annotations

import datetime as dt
import hashlib

import numpy as np
import pytest

from waveforms import ReadOptions, read_capture
from waveforms.io.delimited import detect_layout
from waveforms.io.mapping import Mapping

from _io_support import DATA, wave


def _expected(cap, f_hz):
    t = cap.time_s()
    out = {}
    for ch in cap.channels:
        kind = "i" if ch.kind == "current" else ("vll" if ch.reference == "LL" else "v")
        out[ch.name] = wave(kind, ch.conductor, t, f_hz)
    return out


def test_comma_seconds():
    cap = read_capture(DATA / "csv_comma_seconds.csv")
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia", "Ib", "Ic")
    assert cap.sample_rate_hz == 1000.0 and cap.n_samples == 200
    assert cap.nominal_frequency_hz == 50.0  # inferred; the fixture is 50 Hz by construction
    assert any("inferred as 50 Hz" in n for n in cap.provenance.notes)
    x = cap.read()
    for i, (name, ref) in enumerate(_expected(cap, 50.0).items()):
        np.testing.assert_allclose(x[i], ref, rtol=0, atol=5e-7, err_msg=name)  # 6 decimals written
    assert cap.provenance.importer == "csv"
    assert cap.provenance.sha256 == hashlib.sha256((DATA / "csv_comma_seconds.csv").read_bytes()).hexdigest()


def test_semicolon_decimal_comma_metadata_prefixes():
    cap = read_capture(DATA / "csv_semicolon_decimal_comma.csv")
    lay = detect_layout(DATA / "csv_semicolon_decimal_comma.csv", Mapping())
    assert (lay.delimiter, lay.decimal, lay.header_index) == (";", ",", 4)
    assert len(lay.metadata_lines) == 3
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia", "Ib", "Ic")
    assert cap.sample_rate_hz == 1000.0  # time column in ms
    x = cap.read()
    exp = _expected(cap, 50.0)
    # kV written with 6 decimals -> 0.5 mV; mA with 6 decimals -> 0.5 nA (SI prefixes, BIPM SI Brochure Table 7)
    for i, name in enumerate(cap.channel_names):
        atol = 5e-4 if name.startswith("V") else 5e-9
        np.testing.assert_allclose(x[i], exp[name], rtol=0, atol=atol * 1.001, err_msg=name)
    assert cap.channel("Va").scale == 1e3 and cap.channel("Ia").scale == 1e-3
    assert any("metadata line" in n for n in cap.provenance.notes)


def test_tab_iso8601_line_to_line():
    cap = read_capture(DATA / "csv_tab_iso8601.tsv")
    # reference: Python's own ISO 8601 parser on the first stamp
    assert cap.start_time == dt.datetime.fromisoformat("2023-07-14T16:30:00.000000-04:00")
    assert cap.start_time.utcoffset() == dt.timedelta(hours=-4)
    assert cap.sample_rate_hz == 1200.0  # stamps rounded to 1 us, 833.33 us apart
    assert cap.channel_names == ("Vab", "Vbc", "Vca", "Ia", "Ib", "Ic")
    assert cap.wiring == "3-wire"
    assert cap.nominal_frequency_hz == 60.0
    x = cap.read()
    exp = _expected(cap, 60.0)
    for i, name in enumerate(cap.channel_names):
        np.testing.assert_allclose(x[i], exp[name], rtol=0, atol=5e-7 * 1.001, err_msg=name)


def test_no_time_column_needs_rate():
    cap = read_capture(DATA / "csv_no_time.csv", options=ReadOptions(sample_rate_hz=1000.0,
                       start_time=dt.datetime(2020, 2, 29, 12, 0, tzinfo=dt.timezone.utc)))
    assert cap.sample_rate_hz == 1000.0 and cap.n_samples == 200
    assert cap.start_time.isoformat() == "2020-02-29T12:00:00+00:00"
    x = cap.read()
    exp = _expected(cap, 50.0)
    for i, name in enumerate(cap.channel_names):
        np.testing.assert_allclose(x[i], exp[name], rtol=0, atol=5e-7 * 1.001)


def test_given_nominal_values_win():
    cap = read_capture(DATA / "csv_comma_seconds.csv", options=ReadOptions(nominal_frequency_hz=60.0, nominal_voltage_v=400.0, wiring="3-wire"))
    assert (cap.nominal_frequency_hz, cap.nominal_voltage_v, cap.wiring) == (60.0, 400.0, "3-wire")
    assert not any("inferred" in n for n in cap.provenance.notes)


def test_mapping_with_ct_pt_ratio(tmp_path):
    p = tmp_path / "site.csv"
    p.write_text("t;Kanal 1;Kanal 2\n0;1,0;0,5\n0,001;2,0;-0,5\n0,002;3,0;0,25\n", encoding="utf-8")
    mapping = {"channels": {"Va": {"column": "Kanal 1", "unit": "V", "ratio": "11000:110"},
                            "Ia": {"column": "Kanal 2", "unit": "A", "ratio": "400:5"}},
               "capture": {"start_time": "2024-01-01T00:00:00+01:00", "nominal_frequency_hz": 50}}
    cap = read_capture(p, options=ReadOptions(mapping=mapping, mapping_source="m.toml"))
    x = cap.read()
    # PT 11000:110 -> x100 (IEC 61869-3), CT 400:5 -> x80 (IEC 61869-2): rated transformation ratio, from memory
    np.testing.assert_allclose(x[0], [100.0, 200.0, 300.0], rtol=1e-15)
    np.testing.assert_allclose(x[1], [40.0, -40.0, 20.0], rtol=1e-15)
    assert cap.provenance.mapping["channels"]["Ia"]["ratio"] == 80.0
    assert cap.provenance.mapping["channels"]["Ia"]["how"] == "given"


def test_gap_becomes_nan_and_gap_entry(tmp_path):
    t = np.arange(100) / 1000.0
    keep = np.r_[0:40, 55:100]
    p = tmp_path / "gap.csv"
    p.write_text("time,Va\n" + "".join(f"{t[i]:.6f},{i}\n" for i in keep), encoding="utf-8")
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.n_samples == 100
    assert [(g.start_index, g.stop_index) for g in cap.gaps] == [(40, 55)]
    x = cap.read()[0]
    assert np.isnan(x[40:55]).all() and not np.isnan(x[:40]).any() and not np.isnan(x[55:]).any()
    np.testing.assert_array_equal(x[keep], keep.astype(float))
    assert any("gap" in n for n in cap.provenance.notes)


def test_jitter_reported_and_snapped(tmp_path):
    rng = np.random.default_rng(1)
    t = np.arange(200) / 1000.0 + rng.uniform(-50e-6, 50e-6, 200)  # +/-5 % of the period
    p = tmp_path / "jit.csv"
    p.write_text("time,Va\n" + "".join(f"{v:.7f},{i}\n" for i, v in enumerate(t)), encoding="utf-8")
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.sample_rate_hz == pytest.approx(1000.0, rel=1e-4)
    assert any("jitter" in n for n in cap.provenance.notes)
    np.testing.assert_array_equal(cap.read()[0], np.arange(200.0))


def test_resample_only_when_asked(tmp_path):
    # stamps on a 1 kHz grid with 40 % jitter: irregular
    rng = np.random.default_rng(2)
    t = np.arange(300) / 1000.0 + np.r_[0, rng.uniform(-0.4e-3, 0.4e-3, 298), 0]
    t = np.sort(t)
    v = 100 * np.sin(2 * np.pi * 50 * t)
    p = tmp_path / "irr.csv"
    p.write_text("time,Va\n" + "".join(f"{a:.9f},{b:.9f}\n" for a, b in zip(t, v, strict=True)), encoding="utf-8")
    from waveforms.errors import CaptureReadError

    with pytest.raises(CaptureReadError, match=r"irregular time stamps: jitter up to .* re-run with --resample"):
        read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0, resample=True, sample_rate_hz=1000.0))
    assert cap.sample_rate_hz == 1000.0
    assert any("resampled" in h for h in cap.provenance.history)
    # reference: numpy's linear interpolation of the rows as written (numpy.loadtxt)
    t, v = np.loadtxt(p, delimiter=",", skiprows=1, unpack=True)
    grid = t[0] + np.arange(cap.n_samples) / 1000.0
    np.testing.assert_allclose(cap.read()[0], np.interp(grid, t, v), rtol=0, atol=1e-9)


def test_input_never_modified(tmp_path):
    p = tmp_path / "in.csv"
    p.write_bytes((DATA / "csv_comma_seconds.csv").read_bytes())
    before = (p.read_bytes(), p.stat().st_mtime_ns)
    read_capture(p)
    assert (p.read_bytes(), p.stat().st_mtime_ns) == before


def test_latin1_and_crlf(tmp_path):
    p = tmp_path / "l1.csv"
    body = "Messung Pumpe \u00b0C\r\nZeit (s);UL1 (V);IL1 (A)\r\n" + "".join(f"{i / 1000:.3f};{i},5;-{i},25\r\n".replace(".", ",") for i in range(50))
    p.write_bytes(body.encode("latin-1"))
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.channel_names == ("Va", "Ia")
    np.testing.assert_allclose(cap.read()[0], np.arange(50) + 0.5)
    np.testing.assert_allclose(cap.read()[1], -np.arange(50) - 0.25)


def test_empty_cells_are_nan_not_zero(tmp_path):
    p = tmp_path / "nan.csv"
    p.write_text("time,Va,Ia\n0,1,2\n0.001,,3\n0.002,4,\n0.003,5,6\n", encoding="utf-8")
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    x = cap.read()
    assert np.isnan(x[0, 1]) and np.isnan(x[1, 2])
    assert np.count_nonzero(np.isnan(x)) == 2


@pytest.mark.parametrize(("body", "names", "start"), [
    # quoted headers and cells
    ('"Time (s)","Va (V)","Ia (A)"\n"0","1.5","2"\n"0.001","2.5","3"\n"0.002","3.5","4"\n', ("Va", "Ia"), None),
    # ISO stamps in the last column
    ("Va;Ia;Timestamp\n1;2;2024-01-01T00:00:00.000+01:00\n2;3;2024-01-01T00:00:00.001+01:00\n3;4;2024-01-01T00:00:00.002+01:00\n",
     ("Va", "Ia"), "2024-01-01T00:00:00+01:00"),
    # a delimiter at the end of every line
    ("Time;Va;Ia;\n0;1;2;\n0,001;2;3;\n0,002;3;4;\n", ("Va", "Ia"), None),
    # ISO with a space instead of T and Z for UTC
    ("Timestamp,Va,Ia\n2024-01-01 00:00:00.000Z,1,2\n2024-01-01 00:00:00.001Z,2,3\n2024-01-01 00:00:00.002Z,3,4\n", ("Va", "Ia"), "2024-01-01T00:00:00+00:00"),
])
def test_layout_variants(tmp_path, body, names, start):
    p = tmp_path / "v.csv"
    p.write_text(body, encoding="utf-8")
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.channel_names == names
    assert cap.sample_rate_hz == 1000.0
    np.testing.assert_array_equal(cap.read()[1], [2.0, 3.0, 4.0])
    if start:
        assert cap.start_time == dt.datetime.fromisoformat(start)  # reference: Python's ISO 8601 parser
