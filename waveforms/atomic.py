"""Atomic output: write to a temporary file beside the target, then rename.

A reader never sees a half-written result, and an interrupted run leaves the
previous file (if any) untouched.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterator
from pathlib import Path

from .errors import WriteError


@contextlib.contextmanager
def atomic_path(target: str | os.PathLike[str]) -> Iterator[Path]:
    """Yield a temporary path in the target's folder; rename it onto ``target`` on success.

    On any exception the temporary file is removed and ``target`` is left as it was.
    """
    target = Path(target)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        folder.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=folder)
    except OSError as e:
        raise WriteError(f"{target}: cannot write here ({e.strerror})") from None
    os.close(fd)
    tmp_path = Path(tmp)
    # mkstemp creates the file 0600; give the result the usual permissions (0666 less the umask).
    umask = os.umask(0)
    os.umask(umask)
    with contextlib.suppress(OSError):
        os.chmod(tmp_path, 0o666 & ~umask)
    try:
        yield tmp_path
        os.replace(tmp_path, target)
    except OSError as e:  # full disk, file-size limit, read-only folder: the output's failure, named
        with contextlib.suppress(OSError):
            tmp_path.unlink()
        raise WriteError(f"{target}: cannot write ({e.strerror or type(e).__name__})") from None
    except BaseException:
        with contextlib.suppress(OSError):
            tmp_path.unlink()
        raise


def write_text(target: str | os.PathLike[str], text: str) -> None:
    """Write a text file atomically (UTF-8)."""
    with atomic_path(target) as tmp:
        tmp.write_text(text, encoding="utf-8")


def write_bytes(target: str | os.PathLike[str], data: bytes) -> None:
    """Write a binary file atomically."""
    with atomic_path(target) as tmp:
        tmp.write_bytes(data)


def same_file(a: str | os.PathLike[str], b: str | os.PathLike[str]) -> bool:
    """True when two paths name the same existing file (guards against overwriting an input)."""
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False
