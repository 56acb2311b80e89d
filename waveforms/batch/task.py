"""One capture's task: what a worker gets (`CaptureTask`) and what it does (`process_capture`)."""

from __future__ import annotations

import contextlib
import dataclasses
import math
import os
import re
import shutil
import socket
import tempfile
import time
import traceback
from pathlib import Path
from typing import Any

import pandas as pd

from ..errors import WaveformsError, WriteError
from ..recipe import Recipe, RunState, run_recipe
from ..summary import error_row, events_frame, summary_row
from .inputs import InputFile
from .manifest import MANIFEST_FORMAT


@dataclasses.dataclass(frozen=True)
class CaptureTask:
    """Everything a worker needs for one capture (plain, picklable data)."""

    input: InputFile
    sha256: str
    key: str
    recipe: Recipe
    nameplate: dict[str, Any] | None
    nameplate_source: str
    out_dir: str | None
    out_root: str | None
    #: threads inside the capture's analysis (`waveforms.recipe.run_recipe`); results do not depend on it
    threads: int = 1


def _safe_name(name: str) -> str:
    s = re.sub(r"[^A-Za-z0-9._-]+", "_", name.replace("/", "__")).strip("._")
    return (s or "capture")[:80]


def capture_folder(f: InputFile, sha256: str) -> str:
    """Folder name (below ``OUT/captures``) of one capture's outputs."""
    return f"{_safe_name(f.name)}-{sha256[:10]}"


@contextlib.contextmanager
def _local_copy(path: str):
    """A local file for ``path``: itself, or a cached download of an fsspec URL."""
    if "://" not in path:
        yield path
        return
    import fsspec

    with tempfile.TemporaryDirectory(prefix="waveforms-") as tmp:
        local = fsspec.open_local(f"simplecache::{path}", simplecache={"cache_storage": tmp})
        yield local


#: Prefix of the folder a capture's outputs are written into before they replace its folder.
STAGING_PREFIX = ".staging-"


def staging_folder(out_dir: str | os.PathLike[str]) -> Path:
    """Where the outputs of ``out_dir`` are written first (beside it, hidden): ``.staging-NAME-PID``."""
    final = Path(out_dir)
    return final.parent / f"{STAGING_PREFIX}{final.name}-{os.getpid()}"


def _publish(staged: Path, final: Path) -> None:
    """Put the finished outputs in place: the old folder (if any) is replaced only now, by renames."""
    if not any(staged.iterdir()):
        shutil.rmtree(staged, ignore_errors=True)
        return
    old = final.parent / f"{STAGING_PREFIX}{final.name}-{os.getpid()}-old"
    if final.exists():
        os.replace(final, old)
    try:
        os.replace(staged, final)
    except OSError:
        if old.exists():
            os.replace(old, final)  # put the previous result back
        raise
    shutil.rmtree(old, ignore_errors=True)


def output_failure(task: CaptureTask, why: str) -> dict[str, Any]:
    """The entry of a capture whose outputs could not be written: the run's failure, not the capture's."""
    return {"format": MANIFEST_FORMAT, "key": task.key, "output_error": why}


def process_capture(task: CaptureTask) -> dict[str, Any]:
    """Run the recipe on one capture and return its manifest entry; never raises.

    The entry holds the summary ``row`` and the ``events`` (list of records).
    A capture that cannot be analysed gives ``row["status"] == "error"`` and the
    reason in ``row["error"]``: the package's own one-line message for a bad
    input, or the exception type and text (plus the last frame) for anything else.

    The outputs are written into a staging folder beside the capture's folder
    and replace it only once complete.  When an output cannot be written
    (full disk, file-size limit, read-only folder) the entry is an
    ``output_error`` (`output_failure`) instead: nothing is put in place and
    the previous result, if any, stays as it was.
    """
    t0 = time.perf_counter()
    started = time.time()
    f = task.input
    extra: dict[str, Any] = {"path": f.path, "sha256": task.sha256, "recipe": task.recipe.name,
                             "recipe_hash": task.recipe.fingerprint()[:16]}
    staged: Path | None = None
    extra_carry: dict[str, Any] | None = None
    if task.out_dir:
        staged = staging_folder(task.out_dir)
        try:
            shutil.rmtree(staged, ignore_errors=True)
            staged.mkdir(parents=True)
        except OSError as e:
            return output_failure(task, f"{staged.parent}: cannot write here ({e.strerror or type(e).__name__})")
    if task.out_dir and task.out_root:
        extra["outputs"] = os.path.relpath(task.out_dir, task.out_root)
    try:
        plate = None
        if task.nameplate is not None:
            from ..motor.nameplate import Nameplate

            plate = Nameplate.from_dict({k: v for k, v in task.nameplate.items() if k != "warnings"}, task.nameplate_source)
        with _local_copy(f.path) as local:
            try:
                state = run_recipe(task.recipe, local, nameplate=plate, out_dir=staged,
                                   nameplate_source=task.nameplate_source, origin=f.path if f.is_url else "",
                                   threads=task.threads)
            except WaveformsError as e:
                if f.is_url:  # name the URL, not the temporary copy
                    raise _renamed(e, local, f.path) from None
                raise
        report = state.outputs.get("html", "")
        if report and task.out_root and task.out_dir:
            extra["report"] = os.path.relpath(Path(task.out_dir) / Path(report).name, task.out_root)
        extra["elapsed_s"] = time.perf_counter() - t0
        row = summary_row(state, f.name, f.site, extra)
        events = _records(events_frame(state.events))
        if getattr(state, "thermal", None) is not None:  # for the thermal state carried across files (waveforms.incidents)
            extra_carry = dict(state.thermal.carry)
        _close(state)
        if staged is not None and task.out_dir:
            _publish(staged, Path(task.out_dir))
    except WriteError as e:
        _discard(staged)
        return output_failure(task, str(e))
    except OSError as e:
        if staged is not None and _inside(e, staged):
            _discard(staged)
            return output_failure(task, f"{e.filename}: cannot write ({e.strerror or type(e).__name__})")
        _discard(staged)
        row, events = _bug_row(task, e, extra, t0), []
    except WaveformsError as e:
        _discard(staged)
        extra["elapsed_s"] = time.perf_counter() - t0
        extra.pop("outputs", None)  # no folder is made for a capture that could not be analysed
        row, events = error_row(f.name, f.site, str(e), extra), []
    except MemoryError:
        _discard(staged)
        extra["elapsed_s"] = time.perf_counter() - t0
        extra.pop("outputs", None)
        row, events = error_row(f.name, f.site, "out of memory while analysing this capture", extra), []
    except Exception as e:  # failure isolation: any bug becomes this capture's error row
        _discard(staged)
        row, events = _bug_row(task, e, extra, t0), []
    entry = {"format": MANIFEST_FORMAT, "key": task.key, "row": row, "events": events,
             "worker": f"{socket.gethostname()}:{os.getpid()}", "started": started, "finished": time.time()}
    if row.get("status") == "ok" and extra_carry:
        entry["thermal_carry"] = extra_carry
    return entry


def _bug_row(task: CaptureTask, e: BaseException, extra: dict[str, Any], t0: float) -> dict[str, Any]:
    tb = traceback.extract_tb(e.__traceback__)
    where = f" (at {Path(tb[-1].filename).name}:{tb[-1].lineno})" if tb else ""
    extra["elapsed_s"] = time.perf_counter() - t0
    extra.pop("outputs", None)
    return error_row(task.input.name, task.input.site, f"{type(e).__name__}: {e}{where}", extra)


def _inside(e: OSError, folder: Path) -> bool:
    """True when the failed call was about a path inside ``folder`` (an output)."""
    for name in (e.filename, getattr(e, "filename2", None)):
        if name and os.path.abspath(os.fspath(name)).startswith(os.path.abspath(folder)):
            return True
    return False


def _discard(staged: Path | None) -> None:
    if staged is not None:
        shutil.rmtree(staged, ignore_errors=True)


class _UrlError(WaveformsError):
    """A capture read through a local copy failed; the message names the URL."""


def _renamed(err: WaveformsError, local: str, url: str) -> WaveformsError:
    return _UrlError(str(err).replace(local, url))


def _close(state: RunState) -> None:
    src = getattr(state.capture, "source", None)
    if hasattr(src, "close"):
        with contextlib.suppress(Exception):
            src.close()


def _records(frame: pd.DataFrame) -> list[dict[str, Any]]:
    recs = frame.to_dict("records")
    return [{k: (None if isinstance(v, float) and not math.isfinite(v) else v) for k, v in r.items()} for r in recs]


def crash_entry(task: CaptureTask, why: str) -> dict[str, Any]:
    f = task.input
    row = error_row(f.name, f.site, why, {"path": f.path, "sha256": task.sha256, "recipe": task.recipe.name,
                                          "recipe_hash": task.recipe.fingerprint()[:16]})
    # "retry": the failure says nothing about the file itself, so a rerun tries again
    return {"format": MANIFEST_FORMAT, "key": task.key, "row": row, "events": [], "retry": True}
