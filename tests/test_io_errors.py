"""Every malformed input of the foundation issue, item 6: one line naming file, place and problem.

Each case is checked twice: the library raises the package's own error (``match=`` on the
message) and ``motor-waveforms inspect`` exits non-zero with that one line and no traceback.
Behaviour checks of our own error handling: no external source.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from waveforms import ReadOptions, read_capture
from waveforms.errors import CaptureReadError, MappingError, WaveformsError

from _io_support import DATA, assert_clean_failure, run_cli

CSV_CASES = {
    # name: (file bytes, expected message after the file name)
    "empty": (b"", r": file is empty$"),
    "blank": (b"\n\n  \n", r": no text lines: the file is blank"),
    "text_in_numbers": (b"time,Va,Ib\n0,1,2\n0.001,2,3\n0.002,3,abc\n0.003,4,5\n", r": line 4, column 'Ib': 'abc' is not a number"),
    "text_after_blank_lines": (b"time,Va\r\n0,1\r\n\r\n0.001,2\r\n\r\n0.002,abc\r\n", r": line 6, column 'Va': 'abc' is not a number"),
    "text_in_time": (b"time,Va\n0,1\n0.001,2\nx,3\n", r": line 4, column 'time': 'x' is not a time stamp in seconds"),
    "unknown_column": (b"time,Va,Ix\n0,1,2\n0.001,2,3\n", r": line 1, column 'Ix': not a known channel name; did you mean 'In', 'Ic', 'Ib'\?"),
    "row_too_long": (b"time,Va,Ia\n0,1,2\n0.001,2,3,4\n0.002,3,4\n", r": line 3: 4 fields, but the header row \(line 1\) has 3"),
    "row_too_short": (b"time,Va,Ia\n0,1,2\n0.001,2,3\n0.002,3\n", r": line 4: 2 fields, but the header row \(line 1\) has 3"),
    "truncated_last_line": (b"time;Va;Ia\n0;1;2\n0,001;2;3\n0,002;3", r": line 4: 2 fields, but the header row \(line 1\) has 3"),
    "duplicate_stamp": (b"time,Va\n0,1\n0.001,2\n0.001,3\n0.003,4\n", r": line 4, column 'time': time stamp repeats the one on line 3"),
    "backwards_stamp": (b"time,Va\n0,1\n0.001,2\n0.002,3\n0.0015,4\n0.003,4\n", r": line 5, column 'time': time goes backwards"),
    "wrong_unit_kind": (b"time,Va (A),Ia\n0,1,2\n0.001,2,3\n", r": line 1, column 'Va \(A\)': unit 'A' does not fit a voltage channel"),
    "unknown_unit": (b"time,Va (pu),Ia\n0,1,2\n0.001,2,3\n", r": line 1, column 'Va \(pu\)': unit 'pu' is not a voltage or current unit"),
    "iso_without_offset": (b"time,Va\n2024-01-01T00:00:00.000,1\n2024-01-01T00:00:00.001,2\n", r": line 2, column 'time': time stamp '2024-01-01T00:00:00.000' has no UTC offset"),
    "bad_iso": (b"time,Va\n2024-01-01T00:00:00.000+00:00,1\n2024-01-01T00:00:00.001+00:00,2\n2024-13-01T00:00:00.002+00:00,2\n",
                r": line 4, column 'time': '2024-13-01T00:00:00.002\+00:00' is not an ISO 8601 time stamp"),
    "split_date_time": (b"Date,Time,Va\n2024-01-01,00:00:00.000,1\n2024-01-01,00:00:00.001,2\n",
                        r": line 1, column 'Time': holds times of day .* separate date and time columns are not supported"),
    "no_rate": (b"Va,Ia\n1,2\n2,3\n", r": line 1: no time column and no sample rate; give --rate HZ"),
    "header_only": (b"time,Va,Ia\n", r": line 1: header row but no data rows"),
    "no_header": (b"1,2\n3,4\n", r": line 1: no header row above the data"),
    "repeated_header": (b"time,Va,Va\n0,1,2\n0.001,2,3\n", r": line 1: column names repeated in the header: \['Va'\]"),
    "binary": (bytes(range(256)) * 4, r": contains NUL bytes: a binary file, not delimited text \(use --format\)"),
}


@pytest.mark.parametrize("case", sorted(CSV_CASES))
def test_csv_error_library(tmp_path, case):
    data, pattern = CSV_CASES[case]
    p = tmp_path / f"{case}.csv"
    p.write_bytes(data)
    with pytest.raises(WaveformsError, match=r"^" + str(p).replace("\\", "\\\\") + pattern):
        read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert p.read_bytes() == data  # input untouched


@pytest.mark.parametrize("case", sorted(CSV_CASES))
def test_csv_error_cli(tmp_path, case):
    data, pattern = CSV_CASES[case]
    p = tmp_path / f"{case}.csv"
    p.write_bytes(data)
    assert_clean_failure(run_cli("inspect", p, "--nominal-frequency", "50"), pattern)


def _truncated(tmp_path: Path, frac: float) -> Path:
    b = (DATA / "native.h5").read_bytes()
    p = tmp_path / "truncated.h5"
    p.write_bytes(b[: int(len(b) * frac)])
    return p


@pytest.mark.parametrize("frac", [0.3, 0.9])
def test_truncated_hdf5(tmp_path, frac):
    p = _truncated(tmp_path, frac)
    with pytest.raises(CaptureReadError, match=r"truncated\.h5: not a readable HDF5 file, truncated or damaged\?"):
        read_capture(p)
    assert_clean_failure(run_cli("inspect", p), r"truncated\.h5: not a readable HDF5 file, truncated or damaged\?")
    assert_clean_failure(run_cli("inspect", p, "--format", "hdf5-native"), r"not a readable HDF5 file")


def test_generic_hdf5_without_mapping():
    pat = r"hdf5_generic\.h5: generic HDF5 file: no dataset name is a known channel; give a mapping file"
    with pytest.raises(CaptureReadError, match=pat):
        read_capture(DATA / "hdf5_generic.h5")
    assert_clean_failure(run_cli("inspect", DATA / "hdf5_generic.h5"), pat)


def test_mapping_names_missing_column(tmp_path):
    m = tmp_path / "m.toml"
    m.write_text('[channels.Va]\ncolumn = "U_L1"\n', encoding="utf-8")
    pat = r"csv_comma_seconds\.csv: column 'U_L1' \(mapping channels\.Va\): not found in the file"
    with pytest.raises(MappingError, match=pat):
        read_capture(DATA / "csv_comma_seconds.csv", options=ReadOptions(mapping={"channels": {"Va": {"column": "U_L1"}}}, mapping_source=str(m)))
    assert_clean_failure(run_cli("inspect", DATA / "csv_comma_seconds.csv", "--mapping", m), pat)


def test_mapping_file_errors(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[channels.Va\ncolumn = 1\n", encoding="utf-8")
    assert_clean_failure(run_cli("inspect", DATA / "csv_comma_seconds.csv", "--mapping", bad), r"bad\.toml: not valid TOML")
    typo = tmp_path / "typo.toml"
    typo.write_text('[chanels.Va]\ncolumn = "Va"\n', encoding="utf-8")
    assert_clean_failure(run_cli("inspect", DATA / "csv_comma_seconds.csv", "--mapping", typo), r"typo\.toml: key chanels: unknown key; did you mean 'channels'\?")
    assert_clean_failure(run_cli("inspect", DATA / "csv_comma_seconds.csv", "--mapping", tmp_path / "none.toml"), r"none\.toml: mapping file not found")


def test_mapped_unit_mismatch(tmp_path):
    pat = r"column 'Ia': unit 'kV' does not fit a current channel"
    with pytest.raises(CaptureReadError, match=pat):
        read_capture(DATA / "csv_comma_seconds.csv", options=ReadOptions(mapping={"channels": {"Ia": {"unit": "kV"}}}))
    assert_clean_failure(run_cli("inspect", DATA / "csv_comma_seconds.csv", "--unit", "Ia=kV"), pat)


def test_missing_file_and_folder(tmp_path):
    assert_clean_failure(run_cli("inspect", tmp_path / "nope.csv"), r"nope\.csv: file not found")
    assert_clean_failure(run_cli("inspect", tmp_path), r"is a folder, not a capture file")


def test_bad_cli_values():
    assert_clean_failure(run_cli("inspect", DATA / "csv_comma_seconds.csv", "--start", "2024-01-01T00:00:00"), r"--start .* needs a UTC offset")
    assert_clean_failure(run_cli("inspect", DATA / "csv_comma_seconds.csv", "--ratio", "Ia"), r"--ratio 'Ia': expected NAME=VALUE")


def test_one_bad_file_does_not_stop_the_others(tmp_path):
    bad = tmp_path / "bad.csv"
    bad.write_bytes(b"")
    r = run_cli("inspect", bad, DATA / "csv_comma_seconds.csv")
    assert r.exit_code == 2
    assert "csv_comma_seconds.csv" in r.stdout and "Va" in r.stdout
    assert_clean_failure(r, r"bad\.csv: file is empty")
