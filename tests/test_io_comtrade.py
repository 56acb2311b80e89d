"""COMTRADE importer (IEEE C37.111-1999 / -2013, IEC 60255-24:2013).

Checks against three things outside the importer:

- the closed-form signals of the fixtures (``make_fixtures.wave``) through the scaling rule of the
  standard, value = a * x + b, times primary/secondary for a channel marked S
  (IEEE C37.111-1999 clause 5.3.3, analog channel information; from memory);
- the independent reader of the ``comtrade`` package from PyPI (0.2.0, pinned in the ``test``
  extra), which applies a * x + b but not the primary/secondary ratio nor unit prefixes;
- hand-computed values on single samples.

The files are written by ``tests/_comtrade_support.py`` (from the standard's field lists, from
memory) or are the invented fixtures under ``tests/data/``.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
from pathlib import Path

import numpy as np
import pytest

from _comtrade_support import Analog, capture_to_comtrade, write_comtrade
from _io_support import DATA, assert_clean_failure, run_cli, wave

from waveforms import ReadOptions, read_capture
from waveforms.errors import CaptureReadError, MappingError
from waveforms.io.comtrade import sniff_comtrade
from waveforms.io.registry import detect_format
from waveforms.report import validate

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
RATE = 1000.0
N = 100
CT = 400.0 / 5.0


def _oracle(path: Path):
    """The comtrade package's reading (a * x + b, in the cfg's unit, secondary left as secondary).

    Only the tests that compare with it need the package (in the ``test`` extra); the others run without it.
    """
    comtrade = pytest.importorskip("comtrade")
    rec = comtrade.Comtrade(use_numpy_arrays=True, use_double_precision=True, ignore_warnings=True)
    rec.load(str(path))
    return rec


def _expected_fixture(t_s):
    """Closed-form fixture signals in V and A (primary)."""
    return {f"{k.upper()}{ph.lower()}": wave(k, ph, t_s, 50.0) for k in ("v", "i") for ph in "ABC"}


# -- the fixtures against the closed form and against the scaling rule ----------------------
@pytest.mark.parametrize("name", ["comtrade_ascii.cfg", "comtrade_binary.cfg", "comtrade_binary.dat"])
def test_fixture_matches_closed_form(name):
    cap = read_capture(DATA / name)
    assert cap.provenance.importer == "comtrade"
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia", "Ib", "Ic")
    assert cap.sample_rate_hz == RATE and cap.n_samples == N
    assert cap.nominal_frequency_hz == 50.0  # lf line of the cfg (IEEE C37.111-1999 5.3.5, from memory)
    vals = cap.read()
    exp = _expected_fixture(cap.time_s())
    for k, ch in enumerate(cap.channel_names):
        # quantisation: half a count, 0.5 x 0.001 kV = 0.5 V; currents 0.5 x 0.0001 A x 80 = 4 mA
        tol = 0.5 + 1e-9 if ch.startswith("V") else 0.5 * 1e-4 * CT + 1e-9
        np.testing.assert_allclose(vals[k], exp[ch], atol=tol, rtol=0)


def test_fixture_scaling_by_hand():
    # comtrade_ascii.dat line 2: 2,1000,100,-318,217,-323,-1328,1651,0,0
    cap = read_capture(DATA / "comtrade_ascii.cfg")
    s = cap.read(1, 2)[:, 0]
    assert s[0] == pytest.approx(100 * 0.001 * 1000)  # Va: a*x+b = 0.1 kV -> 100 V (IEEE C37.111 5.3.3, from memory)
    assert s[3] == pytest.approx(-323 * 0.0001 * 400 / 5)  # Ia: secondary A x 400/5 to primary (PS = S)
    assert cap.channel("Ia").scale == pytest.approx(80.0)
    assert cap.channel("Va").scale == pytest.approx(1000.0)  # kV -> V
    assert "Ia: a*x+b in A, secondary values (PS = S) scaled to primary by 400/5 = 80" in cap.provenance.notes
    assert "Va: a*x+b in kV (x 1000 to V), primary values (PS = P)" in cap.provenance.notes


def test_fixture_time_base():
    a = read_capture(DATA / "comtrade_ascii.cfg")
    # 1999 has no time code: the start is naive, taken as UTC with a note
    assert a.start_time == _dt.datetime(2024, 3, 1, 10, 15, 30, 250000, tzinfo=_dt.UTC)
    assert any("taken as UTC" in n for n in a.provenance.notes)
    assert any("trigger at t = 0.100000 s" in n for n in a.provenance.notes)
    b = read_capture(DATA / "comtrade_binary.cfg")
    # 2013 time code '+1': stamps are UTC+1 (IEEE C37.111-2013 time_code, from memory)
    assert b.start_time.utcoffset() == _dt.timedelta(hours=1)
    assert b.start_time.astimezone(_dt.UTC) == _dt.datetime(2024, 3, 1, 9, 15, 30, 250000, tzinfo=_dt.UTC)
    given = _dt.datetime(2024, 3, 1, 10, 0, tzinfo=_dt.timezone(_dt.timedelta(hours=-4)))
    c = read_capture(DATA / "comtrade_ascii.cfg", options=ReadOptions(start_time=given))
    assert c.start_time == given


def test_binary_status_words_do_not_leak():
    # comtrade_binary has 17 status channels (two 16-bit words), all bits set from sample 41 on;
    # the analog values must be those of the ASCII twin (common practice, no source)
    a = read_capture(DATA / "comtrade_ascii.cfg").read()
    b = read_capture(DATA / "comtrade_binary.cfg").read()
    np.testing.assert_array_equal(a, b)


# -- against the comtrade package -------------------------------------------------------------
def _three_phase(n=400, rate=2000.0, b_offset=0.0):
    t = np.arange(n) / rate
    phi = (0.0, 2 * np.pi / 3, 4 * np.pi / 3)
    v = [np.rint(11000 * np.sin(2 * np.pi * 60 * t - p)) for p in phi]  # counts, 0.02 V/count -> 220 V peak
    i = [np.rint(9000 * np.sin(2 * np.pi * 60 * t - p - 0.4)) for p in phi]
    analogs = [Analog("UL1", "A", "V", 0.02, b_offset), Analog("UL2", "B", "V", 0.02, b_offset), Analog("UL3", "C", "V", 0.02, b_offset),
               Analog("Ia", "A", "mA", 0.5, primary=200, secondary=1, ps="S"),
               Analog("Ib", "B", "mA", 0.5, primary=200, secondary=1, ps="S"),
               Analog("Ic", "C", "mA", 0.5, primary=200, secondary=1, ps="S")]
    return analogs, np.vstack(v + i).astype(np.int64), rate


@pytest.mark.parametrize("file_type", ["ASCII", "BINARY", "BINARY32", "FLOAT32"])
@pytest.mark.parametrize("rev", ["1999", "2013"])
def test_agrees_with_comtrade_package(tmp_path, file_type, rev):
    analogs, raw, rate = _three_phase(b_offset=0.3)
    if file_type == "BINARY":
        raw = np.clip(raw, -32767, 32767)
    data = raw.astype(np.float32) if file_type == "FLOAT32" else raw
    cfg = write_comtrade(tmp_path, f"rec_{file_type}", analogs, data, rate, file_type=file_type, rev=rev,
                         n_digital=5, lf=60, time_code="-5h30" if rev == "2013" else None)
    cap = read_capture(cfg)
    ref = _oracle(cfg)
    assert ref.total_samples == cap.n_samples == raw.shape[1]
    assert cap.sample_rate_hz == pytest.approx(ref.cfg.sample_rates[0][0])
    assert cap.nominal_frequency_hz == ref.frequency == 60.0
    vals = cap.read()
    for k, ch in enumerate(("Va", "Vb", "Vc")):
        np.testing.assert_allclose(vals[k], np.asarray(ref.analog[k]), rtol=1e-12, atol=1e-9)  # both a*x+b in V
    for k, ch in enumerate(("Ia", "Ib", "Ic"), start=3):
        # oracle: a*x+b in secondary mA; ours: primary A = oracle x 1e-3 x 200/1 (IEEE C37.111 5.3.3, from memory)
        np.testing.assert_allclose(vals[k], np.asarray(ref.analog[k]) * 1e-3 * 200, rtol=1e-12, atol=1e-9)
    if rev == "2013":
        assert cap.start_time.utcoffset() == -_dt.timedelta(hours=5, minutes=30)
    assert cap.start_time.replace(tzinfo=None) == ref.start_timestamp


@pytest.mark.parametrize("file_type,marker", [("BINARY", -32768), ("BINARY32", -(2**31)), ("ASCII", 99999)])
def test_missing_data_markers(tmp_path, file_type, marker):
    analogs, raw, rate = _three_phase()
    raw = np.clip(raw, -32767, 32767)
    raw[1, 50:53] = marker  # 0x8000 / 0x80000000 / 99999 (IEEE C37.111-1999 / -2013, from memory)
    raw[4, 200] = marker
    cfg = write_comtrade(tmp_path, "gappy", analogs, raw, rate, file_type=file_type, rev="2013")
    cap = read_capture(cfg)
    vals = cap.read()
    assert np.isnan(vals[1, 50:53]).all() and np.isnan(vals[4, 200])
    assert np.isfinite(vals[1, 49]) and np.isfinite(vals[1, 53]) and np.isfinite(vals[0, 50:53]).all()
    assert [(g.start_index, g.stop_index) for g in cap.gaps] == [(50, 53), (200, 201)]
    assert "Vb" in cap.gaps[0].reason and "Ib" in cap.gaps[1].reason
    if file_type != "ASCII":  # the package marks binary markers as NaN too
        ref = np.asarray(_oracle(cfg).analog[1])
        assert np.isnan(ref[50:53]).all()


def test_ascii_blank_is_missing(tmp_path):
    analogs, raw, rate = _three_phase(n=50)
    vals = raw.astype(np.float64)
    vals[2, 10] = np.nan  # written as an empty field
    cfg = write_comtrade(tmp_path, "blank", analogs, vals, rate, file_type="ASCII", rev="1991")
    cap = read_capture(cfg)
    assert np.isnan(cap.read()[2, 10]) and [(g.start_index, g.stop_index) for g in cap.gaps] == [(10, 11)]
    # 1991 dates are mm/dd/yyyy: '01/03/2024' is 3 January (IEEE C37.111-1991, from memory; the package agrees)
    assert cap.start_time.replace(tzinfo=None) == _oracle(cfg).start_timestamp == _dt.datetime(2024, 1, 3, 10, 15, 30, 250000)


def test_cff_equals_cfg_dat(tmp_path):
    analogs, raw, rate = _three_phase()
    raw = np.clip(raw, -32767, 32767)
    for ft in ("ASCII", "BINARY"):
        pair = read_capture(write_comtrade(tmp_path, f"pair{ft}", analogs, raw, rate, file_type=ft, rev="2013", time_code="+2", n_digital=3))
        cff_path = write_comtrade(tmp_path, f"one{ft}", analogs, raw, rate, file_type=ft, rev="2013", time_code="+2", n_digital=3, cff=True)
        assert sniff_comtrade(cff_path) and detect_format(cff_path).name == "comtrade"
        one = read_capture(cff_path)
        np.testing.assert_array_equal(one.read(), pair.read())
        assert one.start_time == pair.start_time and one.channel_names == pair.channel_names
        # the comtrade package reads .cff too (independent splitting of the sections)
        ref = _oracle(cff_path)
        np.testing.assert_allclose(one.read()[0], np.asarray(ref.analog[0]), rtol=1e-12)


# -- channel names and mapping ---------------------------------------------------------------
def test_channels_from_ph_field_and_non_electrical_skipped(tmp_path):
    n = 200
    t = np.arange(n) / RATE
    raw = np.vstack([np.rint(3000 * np.sin(2 * np.pi * 50 * t - p)) for p in (0, 2.094, 4.189)] + [np.full(n, 5000)]).astype(np.int64)
    analogs = [Analog("Bus volts 1", "AB", "kV", 0.0001), Analog("Bus volts 2", "BC", "kV", 0.0001),
               Analog("Feeder amps", "C", "kA", 0.00001), Analog("Frequency", "", "Hz", 0.01)]
    cap = read_capture(write_comtrade(tmp_path, "ph", analogs, raw, RATE))
    assert cap.channel_names == ("Vab", "Vbc", "Ic")
    assert cap.read()[0, 10] == pytest.approx(raw[0, 10] * 0.0001 * 1000)  # kV -> V, by hand
    assert cap.read()[2, 10] == pytest.approx(raw[2, 10] * 0.00001 * 1000)  # kA -> A
    notes = " | ".join(cap.provenance.notes)
    assert "'Frequency'" in notes and "not read" in notes and "from its ph field 'AB'" in notes
    assert cap.wiring == "3-wire"


def test_mapping_names_a_channel(tmp_path):
    n = 200
    raw = np.vstack([np.rint(3000 * np.sin(2 * np.pi * 50 * np.arange(n) / RATE))] * 2).astype(np.int64)
    cfg = write_comtrade(tmp_path, "map", [Analog("VA", "A", "V", 0.1), Analog("Kanal 3", "", "V", 0.1)], raw, RATE)
    with pytest.raises(MappingError, match=r"line 4, channel id 'Kanal 3': not a known channel name"):
        read_capture(cfg)
    cap = read_capture(cfg, options=ReadOptions(mapping={"channels": {"Vb": {"column": "Kanal 3", "ratio": "11000:110"}}}))
    assert cap.channel_names == ("Va", "Vb")
    assert cap.read()[1, 5] == pytest.approx(raw[1, 5] * 0.1 * 100)  # a*x, then the mapping's ratio 100
    # a key alone (as --ratio Va=2 builds it) applies to the channel recognised as Va
    cap = read_capture(cfg, options=ReadOptions(mapping={"channels": {"Va": {"ratio": 2}, "Vb": {"column": "Kanal 3"}}}))
    assert cap.read()[0, 5] == pytest.approx(raw[0, 5] * 0.1 * 2)


def test_mapping_ratio_replaces_secondary_ratio(tmp_path):
    analogs, raw, rate = _three_phase(n=50)
    cfg = write_comtrade(tmp_path, "ratio", analogs, raw, rate)
    cap = read_capture(cfg, options=ReadOptions(mapping={"channels": {"Ia": {"ratio": "300:1"}}}))
    assert cap.read()[3, 7] == pytest.approx(raw[3, 7] * 0.5e-3 * 300)  # mA -> A, x 300 instead of the cfg's 200/1
    assert cap.read()[4, 7] == pytest.approx(raw[4, 7] * 0.5e-3 * 200)  # Ib keeps the cfg's ratio


# -- time stamps -------------------------------------------------------------------------------
def test_stamps_checked_against_the_rate(tmp_path):
    analogs, raw, rate = _three_phase(n=100)
    stamps = np.rint(np.arange(100) * 1e6 / rate).astype(np.int64)
    stamps[60:] += 2000  # four samples' worth of time missing in the stamps
    cap = read_capture(write_comtrade(tmp_path, "st", analogs, raw, rate, file_type="BINARY32", stamps_us=stamps))
    assert cap.n_samples == 100 and cap.sample_rate_hz == rate  # the cfg rate wins, samples not moved
    assert any("skip 1 stretch" in n for n in cap.provenance.notes)


def test_sample_numbers_checked(tmp_path):
    analogs, raw, rate = _three_phase(n=30)
    cfg = write_comtrade(tmp_path, "sn", analogs, np.clip(raw, -32767, 32767), rate, file_type="BINARY")
    dat = tmp_path / "sn.dat"
    rec = np.frombuffer(dat.read_bytes(), dtype=np.dtype([("n", "<u4"), ("rest", "V16")])).copy()
    rec["n"][10:] += 5  # sample numbers jump from 10 to 16 (IEEE C37.111: consecutive numbers, from memory)
    dat.write_bytes(rec.tobytes())
    cap = read_capture(cfg)
    assert cap.n_samples == 30
    assert any("not consecutive (1 place(s), first at record 11: 10 then 16)" in n for n in cap.provenance.notes)


def test_no_rate_uses_the_stamps(tmp_path):
    analogs, raw, rate = _three_phase(n=100)
    stamps = np.rint(np.arange(100) * 500).astype(np.int64)  # 2 kHz in us
    keep = np.r_[0:40, 45:100]  # five records missing
    cfg = write_comtrade(tmp_path, "norate", analogs, raw[:, keep], rate, file_type="BINARY", nrates=0, stamps_us=stamps[keep])
    cap = read_capture(cfg)
    assert cap.sample_rate_hz == pytest.approx(2000.0) and cap.n_samples == 100
    assert (40, 45) in [(g.start_index, g.stop_index) for g in cap.gaps]
    assert np.isnan(cap.read()[0, 40:45]).all()


# -- errors: one line naming the file, the place and the problem ------------------------------------
def _good(tmp_path, **kw):
    analogs, raw, rate = _three_phase(n=20)
    return write_comtrade(tmp_path, "bad", analogs, np.clip(raw, -32767, 32767), rate, **kw)


def _edit_cfg(cfg: Path, line: int, text: str) -> None:
    lines = cfg.read_text().splitlines()
    lines[line - 1] = text
    cfg.write_text("\n".join(lines) + "\n")


def test_error_cfg_missing(tmp_path):
    cfg = _good(tmp_path)
    cfg.unlink()
    with pytest.raises(CaptureReadError, match=r"bad\.dat: no configuration file next to it \(expected bad\.cfg\)"):
        read_capture(tmp_path / "bad.dat", format="comtrade")


def test_error_dat_missing(tmp_path):
    cfg = _good(tmp_path)
    (tmp_path / "bad.dat").unlink()
    with pytest.raises(CaptureReadError, match=r"bad\.cfg: no data file next to it \(expected bad\.dat\)"):
        read_capture(cfg)
    assert_clean_failure(run_cli("inspect", cfg), r"no data file next to it")


def test_error_wrong_channel_counts(tmp_path):
    cfg = _good(tmp_path, n_digital=2)
    _edit_cfg(cfg, 2, "9,6A,2D")
    with pytest.raises(CaptureReadError, match=r"bad\.cfg: line 2: wrong channel counts: total 9 is not 6 analog \+ 2 digital = 8"):
        read_capture(cfg)


def test_error_fewer_analog_lines_than_declared(tmp_path):
    cfg = _good(tmp_path, n_digital=2)
    _edit_cfg(cfg, 2, "9,7A,2D")
    with pytest.raises(CaptureReadError, match=r"bad\.cfg: line 9: analog channel line has 5 fields, expected 13"):
        read_capture(cfg)


def test_error_truncated_binary(tmp_path):
    cfg = _good(tmp_path, file_type="BINARY", n_digital=3)
    dat = tmp_path / "bad.dat"
    dat.write_bytes(dat.read_bytes()[:-3])
    # record: 4 + 4 + 6 x 2 + 1 x 2 = 22 bytes; 20 records = 440 bytes, 437 left
    with pytest.raises(CaptureReadError, match=r"bad\.dat: byte 418: 437 bytes is not a whole number of 22-byte records"):
        read_capture(cfg)


def test_error_unparsable_cfg_line(tmp_path):
    cfg = _good(tmp_path)
    _edit_cfg(cfg, 5, "3,UL3,C,,V,zero.02,0,0,-1,1,1,1,P")
    with pytest.raises(CaptureReadError, match=r"bad\.cfg: line 5, field 6 \(a\): 'zero\.02' is not a number"):
        read_capture(cfg)
    _edit_cfg(cfg, 5, "3,UL3,C,,V,0.02,0,0,-1,1,1,1,P")
    _edit_cfg(cfg, 11, "1000;20")
    with pytest.raises(CaptureReadError, match=r"bad\.cfg: line 11: expected 'samp,endsamp', got '1000;20'"):
        read_capture(cfg)


def test_error_unknown_file_type(tmp_path):
    cfg = _good(tmp_path)
    _edit_cfg(cfg, 14, "BINARY64")
    with pytest.raises(CaptureReadError, match=r"bad\.cfg: line 14: unknown file type 'BINARY64'; expected one of ASCII, BINARY, BINARY32, FLOAT32"):
        read_capture(cfg)
    assert_clean_failure(run_cli("inspect", cfg), r"line 14: unknown file type")


def test_error_non_numeric_ascii(tmp_path):
    cfg = _good(tmp_path, n_digital=1)
    dat = tmp_path / "bad.dat"
    lines = dat.read_text().splitlines()
    f = lines[6].split(",")
    f[4] = "1.2.3"  # field 5 = analog channel 3 (UL3)
    lines[6] = ",".join(f)
    dat.write_text("\n".join(lines) + "\n")
    with pytest.raises(CaptureReadError, match=r"bad\.dat: line 7, column 5 \(analog channel 3 'UL3'\): '1\.2\.3' is not a number"):
        read_capture(cfg)


def test_error_ascii_wrong_field_count(tmp_path):
    cfg = _good(tmp_path, n_digital=1)
    dat = tmp_path / "bad.dat"
    lines = dat.read_text().splitlines()
    lines[3] += ",7"
    dat.write_text("\n".join(lines) + "\n")
    with pytest.raises(CaptureReadError, match=r"bad\.dat: line 4: 10 fields, but the cfg \(6 analog \+ 1 digital channels\) needs 9"):
        read_capture(cfg)


def test_error_several_rates(tmp_path):
    cfg = _good(tmp_path)
    lines = cfg.read_text().splitlines()
    lines[9:11] = ["2", "2000,10", "1000,20"]
    cfg.write_text("\n".join(lines) + "\n")
    with pytest.raises(CaptureReadError, match=r"bad\.cfg: lines 11-12: 2 different sampling rates \(2000, 1000 Hz\): variable-rate records are not supported"):
        read_capture(cfg)


def test_files_not_modified(tmp_path):
    cfg = _good(tmp_path, file_type="BINARY")
    before = {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in tmp_path.iterdir()}
    read_capture(cfg)
    assert {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in tmp_path.iterdir()} == before


# -- sniffing -----------------------------------------------------------------------------------
def test_sniffer(tmp_path):
    cfg = _good(tmp_path)
    assert sniff_comtrade(cfg) and sniff_comtrade(tmp_path / "bad.dat")
    (tmp_path / "lonely.dat").write_bytes(b"1,0,5\n")
    (tmp_path / "other.cfg").write_text("[section]\nkey = value\n")
    assert not sniff_comtrade(tmp_path / "lonely.dat") and not sniff_comtrade(tmp_path / "other.cfg")
    assert not sniff_comtrade(DATA / "csv_comma_seconds.csv") and not sniff_comtrade(tmp_path)
    assert detect_format(tmp_path / "bad.dat").name == "comtrade"


# -- end to end: a bundled capture through COMTRADE finds the same open phase ---------------------
@pytest.mark.slow
def test_open_phase_through_comtrade(tmp_path):
    from waveforms.analysis import analyze

    original = read_capture(SAMPLES / "open_phase_restored.h5")
    cfg = capture_to_comtrade(original, tmp_path, "open_phase_restored", file_type="BINARY32")
    cap = read_capture(cfg)
    assert cap.channel_names == original.channel_names and cap.n_samples == original.n_samples
    assert cap.start_time == original.start_time and cap.nominal_frequency_hz == original.nominal_frequency_hz
    # 30-bit counts: within 1e-9 of each channel's peak (common practice, no source)
    peak = np.nanmax(np.abs(original.read()), axis=1, keepdims=True)
    assert np.nanmax(np.abs(cap.read() - original.read()) / peak) < 1e-9
    ref = analyze(original.replace(nameplate=None), speed=False, quality=False)
    got = analyze(cap, speed=False, quality=False)
    assert [(e.kind, e.phase) for e in got.events] == [(e.kind, e.phase) for e in ref.events] == [("open_phase", "A")]
    assert got.events[0].start_s == pytest.approx(ref.events[0].start_s, abs=1e-3)
    # against the simulator's record, not the detector's own earlier output: the contact parted at the current
    # zero after the 2.0 s command (open_phase_restored.truth.json, switching.interruptions[0].current_zero_s);
    # within a quarter cycle of 60 Hz (our tolerance)
    truth = json.loads((SAMPLES / "open_phase_restored.truth.json").read_text())
    zero_s = truth["switching"]["interruptions"][0]["current_zero_s"]
    assert abs(got.events[0].start_s - zero_s) < 0.25 / 60.0
    res = run_cli("inspect", cfg)
    assert res.exit_code == 0, res.output
    assert "comtrade" in res.stdout and "Ia" in res.stdout
    out = tmp_path / "out"
    res = run_cli("analyze", tmp_path / "open_phase_restored.dat", "--out", out, "--no-speed")
    assert res.exit_code == 0, res.output
    doc = json.loads((out / "result.json").read_text())
    validate(doc)
    assert [(e["kind"], e["phase"]) for e in doc["events"]] == [("open_phase", "A")]
    assert doc["capture"]["importer"] == "comtrade"
