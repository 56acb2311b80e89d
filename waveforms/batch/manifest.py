"""The manifest (one JSON entry per finished capture, by key) and the lock of an output folder."""

from __future__ import annotations

import contextlib
import fcntl
import json
import math
import os
import socket
from pathlib import Path
from typing import Any

from ..atomic import write_text
from ..errors import InvalidParameterError, WriteError

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


def json_safe(value: Any) -> Any:
    """``value`` with every non-finite float (NaN, +/-inf) replaced by None, so that it is strict JSON."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: json_safe(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_safe(v) for v in value]
    return value


def write_entry(out: Path, entry: dict[str, Any]) -> None:
    """Save one finished capture's entry (strict JSON: NaN and infinities become null)."""
    write_text(_entry_path(out, entry["key"]), json.dumps(json_safe(entry), allow_nan=False, default=str))


def remove_stale(out: Path, done: dict[str, dict[str, Any]], entry: dict[str, Any]) -> list[str]:
    """Remove the results of older versions of ``entry``'s file, once ``entry`` is complete; the keys removed.

    An older version is a finished entry of the same input path, recipe and
    nameplate (the same key after its file digest) whose file digest differs:
    the file changed since.  Entries of another recipe or nameplate stay (a run
    with that recipe again reuses them).  Called after the new entry is written
    and its folder published (`waveforms.batch.task`), so the old files go only
    once the new result is in place: the old manifest entry, then its capture
    folder unless another remaining entry still points at it.  A new result
    that is an error row (no folder) removes nothing.
    """
    row = entry.get("row") or {}
    path, new_out, key = row.get("path"), row.get("outputs"), str(entry.get("key", ""))
    if not path or row.get("status") == "error" or not new_out or "-" not in key:
        return []
    import shutil

    tail = key.split("-", 1)[1]  # recipe fingerprint and nameplate digest (waveforms.batch.runner._plan)
    stale = {k: e for k, e in done.items() if k != key and k.split("-", 1)[-1] == tail
             and (e.get("row") or {}).get("path") == path}
    for k in stale:
        try:
            _entry_path(out, k).unlink()
        except FileNotFoundError:
            pass
        done.pop(k, None)
    used = {(e.get("row") or {}).get("outputs") for e in done.values()} | {new_out}
    for e in stale.values():
        folder = (e.get("row") or {}).get("outputs")
        if folder and folder not in used:
            target = (out / folder).resolve()
            if out.resolve() in target.parents:  # only ever inside the output folder
                shutil.rmtree(target, ignore_errors=True)
    return sorted(stale)


LOCK_FILE = ".batch.lock"


@contextlib.contextmanager
def output_lock(out: Path | None):
    """One batch run per output folder.

    The lock file holds the host and pid of the run; the run holds an
    exclusive ``flock`` on it for its whole life.  The kernel drops that lock
    when the process ends, however it ends (SIGKILL included), so a lock left
    by a killed run is taken over; the takeover happens under the flock, so
    two runs cannot both take it (the file's identity is checked after
    locking, against a run that removed it meanwhile).  A lock file naming a
    live process on this host is respected even without a flock.
    """
    if out is None:
        yield
        return
    lock = out / LOCK_FILE
    me = f"{socket.gethostname()}:{os.getpid()}"
    fd = _acquire(lock, out)
    try:
        os.ftruncate(fd, 0)
        os.pwrite(fd, me.encode(), 0)
        os.fsync(fd)
    except OSError as e:
        os.close(fd)
        raise WriteError(f"{lock}: cannot write the lock file ({e.strerror})") from None
    try:
        yield
    finally:
        with contextlib.suppress(OSError):
            os.unlink(lock)  # still holding the flock: nobody can take the file between the check and this
        os.close(fd)


def _acquire(lock: Path, out: Path) -> int:
    """Open and flock ``lock`` (create-exclusive when absent); the locked descriptor."""
    for _attempt in range(20):
        try:
            fd = os.open(lock, os.O_CREAT | os.O_EXCL | os.O_RDWR, 0o644)
        except FileExistsError:
            try:
                fd = os.open(lock, os.O_RDWR)
            except FileNotFoundError:
                continue  # removed meanwhile: try again
            except OSError as e:
                raise WriteError(f"{lock}: cannot open the lock file ({e.strerror})") from None
        except OSError as e:
            raise WriteError(f"{out}: cannot write in the output folder ({e.strerror})") from None
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError:
            holder = _holder(fd)
            os.close(fd)
            raise _busy(out, lock, holder) from None
        try:
            same = os.fstat(fd).st_ino == os.stat(lock).st_ino
        except FileNotFoundError:
            same = False
        if not same:  # the run that held it removed the file after we opened it: start again
            os.close(fd)
            continue
        host, pid = _holder(fd)
        if host == socket.gethostname() and pid != 0 and _alive(pid):
            os.close(fd)
            raise _busy(out, lock, (host, pid))
        return fd  # free, or left by a run that is gone
    raise WriteError(f"{lock}: cannot take the lock file (it keeps changing)")


def _holder(fd: int) -> tuple[str, int]:
    try:
        host, pid = os.pread(fd, 300, 0).decode("utf-8", "replace").strip().rsplit(":", 1)
        return host, int(pid)
    except (OSError, ValueError):
        return "", 0


def _busy(out: Path, lock: Path, holder: tuple[str, int]) -> InvalidParameterError:
    host, pid = holder
    return InvalidParameterError(f"{out}: another batch run ({host or 'unknown host'}, pid {pid}) is writing this "
                                 f"output folder; wait for it, use another --out, or delete {lock} if that run is gone")


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
