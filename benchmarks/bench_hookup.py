"""The hook-up check's share of `analyze` on a long capture (a script, not a test).

Makes the 10-minute synthetic capture of bench_long.py / bench_analyze.py (native HDF5, 10 kS/s,
6 channels, line C opening downstream of the logger at mid-capture) under benchmarks/_data/
(deleted at the end unless --keep), then runs the default recipe on it in this process, with the
report stage writing result.json only, and prints the hook-up stage's wall time, the whole run's and
their ratio (issue 17 target: under 5 %), plus the hook-up check alone on the same file, repeated.

Usage: python benchmarks/bench_hookup.py [--minutes 10] [--repeat 5] [--keep]
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent
DATA = ROOT / "_data"
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT.parent))

from bench_analyze import make_capture_file  # noqa: E402


def main() -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--minutes", type=float, default=10.0)
    ap.add_argument("--repeat", type=int, default=5)
    ap.add_argument("--keep", action="store_true")
    a = ap.parse_args()
    from waveforms.hookup import check_hookup
    from waveforms.io import read_capture
    from waveforms.recipe import load_recipe, run_recipe

    path = DATA / f"hookup_{a.minutes:g}min.h5"
    if not path.exists():
        t0 = time.perf_counter()
        make_capture_file(a.minutes, path)
        print(f"made {path} in {time.perf_counter() - t0:.1f} s")
    try:
        alone = []
        for _ in range(a.repeat):
            cap = read_capture(path)
            t0 = time.perf_counter()
            _, res = check_hookup(cap, cap.nameplate)
            alone.append(time.perf_counter() - t0)
        print(f"hook-up check alone: min {min(alone):.3f} s, median {sorted(alone)[len(alone) // 2]:.3f} s "
              f"({res.windows['read']} windows of {res.windows['cycles_each']} cycles; findings: {[f.what for f in res.findings]})")
        rec = load_recipe("investigate").with_params("report", {"html": False, "cycles": "none"})
        with tempfile.TemporaryDirectory() as tmp:
            t0 = time.perf_counter()
            state = run_recipe(rec, path, out_dir=tmp)
            total = time.perf_counter() - t0
        hk = state.timings_s.get("hookup", float("nan"))
        print("stage times [s]: " + ", ".join(f"{k} {v:.2f}" for k, v in state.timings_s.items()))
        print(f"analyze total {total:.2f} s; hook-up stage {hk:.3f} s = {100 * hk / total:.2f} % of analyze (target < 5 %)")
    finally:
        if not a.keep:
            shutil.rmtree(DATA, ignore_errors=True) if path.parent == DATA and not any(
                p for p in DATA.iterdir() if p != path) else path.unlink(missing_ok=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
