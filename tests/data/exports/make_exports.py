"""Write the export conformance set of this folder (run ``python tests/data/exports/make_exports.py``).

Every file is small (a few kB), with invented values: three 50 Hz line-to-neutral voltages of
325 V peak (or line-to-line 563 V peak) and three line currents of 14 A peak, 120 samples at
2 kHz, rounded to 3 decimals.  Beside each file ``<name>.expect.json`` says what the importer
must make of it: channels, source units (as written; for the native file, whose
samples are stored in V and A, the channels' units), rate, start time, number of samples and
the first three samples of every channel in V / A, or, for a refused file, a fragment of the
one-line error; ``options`` / ``mapping`` are what the user would give on the command line.
The layouts and header conventions are common practice in logger exports (no source).
"""

from __future__ import annotations

import datetime as dt
import json
import sys
from pathlib import Path

import h5py
import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from _comtrade_support import Analog, write_comtrade  # noqa: E402

from waveforms.capture import from_arrays, standard_channels  # noqa: E402
from waveforms.io.csv_writer import write_csv  # noqa: E402
from waveforms.io.hdf5_native import write_native  # noqa: E402

RATE = 2000.0
N = 120
T = np.arange(N) / RATE
PH = (0.0, 2 * np.pi / 3, 4 * np.pi / 3)
VLN = [np.round(325 * np.sin(2 * np.pi * 50 * T - p), 3) for p in PH]
VLL = [np.round(563 * np.sin(2 * np.pi * 50 * T - p + np.pi / 6), 3) for p in PH]
IL = [np.round(14 * np.sin(2 * np.pi * 50 * T - p - 0.5), 3) for p in PH]
START = "2024-03-01T10:00:00+01:00"
LN6 = ["Va", "Vb", "Vc", "Ia", "Ib", "Ic"]
LL6 = ["Vab", "Vbc", "Vca", "Ia", "Ib", "Ic"]
CASES: list[str] = []


def _fmt(x: float, decimal: str = ".") -> str:
    s = f"{x:.6g}"
    return s.replace(".", ",") if decimal == "," else s


def expect(name: str, channels: list[str] | None = None, units: list[str] | None = None, start: str | None = "1970-01-01T00:00:00+00:00",
           values: list[np.ndarray] | None = None, scale: list[float] | None = None, error: str | None = None,
           options: dict | None = None, mapping: dict | None = None, fmt: str | None = None, note: str | None = None,
           how: str = "") -> None:
    """Write ``<name>.expect.json``; ``values`` are the samples as written, ``scale`` the factor to V / A."""
    d: dict = {"file": name, "how": how}
    if fmt:
        d["format"] = fmt
    if options:
        d["options"] = options
    if mapping:
        d["mapping"] = mapping
    if error is not None:
        d["error"] = error
    else:
        assert channels is not None and units is not None and values is not None
        sc = scale or [1.0] * len(channels)
        d.update({
            "channels": channels, "source_units": units, "sample_rate_hz": RATE, "start_time": start, "n_samples": N,
            "first_samples": [[round(float(v[i]) * s, 9) for i in range(3)] for v, s in zip(values, sc, strict=True)],
        })
        if note:
            d["note"] = note
    (HERE / f"{name}.expect.json").write_text(json.dumps(d, indent=1) + "\n", encoding="utf-8")
    CASES.append(name)


def write_text(name: str, header: list[str], cols: list[np.ndarray], delim: str = ",", decimal: str = ".",
               time: str | None = "time_s", time_vals: list[str] | None = None, above: list[str] = ()) -> None:
    lines = list(above)
    lines.append(delim.join(([time] if time else []) + header))
    for i in range(N):
        t = [time_vals[i] if time_vals else _fmt(T[i], decimal)] if time else []
        lines.append(delim.join(t + [_fmt(c[i], decimal) for c in cols]))
    (HERE / name).write_text("\n".join(lines) + "\n", encoding="utf-8")


def csv_cases() -> None:
    six = VLN + IL
    write_text("csv_trade_labels.csv", LN6, six)
    expect("csv_trade_labels.csv", LN6, ["V"] * 3 + ["A"] * 3, values=six, how="trade labels Va..Ic, time in seconds")
    write_text("csv_ul_kv_ma_semicolon_comma.csv", ["UL1 [kV]", "UL2 [kV]", "UL3 [kV]", "IL1 [mA]", "IL2 [mA]", "IL3 [mA]"],
               [v / 1e3 for v in VLN] + [i * 1e3 for i in IL], delim=";", decimal=",", time="Zeit [ms]",
               time_vals=[_fmt(t * 1e3, ",") for t in T])
    expect("csv_ul_kv_ma_semicolon_comma.csv", LN6, ["kV"] * 3 + ["mA"] * 3, values=[v / 1e3 for v in VLN] + [i * 1e3 for i in IL],
           scale=[1e3] * 3 + [1e-3] * 3, how="UL1 [kV] / IL1 [mA] headers, ';' and decimal comma, time in ms")
    stamps = [(dt.datetime.fromisoformat(START) + dt.timedelta(microseconds=500 * i)).isoformat(timespec="microseconds") for i in range(N)]
    write_text("csv_tab_iso_van.tsv", ["Van", "Vbn", "Vcn", "I1", "I2", "I3"], six, delim="\t", time="Timestamp", time_vals=stamps)
    expect("csv_tab_iso_van.tsv", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=six, how="Van/I1 headers, tab, ISO 8601 stamps with offset")
    ll = VLL + IL
    write_text("csv_u12_three_wire.csv", ["U12", "U23", "U31", "I1", "I2", "I3"], ll)
    expect("csv_u12_three_wire.csv", LL6, ["V"] * 3 + ["A"] * 3, values=ll, how="U12 line-to-line spellings")
    conventions = {
        "csv_l1n_brackets.csv": (["L1-N [V]", "L2-N [V]", "L3-N [V]", "L1 [A]", "L2 [A]", "L3 [A]"], LN6, six),
        "csv_l1_l2_hyphen.csv": (["L1-L2", "L2-L3", "L3-L1", "I L1", "I L2", "I L3"], LL6, ll),
        "csv_l12_glued.csv": (["L12", "L23", "L31", "IL1", "IL2", "IL3"], LL6, ll),
        "csv_a_n_hyphen.csv": (["A-N", "B-N", "C-N", "Ia", "Ib", "Ic"], LN6, six),
        "csv_an_glued.csv": (["AN", "BN", "CN", "Ia", "Ib", "Ic"], LN6, six),
        "csv_phase_words.csv": (["Phase A Voltage", "Phase B Voltage", "Phase C Voltage", "Phase A Current", "Phase B Current",
                                 "Phase C Current"], LN6, six),
        "csv_voltage_l1_words.csv": (["Voltage L1", "Voltage L2", "Voltage L3", "Current L1", "Current L2", "Current L3"], LN6, six),
    }
    for name, (hdr, labels, cols) in conventions.items():
        write_text(name, hdr, cols)
        units = [("V" if "[V]" in h else "V") if lb.startswith("V") else "A" for h, lb in zip(hdr, labels)]
        expect(name, labels, units, values=cols, how=f"header convention {hdr[0]!r}, {hdr[3]!r}")
    write_text("csv_neutral.csv", ["Va", "Vb", "Vc", "VN", "Ia", "Ib", "Ic", "In"], VLN + [np.round(VLN[0] * 0.01, 3)] + IL + [np.round(IL[0] * 0.1, 3)])
    expect("csv_neutral.csv", ["Va", "Vb", "Vc", "Vn", "Ia", "Ib", "Ic", "In"], ["V"] * 4 + ["A"] * 4,
           values=VLN + [np.round(VLN[0] * 0.01, 3)] + IL + [np.round(IL[0] * 0.1, 3)], how="neutral-to-earth voltage VN and neutral current In")
    # two header lines: names, then units
    lines = ["Time,Va,Vb,Vc,Ia,Ib,Ic", "s,kV,kV,kV,A,A,A"] + [",".join([_fmt(T[i])] + [_fmt(v[i] / 1e3) for v in VLN] + [_fmt(c[i]) for c in IL]) for i in range(N)]
    (HERE / "csv_two_header_lines.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    expect("csv_two_header_lines.csv", LN6, ["kV"] * 3 + ["A"] * 3, values=[v / 1e3 for v in VLN] + IL, scale=[1e3] * 3 + [1.0] * 3,
           how="two header lines: names, then units")
    # metadata blocks
    write_text("csv_metadata_colon_no_time.csv", LN6, six, time=None,
               above=["Invented logger export", "Sample rate: 2 kHz", f"Start time: {START}", "Nominal voltage: 400 V"])
    expect("csv_metadata_colon_no_time.csv", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=six,
           note="read as sample_rate_hz = 2000", how="'key: value' metadata block (rate, start, nominal voltage), no time column")
    write_text("csv_metadata_comma.csv", LN6, six,
               above=["Recorder,invented", f"Start time,{START}", "Nominal voltage,400,V", "Sampling interval,0.5,ms"])
    expect("csv_metadata_comma.csv", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=six,
           note="read as nominal_voltage_v = 400", how="'key,value' metadata block with a time column")
    # this project's own CSV export
    cap = from_arrays(np.vstack(six), standard_channels(), RATE, dt.datetime.fromisoformat(START), nominal_frequency_hz=50.0)
    write_csv(cap, HERE / "csv_own_export.csv")
    expect("csv_own_export.csv", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=six, how="waveforms.io.csv_writer.write_csv")
    # mapped by a mapping file
    write_text("csv_mapped_kanal.csv", ["Kanal 1", "Kanal 2", "Kanal 3", "Kanal 4"], [v / 100 for v in VLN] + [IL[0]])
    expect("csv_mapped_kanal.csv", ["Va", "Vb", "Vc", "Ia"], ["V"] * 3 + ["A"], values=[v / 100 for v in VLN] + [IL[0]],
           scale=[100.0] * 3 + [1.0], mapping={"channels": {"Va": {"column": "Kanal 1", "ratio": 100}, "Vb": {"column": "Kanal 2", "ratio": 100},
                                                          "Vc": {"column": "Kanal 3", "ratio": 100}, "Ia": {"column": "Kanal 4"}}},
           how="own column names mapped by a mapping file, PT ratio 100")
    # refused
    refused = {
        "csv_refused_rms_suffix.csv": (["Va", "Ia", "Ia_rms"], "column 'Ia_rms': looks like a derived value (rms)", "ignore = ['Ia_rms']"),
        "csv_refused_reversed_pair.csv": (["Vab", "Vcb", "Ia"], "column 'Vcb': a reversed line-to-line pair (C to B)", "ignore = ['Vcb']"),
        "csv_refused_bare_conductor.csv": (["L1 [V]", "L2 [V]", "L1 [A]"], "column 'L1 [V]': a conductor name only", "[channels.Va] column = 'L1 [V]'"),
        "csv_refused_unknown_name.csv": (["Kanal 1", "Ia"], "column 'Kanal 1': not a known channel name", "[channels.Va] column = 'Kanal 1'"),
    }
    for name, (hdr, frag, add) in refused.items():
        write_text(name, hdr, [VLN[0], IL[0], IL[1]][: len(hdr)])
        expect(name, error=frag, how=f"refused; the error says what to add to the mapping: {add}")
        data = json.loads((HERE / f"{name}.expect.json").read_text())
        data["error_also"] = add
        (HERE / f"{name}.expect.json").write_text(json.dumps(data, indent=1) + "\n", encoding="utf-8")


def parquet_cases() -> None:
    hdr = ["L1-N [V]", "L2-N [V]", "L3-N [V]", "L1 [A]", "L2 [A]", "L3 [A]"]
    six = VLN + IL
    pq.write_table(pa.table({"time_s": T, **dict(zip(hdr, six, strict=True))}), HERE / "parquet_time_seconds.parquet", row_group_size=50)
    expect("parquet_time_seconds.parquet", LN6, ["V"] * 3 + ["A"] * 3, values=six, how="Parquet, time in seconds, L1-N [V] names, row groups of 50")
    t0 = np.datetime64("2024-03-01T09:00:00", "ns")
    ts = pa.array(t0 + (np.arange(N) * 500_000).astype("timedelta64[ns]"), pa.timestamp("ns", tz="+01:00"))
    pq.write_table(pa.table({"Timestamp": ts, **dict(zip(LN6, six, strict=True))}), HERE / "parquet_timestamp.parquet")
    expect("parquet_timestamp.parquet", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=six, how="Parquet, Arrow timestamp column with a zone")
    tbl = pa.table(dict(zip(["UL1", "UL2", "UL3", "IL1", "IL2", "IL3"], six, strict=True)))
    pq.write_table(tbl.replace_schema_metadata({"fs": "2 kHz", "start_time": START}), HERE / "parquet_no_time_kv_rate.parquet")
    expect("parquet_no_time_kv_rate.parquet", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=six, how="Parquet, no time column, rate and start in key-value metadata")
    pq.write_table(tbl, HERE / "parquet_no_time_rate_option.parquet")
    expect("parquet_no_time_rate_option.parquet", LN6, ["V"] * 3 + ["A"] * 3, values=six, options={"sample_rate_hz": RATE},
           how="Parquet, no time column, --rate given")
    pq.write_table(pa.table({"t": T, "Va": VLN[0], "Va_thd": VLN[1]}), HERE / "parquet_refused_thd.parquet")
    expect("parquet_refused_thd.parquet", error="column 'Va_thd': looks like a derived value (thd)", how="Parquet refused like CSV: a THD column")


def hdf5_cases() -> None:
    six = np.vstack(VLN + IL)
    with h5py.File(HERE / "matrix_samples_by_channels.h5", "w") as f:
        d = f.create_dataset("acq/data", data=six.T, chunks=(60, 6))
        d.attrs["channel_names"] = ["L1-N", "L2-N", "L3-N", "L1 [A]", "L2 [A]", "L3 [A]"]
        d.attrs["sample_rate"] = RATE
        f.attrs["start_time"] = START
    expect("matrix_samples_by_channels.h5", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=list(six),
           how="HDF5 matrix samples x channels, names and rate in attributes")
    with h5py.File(HERE / "matrix_channels_by_samples.h5", "w") as f:
        f.create_dataset("rec", data=six / np.array([[1e3]] * 3 + [[1.0]] * 3))
        f["names"] = np.array([b"Va", b"Vb", b"Vc", b"Ia", b"Ib", b"Ic"])
        f["rec"].attrs["units"] = ["kV", "kV", "kV", "A", "A", "A"]
        f["rec"].attrs["dt"] = 1 / RATE
    expect("matrix_channels_by_samples.h5", LN6, ["kV"] * 3 + ["A"] * 3, values=[v / 1e3 for v in VLN] + IL, scale=[1e3] * 3 + [1.0] * 3,
           how="HDF5 matrix channels x samples, names in a companion string dataset, units attribute, dt attribute")
    with h5py.File(HERE / "matrix_matlab_v73.mat", "w", userblock_size=512) as f:
        f.create_dataset("wave", data=six).attrs["MATLAB_class"] = np.bytes_("double")  # MATLAB's 120x6 matrix, stored transposed
        chars = np.array([[ord(c) for c in nm] for nm in LN6], dtype=np.uint16).T
        f.create_dataset("labels", data=chars).attrs["MATLAB_class"] = np.bytes_("char")
        f.create_dataset("fs", data=np.array([[RATE]])).attrs["MATLAB_class"] = np.bytes_("double")
    with open(HERE / "matrix_matlab_v73.mat", "r+b") as fh:
        fh.write(b"MATLAB 7.3 MAT-file, invented for the conformance set")
    expect("matrix_matlab_v73.mat", LN6, ["V"] * 3 + ["A"] * 3, values=list(six), how="MATLAB v7.3 layout: user block, char labels, fs scalar")
    with h5py.File(HERE / "matrix_by_index.h5", "w") as f:
        f.create_dataset("x", data=six[[0, 3]].T).attrs["fs"] = RATE
    expect("matrix_by_index.h5", ["Va", "Ia"], ["V", "A"], values=[VLN[0], IL[0]], mapping={"channels": {"Va": {"column": 1}, "Ia": {"column": 2}}},
           how="HDF5 matrix without names, mapped by index ([channels.Va] column = 1)")
    with h5py.File(HERE / "matrix_refused_no_names.h5", "w") as f:
        f.create_dataset("x", data=six.T).attrs["fs"] = RATE
    expect("matrix_refused_no_names.h5", error="dataset /x: no channel names", how="refused: HDF5 matrix without names and no mapping; says [channels.Va] column = 1")
    data = json.loads((HERE / "matrix_refused_no_names.h5.expect.json").read_text())
    data["error_also"] = "[channels.Va] column = 1"
    (HERE / "matrix_refused_no_names.h5.expect.json").write_text(json.dumps(data, indent=1) + "\n", encoding="utf-8")
    # 1-D datasets (generic layout), names recognised, rate from the mapping
    with h5py.File(HERE / "hdf5_mapped_one_d.h5", "w") as f:
        for name, v in zip(["UL1", "UL2", "UL3", "IL1", "IL2", "IL3"], six, strict=True):
            f[f"wave/{name}"] = v
        f["wave"].attrs["fs"] = RATE
    expect("hdf5_mapped_one_d.h5", LN6[3:] + LN6[:3], ["A"] * 3 + ["V"] * 3, values=list(six[3:]) + list(six[:3]),
           mapping={"hdf5": {"rate_attribute": "/wave:fs"}},
           how="generic HDF5, one 1-D dataset per channel (read in the file's name order), rate attribute named in the mapping")
    cap = from_arrays(six, standard_channels(), RATE, dt.datetime.fromisoformat(START), nominal_frequency_hz=50.0)
    write_native(cap, HERE / "native.h5")
    expect("native.h5", LN6, ["V"] * 3 + ["A"] * 3, start=START, values=list(six), how="this project's native HDF5 (write_native)")


def comtrade_cases() -> None:
    a_v, a_i = 0.001, 0.001
    raw = np.vstack([np.rint(v / 1e3 / a_v) for v in VLN] + [np.rint(i / a_i) for i in IL]).astype(np.int64)
    analogs = [Analog(n, ph, u, a) for n, ph, u, a in
               [("UL1", "A", "kV", a_v), ("UL2", "B", "kV", a_v), ("UL3", "C", "kV", a_v), ("IL1", "A", "A", a_i), ("IL2", "B", "A", a_i), ("IL3", "C", "A", a_i)]]
    write_comtrade(HERE, "comtrade_ascii_1999", analogs, raw, RATE, file_type="ASCII", rev="1999", start="01/03/2024,09:00:00.000000",
                   trigger="01/03/2024,09:00:00.010000")
    expect("comtrade_ascii_1999.cfg", LN6, ["kV"] * 3 + ["A"] * 3, start="2024-03-01T09:00:00+00:00",
           values=[r * a for r, a in zip(raw, [a_v * 1e3] * 3 + [a_i] * 3, strict=True)],
           how="COMTRADE 1999 ASCII, kV and A, no time code (taken as UTC)")
    names = [Analog(n, ph, u, a) for n, ph, u, a in
             [("Kanal 1", "A", "kV", a_v), ("Kanal 2", "B", "kV", a_v), ("Kanal 3", "C", "kV", a_v), ("Kanal 4", "A", "A", a_i), ("Kanal 5", "B", "A", a_i), ("Kanal 6", "C", "A", a_i)]]
    write_comtrade(HERE, "comtrade_binary_2013_ph", names, raw, RATE, file_type="BINARY", rev="2013", time_code="+1", start="01/03/2024,10:00:00.000000",
                   trigger="01/03/2024,10:00:00.010000")
    expect("comtrade_binary_2013_ph.cfg", LN6, ["kV"] * 3 + ["A"] * 3, start=START,
           values=[r * a for r, a in zip(raw, [a_v * 1e3] * 3 + [a_i] * 3, strict=True)],
           how="COMTRADE 2013 BINARY, own channel ids, phase field and unit decide, time code +1")


def main() -> None:
    for p in HERE.iterdir():
        if p.name not in ("make_exports.py", "README.md") and p.is_file():
            p.unlink()
    csv_cases()
    parquet_cases()
    hdf5_cases()
    comtrade_cases()
    print(f"{len(CASES)} cases written to {HERE}")


if __name__ == "__main__":
    main()
