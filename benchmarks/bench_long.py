"""Long captures end to end (a script, not a test): time and peak memory against two reference passes.

Generates, under benchmarks/_data/ (git-ignored; deleted at the end unless --keep), a synthetic
capture of each length asked for (default 10 and 60 minutes), 10 kS/s, 6 channels (Va Vb Vc Ia Ib
Ic, 50 Hz, a running motor with eccentricity sidebands, line C opening downstream of the logger at
mid-capture; the same `MotorSource` as bench_analyze.py), once as the native HDF5 and once as CSV
with ISO 8601 time stamps.  Every step then runs as its own process under ``/usr/bin/time -v``
(whole process timed, imports included; peak RSS from the kernel's accounting):

floor     read every sample of the HDF5 file with h5py, chunk by chunk, plus one rfft pass;
notebook  the pass an analyst would write in a notebook: h5py read, pandas rolling one-cycle RMS
          and scipy.signal.stft with one-cycle segments, per channel;
read_csv  pandas.read_csv of the CSV file (the CSV read floor);
analyze   ``motor-waveforms analyze FILE --out DIR --no-html`` (with ``--threads N`` when the
          command has that option; ``--threads 1`` and ``2`` are both run).

Prints each figure and the ratios issue 10 sets targets for; record them in benchmarks/README.md
("Long captures").  ``pandas.read_csv`` of the 60-minute CSV needs several GB; ``analyze``
streams it (io.csv_stream.open_capture).

Usage: python benchmarks/bench_long.py [--minutes 10,60] [--formats h5,csv] [--keep]
"""

from __future__ import annotations

import argparse
import json
import os
import re
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent
DATA = ROOT / "_data"
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT.parent))

from bench_analyze import FS, MotorSource, make_capture_file  # noqa: E402

_FLOOR = r"""
import sys, h5py, numpy as np
n = 0
with h5py.File(sys.argv[1], "r") as fh:
    dsets = []
    fh.visititems(lambda name, obj: dsets.append(obj) if isinstance(obj, h5py.Dataset) and obj.ndim >= 1 and obj.dtype.kind == "f" else None)
    for d in dsets:
        step = (d.chunks[0] if d.chunks else 1 << 18) * 8
        for i in range(0, d.shape[0], step):
            x = d[i:i + step]
            np.fft.rfft(x, axis=0)
            n += x.size
print(n)
"""

_NOTEBOOK = r"""
import sys, h5py, numpy as np, pandas as pd
from scipy import signal
fs, f0 = float(sys.argv[2]), 50.0
per = int(round(fs / f0))
with h5py.File(sys.argv[1], "r") as fh:
    dsets = []
    fh.visititems(lambda name, obj: dsets.append(obj) if isinstance(obj, h5py.Dataset) and obj.ndim == 1 and obj.dtype.kind == "f" and obj.shape[0] > per else None)
    out = {}
    for d in dsets:
        x = d[...]
        rms = np.sqrt(pd.Series(x * x).rolling(per).mean().to_numpy()[per - 1::per])
        f, t, z = signal.stft(x, fs=fs, nperseg=per, noverlap=0, boundary=None, padded=False)
        out[d.name] = (float(np.nanmedian(rms)), float(np.abs(z[1]).mean()))
print(len(out))
"""

_READ_CSV = r"""
import sys, pandas as pd
df = pd.read_csv(sys.argv[1], comment="#")
print(len(df))
"""


def write_iso_csv(h5_path: Path, csv_path: Path, block: int = 1 << 19) -> Path:
    """CSV with an ISO 8601 time column (microseconds, UTC offset) from the native file, block by block."""
    import pyarrow as pa
    import pyarrow.csv as pacsv

    from waveforms.io import read_capture

    cap = read_capture(h5_path)
    names = [c.name for c in cap.channels]
    t0 = np.datetime64(cap.start_time.replace(tzinfo=None), "us")
    tmp = csv_path.with_suffix(".part")
    with pa.OSFile(str(tmp), "wb") as sink:
        writer = None
        for ch in cap.iter_chunks(block):
            x = ch.owned
            idx = np.arange(ch.owned_start_index, ch.owned_start_index + x.shape[1])
            stamps = np.datetime_as_string(t0 + (idx * (1e6 / FS)).round().astype("timedelta64[us]"), unit="us")
            stamps = np.char.add(stamps, "+00:00")
            cols = {"time": pa.array(stamps)} | {n: pa.array(np.round(x[i], 4)) for i, n in enumerate(names)}
            table = pa.table(cols)
            if writer is None:
                writer = pacsv.CSVWriter(sink, table.schema, write_options=pacsv.WriteOptions(quoting_style="none"))
            writer.write_table(table)
        writer.close()
    tmp.replace(csv_path)
    return csv_path


def timed(cmd: list[str]) -> dict:
    """Run ``cmd`` under /usr/bin/time -v: wall seconds (perf_counter around the process) and peak RSS [MB]."""
    t0 = time.perf_counter()
    r = subprocess.run(["/usr/bin/time", "-v", *cmd], capture_output=True, text=True, cwd=ROOT.parent)
    wall = time.perf_counter() - t0
    if r.returncode != 0:
        first = next((ln for ln in r.stderr.splitlines() if ln.strip()), "")
        print(f"  step failed (exit {r.returncode}): {' '.join(cmd[1:4])}...: {first[:300]}", flush=True)
        return {"wall_s": float("nan"), "rss_mb": float("nan"), "failed": first[:300]}
    rss = int(re.search(r"Maximum resident set size \(kbytes\): (\d+)", r.stderr).group(1)) / 1024.0
    return {"wall_s": wall, "rss_mb": rss}


def best(cmd: list[str], repeat: int) -> dict:
    runs = [timed(cmd) for _ in range(repeat)]
    return {"wall_s": min(r["wall_s"] for r in runs), "rss_mb": max(r["rss_mb"] for r in runs)}


def has_threads_option() -> bool:
    r = subprocess.run([sys.executable, "-m", "waveforms", "analyze", "--help"], capture_output=True, text=True, cwd=ROOT.parent)
    return "--threads" in r.stdout


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", default="10,60", help="comma-separated capture lengths [min]")
    ap.add_argument("--formats", default="h5,csv", help="comma-separated: h5, csv")
    ap.add_argument("--repeat", type=int, default=1, help="runs of each step (fastest time, largest RSS shown)")
    ap.add_argument("--keep", action="store_true", help="keep the generated captures")
    args = ap.parse_args()
    minutes = [float(m) for m in args.minutes.split(",")]
    formats = args.formats.split(",")
    threads = has_threads_option()
    py = sys.executable
    results: dict[str, dict] = {}
    made: list[Path] = []
    try:
        for m in minutes:
            h5 = DATA / f"long_{m:g}min.h5"
            t0 = time.perf_counter()
            if not h5.exists():
                made.append(make_capture_file(m, h5))
            print(f"{h5.name}: {h5.stat().st_size / 1e6:.0f} MB, {int(m * 60 * FS):,} samples per channel "
                  f"(made in {time.perf_counter() - t0:.0f} s)", flush=True)
            with tempfile.TemporaryDirectory(dir=DATA) as out:
                r = results.setdefault(f"{m:g}", {})
                r["floor"] = best([py, "-c", _FLOOR, str(h5)], args.repeat)
                r["notebook"] = best([py, "-c", _NOTEBOOK, str(h5), str(FS)], args.repeat)
                if "h5" in formats:
                    base = [py, "-m", "waveforms", "analyze", str(h5), "--out", out + "/h5", "--no-html"]
                    if threads:  # the default is all cores: on this 2-core machine that is --threads 2
                        r["analyze_h5_t1"] = best([*base, "--threads", "1"], args.repeat)
                        r["analyze_h5_t2"] = best([*base, "--threads", "2"], args.repeat)
                        r["analyze_h5"] = r["analyze_h5_t2"] if (os.cpu_count() or 1) == 2 else best(base, args.repeat)
                    else:
                        r["analyze_h5"] = best(base, args.repeat)
                if "csv" in formats:
                    csv = DATA / f"long_{m:g}min.csv"
                    if not csv.exists():
                        t0 = time.perf_counter()
                        made.append(write_iso_csv(h5, csv))
                        print(f"{csv.name}: {csv.stat().st_size / 1e6:.0f} MB (written in {time.perf_counter() - t0:.0f} s)", flush=True)
                    r["read_csv"] = best([py, "-c", _READ_CSV, str(csv)], args.repeat)
                    r["analyze_csv"] = best([py, "-m", "waveforms", "analyze", str(csv), "--out", out + "/csv", "--no-html"], args.repeat)
            for step, v in r.items():
                print(f"  {m:g} min  {step:14s} {v['wall_s']:8.2f} s  {v['rss_mb']:8.0f} MB", flush=True)

        print("\nratios (issue 10 targets in brackets):")
        for key, r in results.items():
            if "analyze_h5" in r:
                print(f"  {key} min: analyze h5 / floor = {r['analyze_h5']['wall_s'] / r['floor']['wall_s']:.2f} [<= 2.5]; "
                      f"analyze h5 / notebook = {r['analyze_h5']['wall_s'] / r['notebook']['wall_s']:.2f} [< 1]")
            if "analyze_h5_t2" in r:
                print(f"  {key} min: --threads 2 / --threads 1 = {r['analyze_h5_t2']['wall_s'] / r['analyze_h5_t1']['wall_s']:.2f} [<= 0.65]")
            if "analyze_csv" in r and "analyze_h5" in r:
                ref = r["read_csv"]["wall_s"] + r["analyze_h5"]["wall_s"]
                print(f"  {key} min: analyze csv / (read_csv + analyze h5) = {r['analyze_csv']['wall_s'] / ref:.2f} [<= 1.5]")
        if len(results) >= 2:
            a, b = list(results)[0], list(results)[-1]
            for step in ("analyze_h5", "analyze_csv"):
                if step in results[a] and step in results[b]:
                    print(f"  peak RSS {step} {b} min / {a} min = {results[b][step]['rss_mb'] / results[a][step]['rss_mb']:.2f} [<= 1.3]")
        print(json.dumps(results))
    finally:
        if not args.keep:
            for p in made:
                p.unlink(missing_ok=True)
            if DATA.exists() and not any(DATA.iterdir()):
                shutil.rmtree(DATA)


if __name__ == "__main__":
    main()
