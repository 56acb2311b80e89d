"""Batch benchmark: 20 simulated captures through `waveforms.batch.run`.

Prints wall times and ratios:

* ``--jobs 1`` and ``--jobs 2`` (speed-up target >= 1.8 on 2 free cores),
* the same tasks on a 2-worker `distributed.LocalCluster` (processes, 1 thread each),
* the per-capture overhead of the batch machinery (hashing, a fresh worker
  process per capture, manifest, summary) against calling `analyze` and
  `write_report` directly in one process.

The captures are simulated from the invented scenarios in sample_captures/
with 4 seeds each, and cached in benchmarks/_data/batch/ (git-ignored).
Run it when the machine is otherwise idle; the load average is printed before
and after, because other processes on the same cores distort every ratio.

    python benchmarks/bench_batch.py [--n 20]
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import time
import tomllib
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(REPO))

DATA = REPO / "benchmarks" / "_data" / "batch"
SCENARIOS = ("healthy_run", "open_phase_stall", "jam", "dol_start", "unbalanced_supply")
#: The recipe timed: the full investigation without the extra cycle-table file, so the
#: direct baseline (analyze + write_report) does the same work.
RECIPE = """[recipe]
name = "bench"
description = "investigate without the cycle-table file"
stages = ["import", "measure", "speed", "detect", "thermal", "report"]
[report]
html = true
cycles = "none"
"""


def make_captures(n: int) -> list[Path]:
    from waveforms.io.hdf5_native import write_native
    from waveforms.sim.scenario import scenario_from_dict
    from waveforms.sim.simulate import simulate

    DATA.mkdir(parents=True, exist_ok=True)
    out = []
    for i in range(n):
        name = SCENARIOS[i % len(SCENARIOS)]
        seed = 1000 + i
        target = DATA / "captures" / f"site{i % 4}" / f"{name}_{seed}.h5"
        if not target.exists():
            src = REPO / "sample_captures" / f"{name}.scenario.toml"
            data = tomllib.loads(src.read_text(encoding="utf-8"))
            data["scenario"]["seed"] = seed
            sc = scenario_from_dict(data, str(src), base=src.parent)
            cap, _truth = simulate(sc)
            target.parent.mkdir(parents=True, exist_ok=True)
            write_native(cap, target)
        out.append(target)
    return out


def load() -> str:
    a, b, c = os.getloadavg()
    return f"load average {a:.2f} {b:.2f} {c:.2f}"


def direct(files: list[Path], out: Path) -> float:
    """analyze + write_report in this process, one capture after the other."""
    from waveforms.analysis import analyze
    from waveforms.io import read_capture
    from waveforms.report import write_report

    t0 = time.perf_counter()
    for i, f in enumerate(files):
        res = analyze(read_capture(f))
        write_report(res, out / f"c{i}", html=True)
    return time.perf_counter() - t0


def timed_batch(files_root: Path, out: Path, recipe: Path, **kw) -> tuple[float, object]:
    from waveforms import batch

    if out.exists():
        shutil.rmtree(out)
    t0 = time.perf_counter()
    res = batch.run([files_root], recipe=recipe, out=out, **kw)
    return time.perf_counter() - t0, res


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=20)
    ap.add_argument("--repeat", type=int, default=2, help="runs of each configuration; the fastest is kept")
    args = ap.parse_args()
    import distributed

    from waveforms import batch

    t0 = time.perf_counter()
    files = make_captures(args.n)
    print(f"{len(files)} captures ready in {time.perf_counter() - t0:.1f} s ({DATA / 'captures'})")
    recipe = DATA / "bench.toml"
    recipe.write_text(RECIPE, encoding="utf-8")
    root = DATA / "captures"
    work = DATA / "out"
    print(load(), f"on {os.cpu_count()} cores")

    # warm-up: start the fork server and import everything once (not timed)
    timed_batch(root, work / "warm", recipe, jobs=1)
    times: dict[str, list[float]] = {"direct": [], "jobs1": [], "jobs2": [], "dask": [], "jobs1_reuse": []}
    results: dict[str, object] = {}
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cl:
        timed_batch(root, work / "dask_warm", recipe, scheduler=cl.scheduler_address)  # workers import once
        for _ in range(args.repeat):
            times["direct"].append(direct(files, work / "direct"))
            for key, kw in (("jobs1", {"jobs": 1}), ("jobs2", {"jobs": 2}), ("dask", {"scheduler": cl.scheduler_address}),
                            ("jobs1_reuse", {"jobs": 1, "fresh_workers": False})):
                t, res = timed_batch(root, work / key, recipe, **kw)
                times[key].append(t)
                results[key] = res
            print("  round: " + ", ".join(f"{k} {v[-1]:.2f} s" for k, v in times.items()), "|", load())
    t_direct, t1, t2, td = (min(times[k]) for k in ("direct", "jobs1", "jobs2", "dask"))
    n = len(files)
    print(f"direct analyze + write_report, 1 process: {t_direct:7.2f} s  ({t_direct / n:.3f} s per capture)")
    for key, label in (("jobs1", "batch --jobs 1:"), ("jobs2", "batch --jobs 2:"), ("dask", "Dask LocalCluster, 2 workers:"),
                       ("jobs1_reuse", "batch --jobs 1 --reuse-workers:")):
        print(f"{label:42s}{min(times[key]):7.2f} s  ({results[key].n_failed} failed)")
    t_skip = time.perf_counter()
    r3 = batch.run([root], recipe=recipe, out=work / "jobs2")
    t_skip = time.perf_counter() - t_skip
    print(f"rerun, all {r3.n_skipped} skipped (resume):        {t_skip:7.2f} s")
    drop = ["elapsed_s", "outputs", "report"]
    same = results["jobs1"].summary.drop(columns=drop).equals(results["jobs2"].summary.drop(columns=drop))
    same_dask = results["jobs1"].summary.drop(columns=drop).equals(results["dask"].summary.drop(columns=drop))
    print(f"speed-up jobs 2 / jobs 1:   {t1 / t2:5.2f}  (target >= 1.8)")
    print(f"speed-up Dask 2 / jobs 1:   {t1 / td:5.2f}")
    print(f"batch overhead per capture (jobs 1 vs direct): {(t1 - t_direct) / n * 1000:7.1f} ms "
          f"({100 * (t1 - t_direct) / t_direct:+.1f} %)")
    tr = min(times["jobs1_reuse"])
    print(f"cost of a fresh process per capture (jobs 1 fresh vs reused): {(t1 - tr) / n * 1000:7.1f} ms per capture")
    print(f"summaries identical (bar elapsed_s, folders): jobs1 = jobs2 {same}, jobs1 = Dask {same_dask}")

    # the machinery alone: a recipe that only reads each capture, batch (jobs 1) against a plain loop
    from waveforms.recipe import run_recipe

    light = DATA / "import_only.toml"
    light.write_text('[recipe]\nname = "import-only"\nstages = ["import"]\n[import]\nquality = false\n', encoding="utf-8")
    loop, mach = [], []
    for _ in range(args.repeat):
        t = time.perf_counter()
        for f in files:
            run_recipe(light, f)
        loop.append(time.perf_counter() - t)
        mach.append(timed_batch(root, work / "light", light, jobs=1)[0])
    print(f"import-only recipe: plain loop {min(loop):.2f} s, batch --jobs 1 {min(mach):.2f} s -> "
          f"machinery {(min(mach) - min(loop)) / n * 1000:.1f} ms per capture "
          "(hash, fresh worker process, manifest entry, summary)")
    print(load())


if __name__ == "__main__":
    main()
