"""Start-up of the command (a script, not a test): `--help` and `inspect` on small files against bare imports.

Each command runs as its own process (the whole process timed, as a user waits for it), ``--repeat``
times, interleaved with the floors it is compared with; best and median are printed.  Floors: the
interpreter alone, ``import numpy, click`` (what every subcommand needs), and the same plus the one
file library the importer needs (``pyarrow.csv`` for CSV, ``h5py`` for HDF5).  Issue 10's target:
``--help`` and ``inspect`` on a small file under 0.5 s wall.  The machine is shared: print the load.

Usage: python benchmarks/bench_startup.py [--repeat 7]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SAMPLES = ROOT / "sample_captures"


def wall(cmd: list[str]) -> float:
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    t = time.perf_counter()
    subprocess.run(cmd, cwd=ROOT, env=env, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - t


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=7)
    a = ap.parse_args()
    py = sys.executable
    cli = [py, "-m", "waveforms.cli"]
    steps = {
        "python alone": [py, "-c", "pass"],
        "import numpy, click": [py, "-c", "import numpy, click"],
        "import numpy, click, pyarrow.csv": [py, "-c", "import numpy, click, pyarrow.csv"],
        "import numpy, click, h5py": [py, "-c", "import numpy, click, h5py"],
        "--help": cli + ["--help"],
        "inspect dip_one_phase.csv (1.2 MB)": cli + ["inspect", str(SAMPLES / "dip_one_phase.csv")],
        "inspect healthy_run.h5 (0.4 MB)": cli + ["inspect", str(SAMPLES / "healthy_run.h5")],
    }
    times: dict[str, list[float]] = {k: [] for k in steps}
    print(f"load average before: {os.getloadavg()}")
    for _ in range(a.repeat):
        for k, cmd in steps.items():
            times[k].append(wall(cmd))
    print(f"load average after:  {os.getloadavg()}")
    for k, v in times.items():
        print(f"  {k:38s} best {min(v):.3f} s   median {statistics.median(v):.3f} s")
    for k, floor in (("--help", "import numpy, click"), ("inspect dip_one_phase.csv (1.2 MB)", "import numpy, click, pyarrow.csv"),
                     ("inspect healthy_run.h5 (0.4 MB)", "import numpy, click, h5py")):
        print(f"  {k} / ({floor}) = {min(times[k]) / min(times[floor]):.2f} (best / best)")


if __name__ == "__main__":
    main()
