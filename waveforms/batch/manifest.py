"""The manifest (one JSON entry per finished capture, by key) and the lock of an output folder."""

from __future__ import annotations

import contextlib
import json
import os
import socket
from pathlib import Path
from typing import Any

from ..atomic import write_text
from ..errors import InvalidParameterError

MANIFEST_FOLDER = "manifest"
#: The ``format`` of a manifest entry.
MANIFEST_FORMAT = "motor-waveforms batch entry"


def _entry_path(out: Path, key: str) -> Path:
    return out / MANIFEST_FOLDER / f"{key}.json"


def read_manifest(out: str | os.PathLike[str]) -> dict[str, dict[str, Any]]:
    """Finished entries of an output folder, by key (unreadable entries are ignored: they rerun)."""
    folder = Path(out) / MANIFEST_FOLDER
    entries: dict[str, dict[str, Any]] = {}
    if not folder.is_dir():
        return entries
    for p in folder.glob("*.json"):
        try:
            e = json.loads(p.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue
        if isinstance(e, dict) and e.get("format") == MANIFEST_FORMAT and e.get("key") == p.stem:
            entries[p.stem] = e
    return entries


def write_entry(out: Path, entry: dict[str, Any]) -> None:
    write_text(_entry_path(out, entry["key"]), json.dumps(entry, allow_nan=True, default=str))


LOCK_FILE = ".batch.lock"


@contextlib.contextmanager
def output_lock(out: Path | None):
    """One batch run per output folder: a lock file holding host and pid (a stale one is taken over)."""
    if out is None:
        yield
        return
    lock = out / LOCK_FILE
    me = f"{socket.gethostname()}:{os.getpid()}"
    for _attempt in range(2):
        try:
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            try:
                host, pid = lock.read_text(encoding="utf-8").strip().rsplit(":", 1)
            except (OSError, ValueError):
                host, pid = "", "0"
            if host == socket.gethostname() and not _alive(int(pid)):
                lock.unlink(missing_ok=True)  # left by a run that was killed
                continue
            raise InvalidParameterError(
                f"{out}: another batch run ({host}, pid {pid}) is writing this output folder; "
                f"wait for it, use another --out, or delete {lock} if that run is gone") from None
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(me)
        break
    try:
        yield
    finally:
        with contextlib.suppress(OSError):
            if lock.read_text(encoding="utf-8").strip() == me:
                lock.unlink()


def _alive(pid: int) -> bool:
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True
