"""Benchmark of the measurement engine (a script, not a test).

Generates a synthetic 6-channel, 10 kS/s capture in the native HDF5 layout under
benchmarks/_data/ (git-ignored; deleted at the end unless --keep), then times
in one run:

(a) the floor: read every channel's samples and one numpy.fft.rfft pass over each;
(b) a plain notebook-style equivalent: scipy.signal.stft (one-cycle segments
    refreshed every half cycle for the fundamental, 10/12-cycle segments for
    harmonics) and pandas rolling one-cycle RMS, per channel;
(c) this engine, `waveforms.measure.measure`.

and the peak RSS of the streaming ``measure`` path (`write_measurements`, what
the CLI runs) for the short and the long capture, each in its own subprocess.
Prints the ratios; record them in benchmarks/README.md.

Usage: python benchmarks/bench_measure.py [--minutes 10] [--long-minutes 60] [--keep]
"""

from __future__ import annotations

import argparse
import datetime as _dt
import json
import shutil
import subprocess
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent
DATA = ROOT / "_data"
FS = 10_000.0
F0 = 50.0


class SyntheticSource:
    """Samples computed on demand (bounded memory): a slightly unbalanced 3-phase motor supply."""

    def __init__(self, n_samples: int, seed: int = 0) -> None:
        self._n = n_samples
        self.seed = seed

    @property
    def n_samples(self) -> int:
        return self._n

    @property
    def n_channels(self) -> int:
        return 6

    def read(self, start, stop, channel_indices):
        t = np.arange(start, stop) / FS
        # slow frequency wander +/-0.05 Hz, integrated into the phase
        phase = 2 * np.pi * F0 * t + 0.05 * 2 * np.pi * np.sin(2 * np.pi * t / 60.0) * 60.0 / (2 * np.pi)
        rng = np.random.default_rng(self.seed + start)
        out = np.empty((len(channel_indices), stop - start))
        for row, ci in enumerate(channel_indices):
            k = ci % 3
            shift = -2 * np.pi * k / 3
            if ci < 3:
                amp = 230.0 * np.sqrt(2) * (1.0 + 0.01 * (k - 1))
                x = amp * (np.cos(phase + shift) + 0.03 * np.cos(5 * (phase + shift)))
            else:
                amp = 20.0 * np.sqrt(2)
                x = amp * (np.cos(phase + shift - 0.6) + 0.05 * np.cos(5 * (phase + shift) - 0.3))
            out[row] = x + rng.normal(0.0, 1e-3 * amp, x.size)
        return out


def make_capture_file(minutes: float, path: Path) -> Path:
    from waveforms.capture import Capture, standard_channels
    from waveforms.io.hdf5_native import write_native

    n = int(minutes * 60 * FS)
    cap = Capture(
        channels=standard_channels(), source=SyntheticSource(n), sample_rate_hz=FS,
        start_time=_dt.datetime(2030, 1, 1, tzinfo=_dt.timezone.utc), nominal_frequency_hz=F0,
        nominal_voltage_v=400.0, wiring="3-wire",
    )
    path.parent.mkdir(parents=True, exist_ok=True)
    write_native(cap, path, chunk_samples=1 << 19)
    return path


def floor_pass(path: Path) -> float:
    from waveforms.io import read_capture

    t0 = time.perf_counter()
    cap = read_capture(path)
    for name in cap.channel_names:
        x = cap.read(channels=[name])[0]
        np.fft.rfft(x)
    return time.perf_counter() - t0


def notebook_pass(path: Path) -> float:
    import pandas as pd
    from scipy import signal

    from waveforms.io import read_capture

    t0 = time.perf_counter()
    cap = read_capture(path)
    n1 = int(FS / F0)
    for name in cap.channel_names:
        x = cap.read(channels=[name])[0]
        _, _, z1 = signal.stft(x, fs=FS, window="boxcar", nperseg=n1, noverlap=n1 // 2, boundary=None, padded=False)
        fund = np.abs(z1[1]) * 2 / np.sqrt(2)  # fundamental per half-cycle step
        _, _, z10 = signal.stft(x, fs=FS, window="boxcar", nperseg=10 * n1, noverlap=0, boundary=None, padded=False)
        harm = np.abs(z10[10:510:10])
        rms = np.sqrt(pd.Series(x * x).rolling(n1).mean())
        del fund, harm, rms
    return time.perf_counter() - t0


def engine_pass(path: Path) -> tuple[float, int]:
    from waveforms.io import read_capture
    from waveforms.measure import measure

    t0 = time.perf_counter()
    m = measure(read_capture(path))
    return time.perf_counter() - t0, len(m.cycles)


# Peak RSS is read from /proc/self/status (VmHWM, per address space, so it starts afresh at exec);
# getrusage's ru_maxrss of a child can carry the parent's size from before the exec.
_RSS_CHILD = """
import sys, tempfile, time
from waveforms.io import read_capture
from waveforms.measure.output import write_measurements
t0 = time.perf_counter()
if sys.argv[3] == "write":
    with tempfile.TemporaryDirectory(dir=sys.argv[2]) as d:
        res = write_measurements(read_capture(sys.argv[1]), d, formats=("parquet",))
else:  # the engine alone, blocks discarded
    from waveforms.measure.engine import iter_blocks
    res = {"rows": {"cycles": sum(len(b[0]["t_s"]) for b in iter_blocks(read_capture(sys.argv[1])))}}
hwm = [l for l in open("/proc/self/status") if l.startswith("VmHWM:")][0].split()[1]
print(hwm, time.perf_counter() - t0, res["rows"]["cycles"])
"""


def rss_of_streaming(path: Path, mode: str = "write") -> tuple[float, float, int]:
    out = subprocess.run([sys.executable, "-c", _RSS_CHILD, str(path), str(DATA), mode], check=True,
                         capture_output=True, text=True, cwd=ROOT.parent)
    kb, secs, rows = out.stdout.split()
    return int(kb) / 1024.0, float(secs), int(rows)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--long-minutes", type=float, default=60.0)
    ap.add_argument("--keep", action="store_true", help="keep the generated captures")
    args = ap.parse_args()
    sys.path.insert(0, str(ROOT.parent))
    short = DATA / f"bench_{args.minutes:g}min.h5"
    long_ = DATA / f"bench_{args.long_minutes:g}min.h5"
    try:
        t0 = time.perf_counter()
        if not short.exists():
            make_capture_file(args.minutes, short)
        if not long_.exists():
            make_capture_file(args.long_minutes, long_)
        print(f"generated captures in {time.perf_counter() - t0:.1f} s "
              f"({short.stat().st_size / 1e6:.0f} MB, {long_.stat().st_size / 1e6:.0f} MB)")
        # interleaved repeats, best of three each: the machine is shared, so the minimum is the
        # least-disturbed figure
        runs_a, runs_b, runs_c = [], [], []
        for _ in range(3):
            runs_a.append(floor_pass(short))
            runs_b.append(notebook_pass(short))
            c, rows = engine_pass(short)
            runs_c.append(c)
        a, b, c = min(runs_a), min(runs_b), min(runs_c)
        print("runs (a) " + " ".join(f"{x:.2f}" for x in runs_a) + "  (b) " + " ".join(f"{x:.2f}" for x in runs_b)
              + "  (c) " + " ".join(f"{x:.2f}" for x in runs_c))
        print(f"(a) read + rfft per channel     : {a:7.2f} s")
        print(f"(b) stft + pandas rolling RMS   : {b:7.2f} s")
        print(f"(c) waveforms.measure.measure   : {c:7.2f} s  ({rows} cycles)")
        print(f"ratio (c)/(a) = {c / a:.2f}   (target <= 3)")
        print(f"ratio (b)/(c) = {b / c:.2f}   (target >= 5)")
        rs, ts, ns = rss_of_streaming(short)
        rl, tl, nl = rss_of_streaming(long_)
        print(f"streaming measure, {args.minutes:g} min : peak RSS {rs:6.0f} MB, {ts:6.1f} s, {ns} cycles")
        print(f"streaming measure, {args.long_minutes:g} min : peak RSS {rl:6.0f} MB, {tl:6.1f} s, {nl} cycles")
        print(f"ratio RSS long/short = {rl / rs:.2f}   (target <= 1.2)")
        es, _, _ = rss_of_streaming(short, "iter")
        el, _, _ = rss_of_streaming(long_, "iter")
        print(f"engine blocks only (no writing): peak RSS {es:.0f} MB / {el:.0f} MB, ratio {el / es:.2f}")
        print(json.dumps({"a_s": a, "b_s": b, "c_s": c, "c_over_a": c / a, "b_over_c": b / c,
                          "rss_short_mb": rs, "rss_long_mb": rl, "rss_ratio": rl / rs,
                          "engine_rss_short_mb": es, "engine_rss_long_mb": el}))
    finally:
        if not args.keep:
            for p in (short, long_):
                p.unlink(missing_ok=True)
            if DATA.exists() and not any(DATA.iterdir()):
                shutil.rmtree(DATA)


if __name__ == "__main__":
    main()
