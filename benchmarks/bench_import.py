"""Import throughput and memory: our importers against bare pandas / h5py on the same files.

Run from the repository root::

    python benchmarks/bench_import.py            # 100 MB CSV, 1 GB native HDF5
    python benchmarks/bench_import.py --csv-mb 20 --h5-gb 0.2   # a quick look

Generates the files under benchmarks/_data/ (git-ignored) and deletes them at
the end (``--keep`` to keep them).  Prints measured times and ratios; it is
not a test and asserts nothing.  Each timing is the best of ``--repeat`` runs,
interleaved with the bare-library runs it is compared with (the machine is shared).
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import shutil
import subprocess
import sys
import time
from pathlib import Path

import h5py
import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from waveforms import read_capture  # noqa: E402
from waveforms.capture import standard_channels  # noqa: E402
from waveforms.io.hdf5_native import native_header, write_native_blocks  # noqa: E402
from waveforms.capture import from_arrays  # noqa: E402
from waveforms.hashing import sha256_file  # noqa: E402

DATA = ROOT / "benchmarks" / "_data"
RATE = 10_000.0
CHANNELS = standard_channels("LN", True, neutral_current=True)  # 7 channels


def _signals(start: int, n: int, rng: np.random.Generator) -> np.ndarray:
    t = (start + np.arange(n)) / RATE
    rows = [325 * np.sin(2 * np.pi * 50 * t - k * 2 * np.pi / 3) for k in range(3)]
    rows += [40 * np.sin(2 * np.pi * 50 * t - k * 2 * np.pi / 3 - 0.6) for k in range(3)]
    rows.append(2 * np.sin(2 * np.pi * 150 * t))
    x = np.vstack(rows)
    return x + rng.normal(0, 0.05 * np.array([325, 325, 325, 40, 40, 40, 2])[:, None], x.shape)


def make_csv(path: Path, target_mb: float) -> int:
    """CSV like a logger export: metadata line, time column, 7 channels, 6 decimals."""
    rng = np.random.default_rng(0)
    header = "time_s," + ",".join(f"{c.name} ({c.unit})" for c in CHANNELS)
    block = 100_000
    n = 0
    with open(path, "w", encoding="utf-8", newline="") as fh:
        fh.write("# start_time: 2025-01-01T00:00:00.000000+00:00\n" + header + "\n")
        while fh.tell() < target_mb * 1e6:
            x = _signals(n, block, rng)
            df = pd.DataFrame(x.T, columns=[c.name for c in CHANNELS])
            df.insert(0, "time_s", (n + np.arange(block)) / RATE)
            df.to_csv(fh, header=False, index=False, float_format="%.6f", lineterminator="\n")
            n += block
    return n


def make_h5(path: Path, target_gb: float) -> int:
    """Native HDF5 with ``target_gb`` GB of float64 samples, written block by block."""
    rng = np.random.default_rng(1)
    n_total = int(target_gb * 1e9 / (8 * len(CHANNELS)))
    block = 1 << 20
    meta_cap = from_arrays(np.zeros((len(CHANNELS), 1)), CHANNELS, RATE,
                           dt.datetime(2025, 1, 1, tzinfo=dt.timezone.utc), nominal_frequency_hz=50.0, nominal_voltage_v=400.0)
    meta = native_header(meta_cap)
    meta["n_samples"] = n_total

    def blocks():
        pos = 0
        while pos < n_total:
            m = min(block, n_total - pos)
            yield _signals(pos, m, rng)
            pos += m

    write_native_blocks(path, CHANNELS, meta, blocks(), n_total)
    return n_total


def best_interleaved(fns: dict, repeat: int) -> dict[str, float]:
    """Best wall time of each function, the runs interleaved (a, b, c, a, b, c...) so that a
    change of load on the shared machine hits every contender alike."""
    out = {k: float("inf") for k in fns}
    for _ in range(repeat):
        for k, fn in fns.items():
            t0 = time.perf_counter()
            fn()
            out[k] = min(out[k], time.perf_counter() - t0)
    return out


def max_rss_mb(args: list[str]) -> tuple[float, float]:
    """(max RSS [MB], wall time [s]) of a child process (Linux ru_maxrss is in KiB)."""
    t0 = time.perf_counter()
    # a fresh Python per measurement: RUSAGE_CHILDREN reports the largest child so far
    code = (
        "import resource, subprocess, sys; "
        "p = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL); "
        "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)"
    )
    out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True, check=True, cwd=ROOT)
    return int(out.stdout.strip()) / 1024.0, time.perf_counter() - t0


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--csv-mb", type=float, default=100.0)
    ap.add_argument("--h5-gb", type=float, default=1.0)
    ap.add_argument("--repeat", type=int, default=2)
    ap.add_argument("--scale-mb", type=float, default=300.0, help="larger CSV for the memory-scaling figure (0: skip)")
    ap.add_argument("--keep", action="store_true", help="keep the generated files")
    a = ap.parse_args()
    DATA.mkdir(parents=True, exist_ok=True)
    csv_path = DATA / "bench.csv"
    h5_path = DATA / "bench.h5"
    py = [sys.executable, "-c", "import sys; sys.argv[0] = 'waveforms'; from waveforms.cli import main; main()"]
    try:
        print(f"machine: {os.cpu_count()} cores, Python {sys.version.split()[0]}, pandas {pd.__version__}, h5py {h5py.__version__}")
        # -- CSV ------------------------------------------------------------------
        t0 = time.perf_counter()
        n_csv = make_csv(csv_path, a.csv_mb)
        size_mb = csv_path.stat().st_size / 1e6
        print(f"\nCSV: {size_mb:.1f} MB, {n_csv} rows x {1 + len(CHANNELS)} columns (written in {time.perf_counter() - t0:.1f} s)")
        from waveforms.io.registry import importers
        from waveforms import timebase

        importers()  # import the importers (and scipy.signal) before timing anything
        timebase.infer_nominal_frequency(np.sin(np.arange(4000) / 10.0), 4000.0)
        tt = best_interleaved({
            "pd": lambda: pd.read_csv(csv_path, skiprows=1),
            "pd_arrow": lambda: pd.read_csv(csv_path, skiprows=1, engine="pyarrow"),
            "ours": lambda: read_capture(csv_path).read(),
            "hash": lambda: sha256_file(csv_path),
        }, a.repeat)
        t_pd, t_pd_arrow, t_ours = tt["pd"], tt["pd_arrow"], tt["ours"]
        print(f"  bare pandas.read_csv (C parser)      {t_pd:7.2f} s  {size_mb / t_pd:6.1f} MB/s")
        print(f"  bare pandas.read_csv (pyarrow)       {t_pd_arrow:7.2f} s  {size_mb / t_pd_arrow:6.1f} MB/s")
        print(f"  waveforms read_capture + read()      {t_ours:7.2f} s  {size_mb / t_ours:6.1f} MB/s")
        print(f"  (of which SHA-256 of the file, alone {tt['hash']:7.2f} s, run in a thread beside the parser)")
        print(f"  ratio ours / bare pandas C parser    {t_ours / t_pd:7.2f}")
        print(f"  ratio ours / bare pandas pyarrow     {t_ours / t_pd_arrow:7.2f}")
        rss_csv, _ = max_rss_mb(py + ["inspect", str(csv_path)])
        print(f"  inspect peak RSS                     {rss_csv:7.0f} MB (the CSV importer holds the capture in memory)")
        conv = DATA / "bench_from_csv.h5"
        rss_conv, t_conv = max_rss_mb(py + ["convert", str(csv_path), str(conv)])
        print(f"  convert CSV -> .h5 (streamed)        {t_conv:7.2f} s  peak RSS {rss_conv:.0f} MB (incl. start-up and gzip writing)")
        conv.unlink()
        csv_path.unlink()
        if a.scale_mb > 0:  # memory against file size: streamed convert vs the in-memory importer
            big = DATA / "bench_big.csv"
            make_csv(big, a.scale_mb)
            rss_big_conv, _ = max_rss_mb(py + ["convert", str(big), str(conv)])
            rss_big_insp, _ = max_rss_mb(py + ["inspect", str(big)])
            print(f"  {big.stat().st_size / 1e6:.0f} MB CSV: convert (streamed) peak RSS {rss_big_conv:.0f} MB, "
                  f"inspect (in memory) peak RSS {rss_big_insp:.0f} MB")
            conv.unlink()
            big.unlink()
        # -- native HDF5 ------------------------------------------------------------
        t0 = time.perf_counter()
        n_h5 = make_h5(h5_path, a.h5_gb)
        raw_gb = n_h5 * 8 * len(CHANNELS) / 1e9
        file_gb = h5_path.stat().st_size / 1e9
        print(f"\nnative HDF5: {raw_gb:.2f} GB of float64 samples ({n_h5} x {len(CHANNELS)}), file {file_gb:.2f} GB gzip-1 "
              f"(written in {time.perf_counter() - t0:.1f} s)")

        def bare_h5() -> None:
            with h5py.File(h5_path, "r") as fh:
                for name in fh["channels"]:
                    fh["channels"][name][...]

        def ours_chunks() -> None:
            cap = read_capture(h5_path)
            for _ in cap.iter_chunks(1 << 20):
                pass

        def ours_whole() -> None:
            read_capture(h5_path).read()

        tt = best_interleaved({"bare": bare_h5, "chunks": ours_chunks, "whole": ours_whole, "hash": lambda: sha256_file(h5_path)}, a.repeat)
        t_h5, t_chunks, t_whole = tt["bare"], tt["chunks"], tt["whole"]
        print(f"  bare h5py read of every dataset      {t_h5:7.2f} s  {raw_gb / t_h5 * 1e3:6.0f} MB/s")
        print(f"  waveforms iter_chunks(2^20)          {t_chunks:7.2f} s  {raw_gb / t_chunks * 1e3:6.0f} MB/s   ratio {t_chunks / t_h5:5.2f}")
        print(f"  waveforms read() whole               {t_whole:7.2f} s  {raw_gb / t_whole * 1e3:6.0f} MB/s   ratio {t_whole / t_h5:5.2f}")
        print(f"  (both include the SHA-256 of the file at open, alone {tt['hash']:.2f} s; without it: ratios "
              f"{(t_chunks - tt['hash']) / t_h5:.2f} / {(t_whole - tt['hash']) / t_h5:.2f})")
        rss_base, _ = max_rss_mb([sys.executable, "-c", "import waveforms.cli"])
        rss_inspect, t_inspect = max_rss_mb(py + ["inspect", str(h5_path)])
        print(f"  inspect peak RSS                     {rss_inspect:7.0f} MB  (Python + libraries alone: {rss_base:.0f} MB; "
              f"file holds {raw_gb * 1e3:.0f} MB of samples; {t_inspect:.1f} s)")
    finally:
        if not a.keep:
            for p in (csv_path, h5_path, DATA / "bench_from_csv.h5", DATA / "bench_big.csv"):
                if p.exists():
                    p.unlink()
            if DATA.exists() and not any(DATA.iterdir()):
                shutil.rmtree(DATA, ignore_errors=True)


if __name__ == "__main__":
    main()
