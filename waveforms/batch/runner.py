"""`run` and `plan` over an archive, and `run_one` for a notebook: discovery, plan, executor, summary."""

from __future__ import annotations

import contextlib
import dataclasses
import json
import os
import shutil
import signal
import sys
import threading
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any

import pandas as pd

from ..atomic import write_text
from ..errors import InvalidParameterError, WriteError
from ..recipe import Recipe, RunState, load_recipe, run_recipe
from ..summary import error_row, events_frame, summary_frame, summary_row, write_summary
from .executors import run_dask, run_local
from .inputs import InputFile, discover, hash_all
from .manifest import json_safe, output_lock, read_manifest, remove_stale, write_entry
from .motors import MotorMap, motor_map, plate_digest
from .task import STAGING_PREFIX, CaptureTask, capture_folder

CAPTURES_FOLDER = "captures"


@dataclasses.dataclass
class BatchResult:
    """Outcome of `run`.

    Attributes
    ----------
    summary : DataFrame
        One row per capture (`waveforms.summary.SUMMARY_COLUMNS`), in input order.
    events : DataFrame
        Every event: ``file``, ``site``, then the event columns.
    n_done, n_skipped, n_failed : int
        Analysed in this run, taken from the manifest, with an error row.
    n_pending : int
        Captures not analysed yet because the run was stopped (rows with
        ``status`` "not analysed" in the summary).
    interrupted : bool
        True when the run was stopped (Ctrl-C, SIGTERM) before every capture was done.
    signal : int
        The signal that stopped it (2 SIGINT, 15 SIGTERM), 0 when not interrupted.
    out : Path or None
    files : dict
        ``summary.csv``, ``summary.parquet``, ``index.html``, ``incidents_csv``, ``incidents_parquet`` paths when written.
    incidents : DataFrame
        Incidents across consecutive captures of each site (`waveforms.incidents`).
    """

    summary: pd.DataFrame
    events: pd.DataFrame
    n_done: int = 0
    n_skipped: int = 0
    n_failed: int = 0
    interrupted: bool = False
    out: Path | None = None
    n_pending: int = 0
    signal: int = 0
    files: dict[str, Path] = dataclasses.field(default_factory=dict)
    #: incidents across consecutive captures of each site (`waveforms.incidents.INCIDENT_COLUMNS`)
    incidents: pd.DataFrame | None = None
    #: per capture, the thermal state carried from the previous file of its site (`waveforms.incidents.thermal_carry`)
    thermal_carry: pd.DataFrame | None = None

    @property
    def ok(self) -> bool:
        return self.n_failed == 0 and not self.interrupted

    def cycles(self, file: str) -> pd.DataFrame:
        """The per-cycle table of one capture (by its ``file`` name), read from its output folder.

        Needs an output folder and a recipe whose report stage writes the table
        (``cycles = "parquet"`` or ``"csv"``, the shipped recipes do).
        """
        rows = self.summary[self.summary["file"] == file]
        if rows.empty:
            raise InvalidParameterError(f"{file!r} is not a capture of this run")
        if self.out is None or not rows["outputs"].iloc[0]:
            raise InvalidParameterError(f"{file!r}: no output folder, so no cycle table was kept")
        folder = self.out / rows["outputs"].iloc[0]
        for name, reader in (("cycles.parquet", pd.read_parquet), ("cycles.csv", pd.read_csv)):
            if (folder / name).is_file():
                return reader(folder / name)
        raise InvalidParameterError(f"{file!r}: the recipe wrote no cycle table (report.cycles = 'none'?)")


def _resolve(inputs: Any, recipe: Any, motor: Any, motors: Any, out: Any) -> tuple[Any, list[Any], Any, Path | None, list[Any]]:
    """Recipe, input list, nameplate map, output folder and discovered captures, shared by `run` and `plan`."""
    rec = load_recipe(recipe)
    if isinstance(inputs, (str, os.PathLike)):
        inputs = [inputs]
    mmap = motor_map(motor, motors)
    out_path = None if out is None else Path(out)
    files = discover(inputs, exclude=[out_path] if out_path is not None else [])
    return rec, inputs, mmap, out_path, files


def run(
    inputs: Sequence[str | os.PathLike[str]] | str | os.PathLike[str],
    recipe: Recipe | str | os.PathLike[str] | None = None,
    out: str | os.PathLike[str] | None = None,
    jobs: int | None = None,
    motor: str | os.PathLike[str] | None = None,
    motors: str | os.PathLike[str] | None = None,
    force: bool = False,
    retry_errors: bool = False,
    scheduler: Any = None,
    progress: bool = False,
    on_result: Callable[[dict[str, Any]], None] | None = None,
    fresh_workers: bool = True,
    site_from: str | None = None,
    gap_tolerance_s: float | None = None,
) -> BatchResult:
    """Run a recipe over an archive of captures.

    Parameters
    ----------
    inputs : path, glob, fsspec URL, or a list of them
    recipe : Recipe, shipped name, file or None (default recipe)
    out : path-like, optional
        Output folder: per-capture outputs in ``captures/``, the manifest, the
        summary files.  Without one nothing is written and nothing resumes.
    jobs : int, optional
        Worker processes; default the recipe's ``batch.jobs``, 0 = CPU count.
    motor : path-like, optional
        One nameplate TOML for every capture.
    motors : path-like, optional
        A mapping of sites / name patterns to nameplates (`MotorMap`).
    force : bool
        Rerun captures already in the manifest.
    retry_errors : bool
        Rerun captures whose manifest entry is an error row.
    scheduler : str or distributed.Client, optional
        Dask scheduler address (or a client); default the recipe's
        ``batch.scheduler``; empty = local worker processes.
    progress : bool
        Show a progress bar on stderr.
    on_result : callable, optional
        Called in the main process with each new entry (after it is saved).
    fresh_workers : bool
        Local runs: a fresh worker process for every capture (nothing carries
        over from one capture to the next).  False reuses each worker for many
        captures: faster (no fork per capture), less isolated.
    site_from : str, optional
        Regular expression on the file name giving the site for the incidents
        across files (group ``site``, else group 1); default the capture's folder site.
    gap_tolerance_s : float, optional
        Longest gap between consecutive files of a site across which an incident
        continues [s]; default `waveforms.incidents.DEFAULT_GAP_TOLERANCE_S`.

    Returns
    -------
    BatchResult
    """
    rec, inputs, mmap, out_path, files = _resolve(inputs, recipe, motor, motors, out)
    if not files:
        raise InvalidParameterError(f"no capture files found in {[os.fspath(i) for i in inputs]}")
    n_jobs = rec.batch.get("jobs", 0) if jobs is None else int(jobs)
    if n_jobs < 0:
        raise InvalidParameterError(f"jobs={n_jobs} must be 0 (one per core) or more")
    n_jobs = n_jobs or (os.cpu_count() or 1)
    from ..incidents.captures import compile_site_pattern

    compile_site_pattern(site_from)  # a bad pattern fails before any capture runs
    sched = rec.batch.get("scheduler", "") if scheduler is None else scheduler

    if out_path is not None:
        try:
            out_path.mkdir(parents=True, exist_ok=True)
        except OSError as e:
            raise WriteError(f"{out_path}: cannot create the output folder ({e.strerror or type(e).__name__})") from None
    with stop_signals(), output_lock(out_path):
        if out_path is not None:
            _clear_staging(out_path)
        done = read_manifest(out_path) if out_path is not None else {}
        tasks, todo, _states = _plan(files, rec, mmap, out_path, done, force, retry_errors, n_jobs)
        keys = [t.key for t in tasks]
        fp = rec.fingerprint()
        n_skipped = len({t.key for t in tasks} - {t.key for t in todo})
        new: dict[str, dict[str, Any]] = {}

        bar = _progress(len(todo), progress)
        n_failed_new = 0

        def collect(entry: dict[str, Any]) -> None:
            nonlocal n_failed_new
            if "output_error" in entry:  # the outputs could not be written: the run stops, the capture is not failed
                raise WriteError(entry["output_error"])
            if out_path is not None:
                write_entry(out_path, entry)
                remove_stale(out_path, done, entry)  # older versions of a changed file, now that the new result is in place
            new[entry["key"]] = entry
            if entry["row"].get("status") == "error":
                n_failed_new += 1
            if bar is not None:
                bar.update(1)
                bar.set_postfix(failed=n_failed_new, refresh=False)
            if on_result is not None:
                on_result(entry)

        interrupted = False
        stop_signal = 0
        write_failure: WriteError | None = None
        try:
            if sched:
                run_dask(todo, sched, collect)
            else:
                run_local(todo, n_jobs, collect, rec, fresh_workers)
        except KeyboardInterrupt as e:
            interrupted = True
            stop_signal = getattr(e, "signum", signal.SIGINT)
        except WriteError as e:
            interrupted = True
            write_failure = e
        finally:
            if bar is not None:
                bar.close()
        if interrupted:
            # a second Ctrl-C / SIGTERM while the summary of what is done is written would lose it
            hold_signals()

        entries = {**done, **new}
        rows, ev_frames = [], []
        for t, key in zip(tasks, keys, strict=True):
            e = entries.get(key)
            if e is None:  # not reached (interrupted): listed, as not analysed yet
                e = {"row": pending_row(t), "events": []}
            row = dict(e["row"])
            row.update(file=t.input.name, site=t.input.site, path=t.input.path)
            rows.append(row)
            if e.get("events"):
                fr = pd.DataFrame.from_records(e["events"])
                fr.insert(0, "site", t.input.site)
                fr.insert(0, "file", t.input.name)
                ev_frames.append(fr)
        summary = summary_frame(rows)
        events = pd.concat(ev_frames, ignore_index=True) if ev_frames else _empty_events()
        written: dict[str, Path] = {}
        incidents = _incidents(summary, events, site_from, gap_tolerance_s)  # post-run step (waveforms.incidents)
        thermal_carry = _thermal_carry(summary, {t.input.name: entries[k].get("thermal_carry") for t, k in zip(tasks, keys, strict=True)
                                                 if k in entries and entries[k].get("thermal_carry")}, site_from, gap_tolerance_s)
        if out_path is not None:
            try:
                from ..incidents import site_timelines, write_incidents, write_thermal_carry

                written = write_summary(summary, out_path, title=f"Capture summary: recipe {rec.name}",
                                        timelines=site_timelines(summary, incidents, site_from))
                written.update(write_incidents(incidents, out_path))
                written.update(write_thermal_carry(thermal_carry, out_path))
                index = {"format": "motor-waveforms batch manifest", "recipe": rec.name, "recipe_fingerprint": fp,
                         "recipe_source": rec.source, "complete": not interrupted,
                         "captures": [{"file": t.input.name, "path": t.input.path, "key": k, "done": k in entries}
                                      for t, k in zip(tasks, keys, strict=True)]}
                write_text(out_path / "manifest.json", json.dumps(json_safe(index), indent=1, allow_nan=False))
            except WriteError as e:
                # the first write failure is the one to name; the captures' entries stay as they were
                raise (write_failure or e) from None
        if write_failure is not None:
            raise write_failure
        n_failed = int((summary["status"] == "error").sum()) if len(summary) else 0
        n_pending = int((summary["status"] == PENDING_STATUS).sum()) if len(summary) else 0
        return BatchResult(summary=summary, events=events, n_done=len(new), n_skipped=n_skipped, n_failed=n_failed,
                           interrupted=interrupted, out=out_path, files=written, n_pending=n_pending,
                           signal=int(stop_signal), incidents=incidents,
                           thermal_carry=thermal_carry)


#: ``status`` of a capture the run did not reach (stopped first).
PENDING_STATUS = "not analysed"
#: Its verdict.
PENDING_VERDICT = "not analysed yet (run stopped)"


def pending_row(t: CaptureTask) -> dict[str, Any]:
    """Summary row of a capture not reached before the run stopped: rerun the command to analyse it."""
    row = error_row(t.input.name, t.input.site, "", {"path": t.input.path, "sha256": t.sha256,
                                                     "recipe": t.recipe.name, "recipe_hash": t.recipe.fingerprint()[:16]})
    row.update(status=PENDING_STATUS, verdict=PENDING_VERDICT)
    return row


class Stopped(KeyboardInterrupt):
    """SIGTERM (or SIGINT) received: raised in the main thread so a run stops as on Ctrl-C."""

    def __init__(self, signum: int) -> None:
        super().__init__(signal.Signals(signum).name)
        self.signum = signum


def _raise_stopped(signum: int, _frame: Any) -> None:
    raise Stopped(signum)


@contextlib.contextmanager
def stop_signals():
    """While a run lasts: SIGINT and SIGTERM stop it as Ctrl-C does (main thread only; restored afterwards)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    before = {s: signal.getsignal(s) for s in (signal.SIGINT, signal.SIGTERM)}
    for s in before:
        signal.signal(s, _raise_stopped)
    try:
        yield
    finally:
        for s, h in before.items():
            signal.signal(s, h if h is not None else signal.SIG_DFL)


def hold_signals() -> None:
    """Ignore SIGINT and SIGTERM from now until `stop_signals` restores them (the summary is being written)."""
    if threading.current_thread() is threading.main_thread():
        for s in (signal.SIGINT, signal.SIGTERM):
            signal.signal(s, signal.SIG_IGN)


def _clear_staging(out: Path) -> None:
    """Remove staging folders left by a run that was killed (their capture was never recorded)."""
    folder = out / CAPTURES_FOLDER
    if folder.is_dir():
        for p in folder.glob(f"{STAGING_PREFIX}*"):
            shutil.rmtree(p, ignore_errors=True)


def _incidents(summary: pd.DataFrame, events: pd.DataFrame, site_from: str | None,
               gap_tolerance_s: float | None) -> pd.DataFrame:
    """The incidents across consecutive captures of each site (`waveforms.incidents.build_incidents`)."""
    from ..incidents import DEFAULT_GAP_TOLERANCE_S, build_incidents

    gap = DEFAULT_GAP_TOLERANCE_S if gap_tolerance_s is None else gap_tolerance_s
    return build_incidents(summary, events, site_from=site_from, gap_tolerance_s=gap)


def _thermal_carry(summary: pd.DataFrame, carries: dict[str, dict[str, Any]], site_from: str | None,
                   gap_tolerance_s: float | None) -> pd.DataFrame:
    """Initial and end thermal states carried across consecutive captures (`waveforms.incidents.carry_thermal`)."""
    from ..incidents import DEFAULT_GAP_TOLERANCE_S, capture_spans, carry_thermal

    gap = DEFAULT_GAP_TOLERANCE_S if gap_tolerance_s is None else gap_tolerance_s
    return carry_thermal(capture_spans(summary, site_from), carries, gap)


def _plan(files: Sequence[InputFile], rec: Recipe, mmap: MotorMap, out_path: Path | None,
          done: dict[str, dict[str, Any]], force: bool, retry_errors: bool, n_jobs: int,
          ) -> tuple[list[CaptureTask], list[CaptureTask], list[str]]:
    """Every capture's task, the tasks to run, and what will happen to each capture."""
    hashes = hash_all([f.path for f in files], n_jobs)
    fp = rec.fingerprint()
    tasks: list[CaptureTask] = []
    todo: list[CaptureTask] = []
    states: list[str] = []
    seen: set[str] = set()
    for f, sha in zip(files, hashes, strict=True):
        plate, plate_src = mmap.for_input(f)
        key = f"{sha[:32]}-{fp[:12]}-{plate_digest(plate)[:8]}"
        cap_dir = None if out_path is None else str(out_path / CAPTURES_FOLDER / capture_folder(f, sha))
        t = CaptureTask(input=f, sha256=sha, key=key, recipe=rec, nameplate=None if plate is None else plate.to_dict(),
                        nameplate_source=plate_src, out_dir=cap_dir, out_root=None if out_path is None else str(out_path))
        tasks.append(t)
        prior = done.get(key)
        failed = prior is not None and prior["row"].get("status") == "error"
        fresh = prior is None or force or prior.get("retry", False) or (retry_errors and failed)
        if key in seen:
            states.append("same content as an earlier file: analysed once")
        elif fresh:
            todo.append(t)
            seen.add(key)
            states.append("to run")
        else:
            states.append("failed before: skipped (--retry-errors reruns it)" if failed else "done: skipped")
    return tasks, todo, states


def plan(
    inputs: Sequence[str | os.PathLike[str]] | str | os.PathLike[str],
    recipe: Recipe | str | os.PathLike[str] | None = None,
    out: str | os.PathLike[str] | None = None,
    motor: str | os.PathLike[str] | None = None,
    motors: str | os.PathLike[str] | None = None,
    force: bool = False,
    retry_errors: bool = False,
) -> pd.DataFrame:
    """What `run` would do, without doing it: one row per capture (``file``, ``site``, ``path``,
    ``sha256``, ``nameplate``, ``plan``).  Nothing is written."""
    rec, inputs, mmap, out_path, files = _resolve(inputs, recipe, motor, motors, out)
    done = read_manifest(out_path) if out_path is not None else {}
    tasks, _todo, states = _plan(files, rec, mmap, out_path, done, force, retry_errors, os.cpu_count() or 1)
    return pd.DataFrame({
        "file": [t.input.name for t in tasks], "site": [t.input.site for t in tasks],
        "path": [t.input.path for t in tasks], "sha256": [t.sha256 for t in tasks],
        "nameplate": [t.nameplate_source for t in tasks], "plan": states,
    })


def _empty_events() -> pd.DataFrame:
    fr = events_frame([])
    fr.insert(0, "site", pd.Series(dtype=object))
    fr.insert(0, "file", pd.Series(dtype=object))
    return fr


def _progress(total: int, enabled: bool) -> Any:
    if not enabled:
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc="captures", unit="file", file=sys.stderr, dynamic_ncols=True,
                postfix={"failed": 0}, smoothing=0.1)


@dataclasses.dataclass
class CaptureResult:
    """Pandas views of one capture's run (see `run_one`)."""

    summary: pd.Series
    events: pd.DataFrame
    cycles: pd.DataFrame | None
    speed: pd.DataFrame | None
    state: RunState


def run_one(
    capture: Any,
    recipe: Recipe | str | os.PathLike[str] | None = None,
    nameplate: Any = None,
    out_dir: str | os.PathLike[str] | None = None,
) -> CaptureResult:
    """Run a recipe on one capture in this process and return pandas objects.

    Errors are raised (not turned into rows) so a notebook shows them.
    """
    state = run_recipe(recipe, capture, nameplate=nameplate, out_dir=out_dir)
    name = Path(state.source).name
    rec = load_recipe(recipe)
    row = summary_row(state, name, Path(state.source).resolve().parent.name if "://" not in state.source else "",
                      {"path": state.source, "recipe": rec.name, "recipe_hash": rec.fingerprint()[:16],
                       "report": state.outputs.get("html", ""), "sha256": getattr(state.capture.provenance, "sha256", "")})
    return CaptureResult(summary=summary_frame([row]).iloc[0], events=state.events_frame(), cycles=state.cycles,
                         speed=state.speed, state=state)
