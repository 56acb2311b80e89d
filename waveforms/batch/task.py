"""One capture's task: what a worker gets (`CaptureTask`) and what it does (`process_capture`)."""

from __future__ import annotations

import contextlib
import dataclasses
import math
import os
import re
import socket
import tempfile
import time
import traceback
from pathlib import Path
from typing import Any

import pandas as pd

from ..errors import WaveformsError
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


def process_capture(task: CaptureTask) -> dict[str, Any]:
    """Run the recipe on one capture and return its manifest entry; never raises.

    The entry holds the summary ``row`` and the ``events`` (list of records).
    A capture that cannot be analysed gives ``row["status"] == "error"`` and the
    reason in ``row["error"]``: the package's own one-line message for a bad
    input, or the exception type and text (plus the last frame) for anything else.
    """
    t0 = time.perf_counter()
    started = time.time()
    f = task.input
    extra: dict[str, Any] = {"path": f.path, "sha256": task.sha256, "recipe": task.recipe.name,
                             "recipe_hash": task.recipe.fingerprint()[:16]}
    if task.out_dir and task.out_root:
        extra["outputs"] = os.path.relpath(task.out_dir, task.out_root)
    try:
        plate = None
        if task.nameplate is not None:
            from ..motor.nameplate import Nameplate

            plate = Nameplate.from_dict({k: v for k, v in task.nameplate.items() if k != "warnings"}, task.nameplate_source)
        with _local_copy(f.path) as local:
            try:
                state = run_recipe(task.recipe, local, nameplate=plate, out_dir=task.out_dir,
                                   nameplate_source=task.nameplate_source, origin=f.path if f.is_url else "",
                                   threads=task.threads)
            except WaveformsError as e:
                if f.is_url:  # name the URL, not the temporary copy
                    raise _renamed(e, local, f.path) from None
                raise
        report = state.outputs.get("html", "")
        if report and task.out_root:
            extra["report"] = os.path.relpath(report, task.out_root)
        extra["elapsed_s"] = time.perf_counter() - t0
        row = summary_row(state, f.name, f.site, extra)
        events = _records(events_frame(state.events))
        _close(state)
    except WaveformsError as e:
        extra["elapsed_s"] = time.perf_counter() - t0
        row, events = error_row(f.name, f.site, str(e), extra), []
    except MemoryError:
        extra["elapsed_s"] = time.perf_counter() - t0
        row, events = error_row(f.name, f.site, "out of memory while analysing this capture", extra), []
    except Exception as e:  # failure isolation: any bug becomes this capture's error row
        tb = traceback.extract_tb(e.__traceback__)
        where = f" (at {Path(tb[-1].filename).name}:{tb[-1].lineno})" if tb else ""
        extra["elapsed_s"] = time.perf_counter() - t0
        row, events = error_row(f.name, f.site, f"{type(e).__name__}: {e}{where}", extra), []
    return {"format": MANIFEST_FORMAT, "key": task.key, "row": row, "events": events,
            "worker": f"{socket.gethostname()}:{os.getpid()}", "started": started, "finished": time.time()}


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
