"""Trend-log batch benchmark: 200 consecutive 10-minute per-second trend files of one site.

Generates the files in a temporary folder (invented site; a synthetic RMS trend of a
motor that runs, is stopped and restarted, and loses line B for 25 minutes across
three files), runs `waveforms.batch.run` over them with 2 workers (the default
fresh process per file, then ``--reuse-workers``), and prints wall time, files per
second, the incidents found and the load average before and after (other processes
on the same cores slow every figure).

    python benchmarks/bench_trends.py [--n 200] [--jobs 2]
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

FILE_S = 600
GAP_S = 2.0


def write_files(folder: Path, n: int, seed: int = 7) -> None:
    """``n`` consecutive per-second trend CSV files of one site (invented data)."""
    rng = np.random.default_rng(seed)
    t0 = dt.datetime(2026, 6, 1, 0, 0, tzinfo=dt.timezone(dt.timedelta(hours=2)))
    total = n * (FILE_S + GAP_S)
    open_from, open_to = 20.3 * (FILE_S + GAP_S), 22.8 * (FILE_S + GAP_S)  # line B open over files 21-23
    off_from, off_to = 60.5 * (FILE_S + GAP_S), 60.8 * (FILE_S + GAP_S)  # stopped, then restarted
    for k in range(n):
        start = k * (FILE_S + GAP_S)
        t = start + np.arange(FILE_S, dtype=float)
        v = 230.0 + rng.normal(0, 0.3, (3, FILE_S))
        i = 40.0 + rng.normal(0, 0.2, (3, FILE_S))
        op = (t >= open_from) & (t < open_to)
        i[1, op] = 0.05
        i[0, op] = i[2, op] = 69.0
        off = (t >= off_from) & (t < off_to)
        i[:, off] = 0.02
        restart = np.flatnonzero(np.diff(off.astype(int)) == -1) + 1
        i[:, restart] = 240.0
        stamp = [(t0 + dt.timedelta(seconds=float(x))).isoformat() for x in t]
        fr = pd.DataFrame({"Time": stamp, "V1 RMS": v[0], "V2 RMS": v[1], "V3 RMS": v[2],
                           "Irms L1": i[0], "Irms L2": i[1], "Irms L3": i[2], "P [kW]": 3 * 230 * i.mean(axis=0) * 0.85 / 1e3})
        fr.to_csv(folder / f"yard_pump_{k:04d}.csv", index=False, float_format="%.3f")
    del total


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--n", type=int, default=200)
    ap.add_argument("--jobs", type=int, default=2)
    args = ap.parse_args()
    from waveforms.batch import run

    with tempfile.TemporaryDirectory(prefix="bench-trends-") as tmp:
        src = Path(tmp) / "yard"
        src.mkdir()
        t = time.perf_counter()
        write_files(src, args.n)
        print(f"generated {args.n} files of {FILE_S} rows in {time.perf_counter() - t:.1f} s "
              f"({sum(p.stat().st_size for p in src.iterdir()) / 1e6:.1f} MB)")
        for fresh in (True, False):
            out = Path(tmp) / f"out-{int(fresh)}"
            la0 = os.getloadavg()
            t = time.perf_counter()
            res = run([src], out=out, jobs=args.jobs, fresh_workers=fresh)
            wall = time.perf_counter() - t
            la1 = os.getloadavg()
            inc = res.incidents
            print(f"batch {'fresh worker per file' if fresh else 'reused workers     '} jobs={args.jobs}: {wall:.1f} s, "
                  f"{args.n / wall:.1f} files/s, {res.n_failed} failed; load average {la0[0]:.1f} -> {la1[0]:.1f}")
            for r in inc.itertuples(index=False):
                print(f"    incident {r.kind} {r.line or '-'}: {r.first_onset} to {r.last_seen}, "
                      f"{r.files_spanned} files, {r.gap_not_covered_s:.0f} s not covered")


if __name__ == "__main__":
    main()
