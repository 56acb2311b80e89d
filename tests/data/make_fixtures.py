"""Write the small importer fixtures in this folder (run from anywhere: ``python tests/data/make_fixtures.py``).

Every fixture holds invented, closed-form signals so that tests can compare
imported values with numpy evaluations of the same formulas (see README.md):

    v_X(t) = VPK * sin(2 pi f t - phi_X),  i_X(t) = IPK * sin(2 pi f t - phi_X - 0.5),
    phi_A, phi_B, phi_C = 0, 2 pi/3, 4 pi/3

written with 6 significant decimals in the unit named by the header.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import h5py
import numpy as np

HERE = Path(__file__).resolve().parent
VPK = 325.0  # V peak, 230 V RMS line-to-neutral
IPK = 14.0  # A peak
PHI = {"A": 0.0, "B": 2 * np.pi / 3, "C": 4 * np.pi / 3}


def wave(kind: str, phase: str, t: np.ndarray, f: float) -> np.ndarray:
    """The closed-form signals of the fixtures (also used by the tests)."""
    if kind == "v":
        return VPK * np.sin(2 * np.pi * f * t - PHI[phase])
    if kind == "vll":  # line-to-line, leading the first phase voltage by 30 deg
        return np.sqrt(3) * VPK * np.sin(2 * np.pi * f * t - PHI[phase] + np.pi / 6)
    return IPK * np.sin(2 * np.pi * f * t - PHI[phase] - 0.5)


def fmt(x: np.ndarray, decimal: str = ".") -> list[str]:
    s = [f"{v:.6f}" for v in x]
    return [c.replace(".", ",") for c in s] if decimal == "," else s


def write_rows(path: Path, head: list[str], header: list[str], cols: list[list[str]], sep: str) -> None:
    rows = [sep.join(r) for r in zip(*cols, strict=True)]
    path.write_text("\n".join(head + [sep.join(header)] + rows) + "\n", encoding="utf-8")


def main() -> None:
    # 1. comma, decimal point, time in seconds, plain labels
    fs, n, f = 1000.0, 200, 50.0
    t = np.arange(n) / fs
    write_rows(HERE / "csv_comma_seconds.csv", [], ["Time (s)", "Va", "Vb", "Vc", "Ia", "Ib", "Ic"],
               [fmt(t)] + [fmt(wave("v", p, t, f)) for p in "ABC"] + [fmt(wave("i", p, t, f)) for p in "ABC"], ",")
    # 2. semicolon, decimal comma, metadata lines, time in ms, kV and mA units, UL1/IL1 spellings
    write_rows(HERE / "csv_semicolon_decimal_comma.csv",
               ["Invented logger export", "Site;Demo pump station 7", "Operator: nobody", ""],
               ["Zeit [ms]", "UL1 [kV]", "UL2 [kV]", "UL3 [kV]", "IL1 [mA]", "IL2 [mA]", "IL3 [mA]"],
               [fmt(t * 1e3, ",")] + [fmt(wave("v", p, t, f) / 1e3, ",") for p in "ABC"]
               + [fmt(wave("i", p, t, f) * 1e3, ",") for p in "ABC"], ";")
    # 3. tab, ISO 8601 stamps with offset, line-to-line voltages, 60 Hz
    fs, n, f = 1200.0, 240, 60.0
    t = np.arange(n) / fs
    t0 = dt.datetime(2023, 7, 14, 16, 30, 0, tzinfo=dt.timezone(dt.timedelta(hours=-4)))
    stamps = [(t0 + dt.timedelta(microseconds=int(round(x * 1e6)))).isoformat(timespec="microseconds") for x in t]
    write_rows(HERE / "csv_tab_iso8601.tsv", [], ["Timestamp", "U12 (V)", "U23 (V)", "U31 (V)", "I1 (A)", "I2 (A)", "I3 (A)"],
               [stamps] + [fmt(wave("vll", p, t, f)) for p in "ABC"] + [fmt(wave("i", p, t, f)) for p in "ABC"], "\t")
    # 4. no time column (rate given on the command line), semicolon, decimal point
    fs, n, f = 1000.0, 200, 50.0
    t = np.arange(n) / fs
    write_rows(HERE / "csv_no_time.csv", [], ["V1 (V)", "V2 (V)", "V3 (V)", "I1 (A)", "I2 (A)", "I3 (A)"],
               [fmt(wave("v", p, t, f)) for p in "ABC"] + [fmt(wave("i", p, t, f)) for p in "ABC"], ";")
    # 5. generic HDF5: int16 counts, rate and start in attributes; mapping in hdf5_generic.toml
    with h5py.File(HERE / "hdf5_generic.h5", "w") as fh:
        g = fh.create_group("acq")
        g.attrs["fs"] = 1000.0
        g.attrs["t0"] = "2022-11-02T03:04:05.000000+00:00"
        for k, p in enumerate("ABC"):
            g.create_dataset(f"ch{k}", data=np.round(wave("v", p, t, 50.0) * 10).astype(np.int16))  # 0.1 V per count
            g.create_dataset(f"ch{k + 3}", data=np.round(wave("i", p, t, 50.0) / 14.0 * 5.0 * 1000).astype(np.int16))  # mA on a 14:5 CT secondary
        g.create_dataset("temperature", data=np.full(n, 21.5))
    (HERE / "hdf5_generic.toml").write_text(
        "# Mapping of hdf5_generic.h5 (invented layout)\n"
        '[hdf5]\nrate_attribute = "/acq:fs"\nstart_attribute = "/acq:t0"\n\n'
        '[capture]\nnominal_frequency_hz = 50\n\n'
        + "".join(f'[channels.V{p.lower()}]\ndataset = "/acq/ch{k}"\nunit = "V"\nratio = 0.1\n\n' for k, p in enumerate("ABC"))
        + "".join(f'[channels.I{p.lower()}]\ndataset = "/acq/ch{k + 3}"\nunit = "mA"\nratio = "14:5"\n\n' for k, p in enumerate("ABC")),
        encoding="utf-8",
    )
    # 6. native HDF5, written by the package itself
    from waveforms.capture import from_arrays, standard_channels
    from waveforms.io.hdf5_native import write_native

    ch = standard_channels("LN", True)
    x = np.vstack([wave("v", p, t, 50.0) for p in "ABC"] + [wave("i", p, t, 50.0) for p in "ABC"])
    cap = from_arrays(x, ch, 1000.0, dt.datetime(2021, 1, 2, 3, 4, 5, tzinfo=dt.timezone.utc), nominal_frequency_hz=50.0, nominal_voltage_v=400.0)
    write_native(cap, HERE / "native.h5", dtype="float32")


if __name__ == "__main__":
    main()
