"""Benchmark of `motor-waveforms analyze` (a script, not a test).

Generates a synthetic 10-minute, 10 kS/s, 6-channel capture (Va Vb Vc Ia Ib Ic,
50 Hz, a running motor with mixed-eccentricity sidebands; line C opens
downstream of the logger halfway through) in the native HDF5 layout under
benchmarks/_data/ (git-ignored; deleted at the end unless --keep), then, each
in its own subprocess so that peak RSS is measured separately (wall time
from opening the file, imports excluded):

(a) the floor: `waveforms.measure.measure` alone (the measurement engine);
(b) `waveforms.analysis.analyze` (measure + speed track + detectors + thermal +
    data-quality pass);
(c) (b) plus writing result.json, events.csv and report.html.

Prints wall time (fastest of ``--repeat`` runs) and peak RSS (largest) of each
and the ratios to the floor; record
them in benchmarks/README.md ("analyze" section).

Usage: python benchmarks/bench_analyze.py [--minutes 10] [--keep]
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
SLIP = 0.03
POLE_PAIRS = 2


class MotorSource:
    """Samples computed on demand (bounded memory): motor currents with eccentricity sidebands, line C opening at mid-capture."""

    def __init__(self, n_samples: int, seed: int = 0) -> None:
        self._n = n_samples
        self.seed = seed
        self.open_at = n_samples // 2 + 37  # an arbitrary point on the wave

    @property
    def n_samples(self) -> int:
        return self._n

    @property
    def n_channels(self) -> int:
        return 6

    def read(self, start, stop, channel_indices):
        t = np.arange(start, stop) / FS
        idx = np.arange(start, stop)
        w = 2 * np.pi * F0 * t
        rng = np.random.default_rng(self.seed + start)
        fr = F0 * (1 - SLIP) / POLE_PAIRS  # shaft rotation frequency [Hz]
        after = idx >= self.open_at
        out = np.empty((len(channel_indices), stop - start))
        for row, ci in enumerate(channel_indices):
            k = ci % 3
            sh = -2 * np.pi * k / 3
            if ci < 3:
                x = 230.0 * np.sqrt(2) * np.cos(w + sh)
                x = x + rng.normal(0.0, 0.2, x.size)
            else:
                amp = 20.0 * np.sqrt(2)
                i3 = amp * np.cos(w + sh - 0.55)
                # mixed eccentricity f1 +/- fr at -50 dB (Thomson & Fenger 2001, from memory)
                i3 += amp * 10 ** (-50 / 20) * (np.cos(2 * np.pi * (F0 - fr) * t + sh) + np.cos(2 * np.pi * (F0 + fr) * t + sh))
                # line C open: Ia = -Ib (Kirchhoff), about 1.8 x the running current
                ia_sp = 1.8 * amp * np.cos(w - 0.55 + np.pi / 6)
                single = {0: ia_sp, 1: -ia_sp, 2: np.zeros_like(t)}[k]
                x = np.where(after, single, i3) + rng.normal(0.0, 0.02, t.size)
            out[row] = x
        return out


def make_capture_file(minutes: float, path: Path) -> Path:
    from waveforms.capture import Capture, standard_channels
    from waveforms.io.hdf5_native import write_native
    from waveforms.motor.nameplate import Nameplate

    n = int(minutes * 60 * FS)
    plate = Nameplate.from_dict({"rated_power_kw": 11.0, "rated_voltage_v": 400, "rated_frequency_hz": 50, "fla_a": 21.0,
                                 "rated_speed_rpm": 1455, "poles": 4, "connection": "star", "service_factor": 1.0,
                                 "locked_rotor_current_a": 140.0, "name": "bench motor (invented)"})
    cap = Capture(
        channels=standard_channels(), source=MotorSource(n), sample_rate_hz=FS,
        start_time=_dt.datetime(2030, 1, 1, tzinfo=_dt.timezone.utc), nominal_frequency_hz=F0,
        nominal_voltage_v=400.0, wiring="4-wire", nameplate=plate,
    )
    path.parent.mkdir(parents=True, exist_ok=True)
    write_native(cap, path, chunk_samples=1 << 19)
    return path


_CHILD = """
import json, resource, sys, tempfile, time
from waveforms.io import read_capture
from waveforms.measure import measure
from waveforms.analysis import analyze
from waveforms.report import write_report
import waveforms.report.plots, waveforms.report.html, waveforms.speed, waveforms.quality  # imports outside the timing
mode, path, tmp = sys.argv[1], sys.argv[2], sys.argv[3]
t0 = time.perf_counter()
cap = read_capture(path)
out = {}
if mode == "measure":
    m = measure(cap)
    out["cycles"] = len(m.cycles)
else:
    res = analyze(cap)
    out["events"] = [(e.kind, e.phase, round(e.start_s, 5)) for e in res.events]
    out["timings_s"] = res.timings_s
    out["speed_estimates"] = 0 if res.speed is None else int((res.speed["status"] == "estimate").sum())
    if mode == "report":
        with tempfile.TemporaryDirectory(dir=tmp) as d:
            t1 = time.perf_counter()
            write_report(res, d)
            out["report_s"] = time.perf_counter() - t1
out["wall_s"] = time.perf_counter() - t0
out["rss_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
print(json.dumps(out))
"""


def run_child(mode: str, path: Path) -> dict:
    out = subprocess.run([sys.executable, "-c", _CHILD, mode, str(path), str(DATA)], check=True,
                         capture_output=True, text=True, cwd=ROOT.parent)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--keep", action="store_true", help="keep the generated capture")
    ap.add_argument("--repeat", type=int, default=2, help="runs of each step; the fastest is shown, the largest RSS")
    args = ap.parse_args()
    sys.path.insert(0, str(ROOT.parent))
    path = DATA / f"bench_analyze_{args.minutes:g}min.h5"
    try:
        t0 = time.perf_counter()
        if not path.exists():
            make_capture_file(args.minutes, path)
        print(f"generated {path.name} in {time.perf_counter() - t0:.1f} s ({path.stat().st_size / 1e6:.0f} MB), "
              f"open phase at {MotorSource(int(args.minutes * 60 * FS)).open_at / FS:.4f} s")
        def best(mode: str) -> dict:
            runs = [run_child(mode, path) for _ in range(args.repeat)]
            out = min(runs, key=lambda r: r["wall_s"])
            out["rss_mb"] = max(r["rss_mb"] for r in runs)
            return out

        a = best("measure")
        b = best("analyze")
        c = best("report")
        print(f"(a) measure (floor)             : {a['wall_s']:7.2f} s, peak RSS {a['rss_mb']:6.0f} MB ({a['cycles']} cycles)")
        print(f"(b) analyze                     : {b['wall_s']:7.2f} s, peak RSS {b['rss_mb']:6.0f} MB   steps {json.dumps({k: round(v, 2) for k, v in b['timings_s'].items()})}")
        print(f"(c) analyze + result/csv/html   : {c['wall_s']:7.2f} s, peak RSS {c['rss_mb']:6.0f} MB   (report {c['report_s']:.2f} s)")
        print(f"ratio time (b)/(a) = {b['wall_s'] / a['wall_s']:.2f}, (c)/(a) = {c['wall_s'] / a['wall_s']:.2f}")
        print(f"ratio RSS  (b)/(a) = {b['rss_mb'] / a['rss_mb']:.2f}, (c)/(a) = {c['rss_mb'] / a['rss_mb']:.2f}")
        print(f"events found: {b['events']}; speed windows with an estimate: {b['speed_estimates']}")
        print(json.dumps({"measure_s": a["wall_s"], "analyze_s": b["wall_s"], "report_total_s": c["wall_s"],
                          "measure_rss_mb": a["rss_mb"], "analyze_rss_mb": b["rss_mb"], "report_rss_mb": c["rss_mb"]}))
    finally:
        if not args.keep:
            path.unlink(missing_ok=True)
            if DATA.exists() and not any(DATA.iterdir()):
                shutil.rmtree(DATA)


if __name__ == "__main__":
    main()
