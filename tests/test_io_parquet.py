"""Parquet importer: columns recognised as CSV headers, time stamps checked as for CSV, samples read by row group.

Consistency checks against the written arrays (no external source); the Parquet files are written
by pyarrow (a general reference library from PyPI) and read back through our importer.
"""

from __future__ import annotations

import datetime as dt

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from waveforms.errors import CaptureReadError, MappingError
from waveforms.io import ReadOptions, read_capture
from waveforms.io.parquet import ParquetSource

RATE = 2000.0


def _table(n=3000, time=True):
    t = np.arange(n) / RATE
    cols = {"time_s": t} if time else {}
    cols.update({"UL1 [kV]": 0.325 * np.sin(2 * np.pi * 50 * t), "IL1": 10 * np.cos(2 * np.pi * 50 * t)})
    return pa.table(cols)


def test_reads_lazily_by_row_group(tmp_path, monkeypatch):
    p = tmp_path / "a.parquet"
    tbl = _table()
    pq.write_table(tbl, p, row_group_size=500)
    cap = read_capture(p)
    assert isinstance(cap.source, ParquetSource)
    assert cap.channel_names == ("Va", "Ia") and cap.sample_rate_hz == RATE
    want = np.vstack([tbl.column(1).to_numpy() * 1e3, tbl.column(2).to_numpy()])
    calls = []
    real = pq.ParquetFile.read_row_group
    monkeypatch.setattr(pq.ParquetFile, "read_row_group", lambda self, i, **k: calls.append(i) or real(self, i, **k))
    np.testing.assert_array_equal(cap.read(1400, 1600), want[:, 1400:1600])
    assert sorted(set(calls)) == [2, 3]  # only the two row groups the request touches
    np.testing.assert_array_equal(np.hstack([c.data for c in cap.iter_chunks(700)]), want)


def test_timestamp_column_gives_the_start(tmp_path):
    t0 = np.datetime64("2024-03-01T09:00:00", "ns")
    ts = pa.array(t0 + (np.arange(100) * 500_000).astype("timedelta64[ns]"), pa.timestamp("ns", tz="+01:00"))
    p = tmp_path / "ts.parquet"
    pq.write_table(pa.table({"Timestamp": ts, "Ia": np.ones(100)}), p)
    cap = read_capture(p, options=ReadOptions(nominal_frequency_hz=50.0))
    assert cap.start_time == dt.datetime(2024, 3, 1, 9, tzinfo=dt.timezone.utc)
    assert cap.start_time.utcoffset() == dt.timedelta(hours=1)
    assert cap.sample_rate_hz == RATE


def test_no_time_column_needs_a_rate(tmp_path):
    p = tmp_path / "n.parquet"
    pq.write_table(_table(time=False), p)
    with pytest.raises(CaptureReadError, match=r"n.parquet: no time column and no sample rate; give --rate HZ"):
        read_capture(p)
    assert read_capture(p, options=ReadOptions(sample_rate_hz=RATE)).sample_rate_hz == RATE


def test_key_value_metadata_states_the_rate(tmp_path):
    p = tmp_path / "kv.parquet"
    pq.write_table(_table(time=False).replace_schema_metadata({"sampling_interval": "0.5 ms", "nominal_voltage": "400 V"}), p)
    cap = read_capture(p)
    assert cap.sample_rate_hz == pytest.approx(RATE) and cap.nominal_voltage_v == 400.0
    assert any("'sampling_interval' = '0.5 ms' read as sample_rate_hz = 2000" in n for n in cap.provenance.notes)


def test_gap_in_stamps_is_nan(tmp_path):
    tbl = _table(400)
    keep = np.r_[0:100, 110:400]
    p = tmp_path / "g.parquet"
    pq.write_table(tbl.take(pa.array(keep)), p)
    cap = read_capture(p)
    assert cap.n_samples == 400 and len(cap.gaps) == 1 and (cap.gaps[0].start_index, cap.gaps[0].stop_index) == (100, 110)
    assert np.isnan(cap.read(100, 110)).all()


@pytest.mark.parametrize(("change", "fragment"), [
    ("backwards", r"row 6, column 'time_s': time goes backwards"),
    ("repeat", r"row 6, column 'time_s': time stamp repeats the one on row 5"),
    ("text", r"column 'IL1': holds string values, not numbers"),
])
def test_errors_name_file_row_and_column(tmp_path, change, fragment):
    tbl = _table(50)
    t = tbl.column(0).to_numpy().copy()
    if change == "backwards":
        t[5] = t[3]
    elif change == "repeat":
        t[5] = t[4]
    cols = {"time_s": t, "UL1 [kV]": tbl.column(1)}
    cols["IL1"] = pa.array([str(x) for x in tbl.column(2).to_pylist()]) if change == "text" else tbl.column(2)
    p = tmp_path / "e.parquet"
    pq.write_table(pa.table(cols), p)
    with pytest.raises(CaptureReadError, match=r"e.parquet: " + fragment):
        read_capture(p)


def test_same_refusal_as_csv(tmp_path):
    t = np.arange(10) / RATE
    pq.write_table(pa.table({"t": t, "Va": t, "Vrms_b": t}), tmp_path / "x.parquet")
    (tmp_path / "x.csv").write_text("t,Va,Vrms_b\n" + "".join(f"{v},{v},{v}\n" for v in t))
    errs = []
    for name in ("x.parquet", "x.csv"):
        with pytest.raises(MappingError) as e:
            read_capture(tmp_path / name)
        errs.append(e.value.problem)
    assert errs[0] == errs[1] and "derived value" in errs[0]


def test_damaged_file_is_one_line(tmp_path):
    p = tmp_path / "bad.parquet"
    p.write_bytes(b"PAR1" + b"\0" * 40 + b"PAR1")
    with pytest.raises(CaptureReadError, match=r"bad.parquet: not a readable Parquet file") as e:
        read_capture(p)
    assert "\n" not in str(e.value)
