"""Batch runs: one recipe over a whole archive of captures, in parallel and resumable.

::

    result = run(["archive/"], recipe="triage", out="out/", jobs=2)
    result.summary          # DataFrame, one row per capture (waveforms.summary columns)
    result.events           # DataFrame, every event of every capture

One concept per module:

* `inputs`: `discover` walks folders (recursively, files whose extension an
  importer claims), expands globs and accepts fsspec URLs (``s3://...``,
  ``file://...``); `file_sha256` names each capture by its content.
* `motors`: the `MotorMap`, which nameplate goes with which capture.
* `task`: each capture is one `CaptureTask`, run by `process_capture` in a
  worker.  A task never raises: a capture that cannot be analysed comes back
  as an error row with the reason.
* `executors`: a `concurrent.futures.ProcessPoolExecutor` (a fresh child per
  capture, forked from a pre-loaded server) or a Dask ``distributed`` cluster.
  A worker that dies (killed, out of memory) breaks the process pool; the
  captures it held are retried one at a time, and the one that kills a worker
  on its own becomes an error row.
* `manifest`: one small JSON file per finished capture in ``OUT/manifest/``,
  written atomically as soon as the result arrives, named by the file's
  SHA-256, the recipe fingerprint and the nameplate used.  A rerun skips
  captures whose entry exists (``force=True`` reruns them); an interrupted run
  (Ctrl-C, a killed worker, a killed main process) loses only the captures
  still in progress.  A lock file keeps one run per output folder.
* `index_page`: ``index.html``, the sortable page over the summary (a jinja2
  template beside the single-capture report's).
* `runner`: `run`, `plan` and `run_one` tie these together.

Captures and the output folder must be reachable from every worker under the
same name: a shared path (NFS, SMB mount) or an fsspec URL.
"""

from .inputs import GENERIC_EXTENSIONS, InputFile, discover, file_sha256
from .manifest import LOCK_FILE, MANIFEST_FOLDER, read_manifest
from .motors import MotorMap
from .runner import CAPTURES_FOLDER, BatchResult, CaptureResult, plan, run, run_one
from .task import CaptureTask, capture_folder, process_capture

__all__ = [
    "CAPTURES_FOLDER", "GENERIC_EXTENSIONS", "LOCK_FILE", "MANIFEST_FOLDER", "BatchResult", "CaptureResult",
    "CaptureTask", "InputFile", "MotorMap", "capture_folder", "discover", "file_sha256", "plan", "process_capture",
    "read_manifest", "run", "run_one",
]
