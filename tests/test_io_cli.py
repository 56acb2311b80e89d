"""``motor-waveforms inspect`` and ``motor-waveforms convert`` end to end (click's CliRunner)."""

from __future__ import annotations

import json
import os

import numpy as np

from waveforms import read_capture

from _io_support import DATA, assert_clean_failure, run_cli


def test_inspect_human_readable():
    r = run_cli("inspect", DATA / "csv_semicolon_decimal_comma.csv")
    assert r.exit_code == 0, r.output
    out = r.stdout
    for text in ("format     csv", "200 at 1000 Hz", "50 Hz nominal", "Va   voltage A LN      from 'UL1 [kV]' x1000",
                 "recognised as Ia", "data quality", "no findings"):
        assert text in out, text


def test_inspect_json_several_files():
    r = run_cli("inspect", "--json", DATA / "csv_comma_seconds.csv", DATA / "native.h5")
    assert r.exit_code == 0, r.output
    data = json.loads(r.stdout)
    assert [d["capture"]["provenance"]["importer"] for d in data] == ["csv", "hdf5-native"]
    c = data[0]["capture"]
    assert c["sample_rate_hz"] == 1000.0 and c["n_samples"] == 200 and c["duration_s"] == 0.2
    assert data[0]["stats"]["Va"]["max"] <= 325.0 and data[0]["quality"] == []


def test_inspect_json_reports_errors_per_file(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_text("time,Va\n0,1\n0,2\n", encoding="utf-8")
    r = run_cli("inspect", "--json", bad, DATA / "csv_comma_seconds.csv")
    assert r.exit_code == 2
    data = json.loads(r.stdout)
    assert "time stamp repeats" in data[0]["error"] and "capture" in data[1]


def test_inspect_options_rate_map_ratio(tmp_path):
    p = tmp_path / "raw.csv"
    p.write_text("Kanal A;Kanal B\n" + "".join(f"{np.sin(i / 10):.6f};{np.cos(i / 10):.6f}\n" for i in range(400)), encoding="utf-8")
    r = run_cli("inspect", "--json", p, "--rate", "2000", "--map", "Kanal A=Va", "--map", "Kanal B=Ia", "--ratio", "Ia=400:5",
                "--start", "2024-02-03T04:05:06+02:00", "--nominal-frequency", "50")
    assert r.exit_code == 0, r.output
    c = json.loads(r.stdout)[0]["capture"]
    assert [ch["name"] for ch in c["channels"]] == ["Va", "Ia"]
    assert c["channels"][1]["scale"] == 80.0
    assert c["start_time"] == "2024-02-03T04:05:06+02:00"
    assert c["provenance"]["mapping"]["source"] == "command line"


def test_inspect_ignore_unknown(tmp_path):
    p = tmp_path / "extra.csv"
    p.write_text("time,Va,Temp\n" + "".join(f"{i / 1000},{i},{20}\n" for i in range(100)), encoding="utf-8")
    assert_clean_failure(run_cli("inspect", p), r"column 'Temp': not a known channel name")
    r = run_cli("inspect", p, "--ignore-unknown", "--nominal-frequency", "50")
    assert r.exit_code == 0 and "not recognised as a channel; ignored" in r.stdout
    r = run_cli("inspect", p, "--ignore", "Temp", "--nominal-frequency", "50")
    assert r.exit_code == 0 and "ignored (mapping)" in r.stdout


def test_convert_csv_to_native_and_csv(tmp_path):
    out = tmp_path / "a.h5"
    r = run_cli("convert", DATA / "csv_tab_iso8601.tsv", out)
    assert r.exit_code == 0, r.output
    assert "native HDF5, 6 channels, 240 samples at 1200 Hz" in r.stdout
    a, b = read_capture(DATA / "csv_tab_iso8601.tsv"), read_capture(out)
    np.testing.assert_array_equal(a.read(), b.read())
    assert b.start_time == a.start_time
    assert any("converted to a.h5" in h for h in b.provenance.history)
    out_csv = tmp_path / "b.csv"
    r = run_cli("convert", out, out_csv, "--delimiter", ";")
    assert r.exit_code == 0, r.output
    np.testing.assert_allclose(read_capture(out_csv).read(), a.read(), rtol=1e-9)


def test_convert_refuses_bad_target_and_leaves_nothing(tmp_path):
    assert_clean_failure(run_cli("convert", DATA / "csv_comma_seconds.csv", tmp_path / "x.parquet"), r"x\.parquet: the output must end in \.h5, \.hdf5 or \.csv")
    bad = tmp_path / "bad.csv"
    bad.write_text("time,Va\n0,1\n0,2\n", encoding="utf-8")
    target = tmp_path / "keep.h5"
    target.write_bytes(b"previous result")
    assert_clean_failure(run_cli("convert", bad, target), r"time stamp repeats")
    assert target.read_bytes() == b"previous result"  # atomic: the old output is untouched
    assert os.listdir(tmp_path) == sorted(os.listdir(tmp_path)) and not [f for f in os.listdir(tmp_path) if f.endswith(".part")]


def test_convert_native_over_itself(tmp_path):
    p = tmp_path / "n.h5"
    p.write_bytes((DATA / "native.h5").read_bytes())
    before = p.read_bytes()
    assert_clean_failure(run_cli("convert", p, p), r"n\.h5: refusing to overwrite the input capture")
    assert p.read_bytes() == before
