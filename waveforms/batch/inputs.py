"""The captures of an archive: folders walked, globs expanded, fsspec URLs listed, and their SHA-256."""

from __future__ import annotations

import concurrent.futures as cf
import dataclasses
import glob
import hashlib
import os
import re
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from ..errors import InvalidParameterError
from ..hashing import sha256_file

_GLOB_CHARS = re.compile(r"[*?\[]")


@dataclasses.dataclass(frozen=True)
class InputFile:
    """One capture of the archive.

    Parameters
    ----------
    path : str
        Local path or fsspec URL, as workers will open it.
    name : str
        How it is shown: its path below the folder given, or the file name.
    site : str
        First folder below the folder given, else the file's own folder name.
    """

    path: str
    name: str
    site: str

    @property
    def is_url(self) -> bool:
        return "://" in self.path


def _capture_extensions() -> set[str]:
    from ..io import importers

    exts = {e.lower() for imp in importers() for e in imp.extensions}
    return exts or {".h5", ".hdf5", ".csv"}


#: Extensions too generic to take on their own in a folder walk: such a file is
#: taken only when an importer's sniffer recognises it (a site's notes.txt is not a capture).
GENERIC_EXTENSIONS = frozenset({".txt", ".dat"})


def _wanted(p: Path, exts: set[str]) -> bool:
    name = p.name
    if name.startswith(".") or name.endswith(".part") or p.suffix.lower() not in exts:
        return False
    if p.suffix.lower() in GENERIC_EXTENSIONS:
        from ..io import importers

        return any(_sniff(imp, p) for imp in importers())
    return True


def _sniff(imp: Any, p: Path) -> bool:
    try:
        return bool(imp.sniff(p))
    except Exception:  # a sniffer must not raise; a broken one means "no"
        return False


def discover(inputs: Sequence[str | os.PathLike[str]], exclude: Sequence[str | os.PathLike[str]] = ()) -> list[InputFile]:
    """The capture files named by folders, globs, files and fsspec URLs, sorted, without duplicates.

    A folder is walked recursively and keeps the files whose extension an
    importer claims (``.h5``, ``.csv``...; a ``.txt`` or ``.dat`` file only
    when an importer recognises its content); a glob or a file named outright
    is taken whatever its extension.  Paths below ``exclude`` (the output folder)
    are left out.

    Raises
    ------
    InvalidParameterError
        For an input that names nothing.
    """
    exts = _capture_extensions()
    skip = [Path(e).resolve() for e in exclude]
    found: dict[str, InputFile] = {}

    def add(path: str, name: str, site: str) -> None:
        if "://" not in path:
            rp = Path(path).resolve()
            if any(rp == s or s in rp.parents for s in skip):
                return
            key = str(rp)
        else:
            key = path
        found.setdefault(key, InputFile(path=path, name=name, site=site))

    for raw in inputs:
        item = os.fspath(raw)
        if "://" in item:
            for f in _discover_url(item, exts):
                add(*f)
            continue
        if _GLOB_CHARS.search(item):
            hits = sorted(glob.glob(item, recursive=True))
            files = [h for h in hits if Path(h).is_file()]
            if not files:
                raise InvalidParameterError(f"{item}: the pattern matches no file")
            for h in files:
                add(h, h, Path(h).resolve().parent.name)
            continue
        p = Path(item)
        if p.is_dir():
            n0 = len(found)
            for f in sorted(p.rglob("*")):
                if f.is_file() and _wanted(f, exts) and not any(part.startswith(".") for part in f.relative_to(p).parts):
                    rel = f.relative_to(p)
                    site = rel.parts[0] if len(rel.parts) > 1 else p.resolve().name
                    add(str(f), rel.as_posix(), site)
            if len(found) == n0 and not any(True for _ in p.rglob("*")):
                raise InvalidParameterError(f"{item}: the folder is empty")
        elif p.is_file():
            add(str(p), p.name, p.resolve().parent.name)
        else:
            raise InvalidParameterError(f"{item}: no such file or folder")
    return sorted(found.values(), key=lambda f: (f.site, f.name, f.path))


def _discover_url(url: str, exts: set[str]) -> list[tuple[str, str, str]]:
    import fsspec

    fs, root = fsspec.core.url_to_fs(url)
    proto = url.split("://", 1)[0]
    if _GLOB_CHARS.search(root):
        paths = [p for p in fs.glob(root) if fs.isfile(p)]
        base = root.split("*", 1)[0].rsplit("/", 1)[0]
    elif fs.isdir(root):
        paths = [p for p in fs.find(root) if Path(p).suffix.lower() in exts]
        base = root.rstrip("/")
    else:
        paths = [root] if fs.exists(root) else []
        base = root.rsplit("/", 1)[0]
    if not paths:
        raise InvalidParameterError(f"{url}: names no capture file")
    out = []
    for p in sorted(paths):
        rel = p[len(base):].lstrip("/") if p.startswith(base) else p.rsplit("/", 1)[-1]
        parts = rel.split("/")
        site = parts[0] if len(parts) > 1 else base.rsplit("/", 1)[-1]
        out.append((f"{proto}://{p}" if not p.startswith(f"{proto}://") else p, rel, site))
    return out


def file_sha256(path: str) -> str:
    """SHA-256 of a local file or an fsspec URL's bytes."""
    if "://" not in path:
        return sha256_file(path)
    import fsspec

    h = hashlib.sha256()
    with fsspec.open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 22), b""):
            h.update(block)
    return h.hexdigest()


def hash_all(paths: Sequence[str], n_threads: int) -> list[str]:
    def one(p: str) -> str:
        try:
            return file_sha256(p)
        except OSError as e:
            # an unreadable file still gets a row: key it by its path, it will fail in the worker
            return "unreadable-" + hashlib.sha256(f"{p}:{e}".encode()).hexdigest()

    with cf.ThreadPoolExecutor(max_workers=max(1, min(8, n_threads))) as ex:
        return list(ex.map(one, paths))
