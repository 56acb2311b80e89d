"""The importer registry: one entry per file format, each a sniffer plus a reader.

An importer is one module in `waveforms.io`; `waveforms.io.builtin` registers
the built-in ones by name (``"waveforms.io.parquet:read_parquet"``), so that a
format's module, and the heavy library it needs (h5py, pyarrow), is imported
only when a file is sniffed or read with it.  Before the module is imported a
cheap pre-check runs: the file's leading bytes (``magic``, at given offsets)
or its extension (``extensions_only``).  `read_capture` picks the importer
(explicit ``format=`` skips sniffing; otherwise the highest-priority importer
whose sniffer accepts the file), and the CLI's ``--format`` choices and the
README's format table come from here.

Sniffers are cheap, never raise and never modify the file.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import importlib
import os
from collections.abc import Callable
from pathlib import Path
from typing import Any

from ..capture import Capture
from ..errors import CaptureReadError, InvalidParameterError


@dataclasses.dataclass(frozen=True)
class ReadOptions:
    """What the user told us about a file, beyond the file itself.

    Parameters
    ----------
    mapping : dict or None
        Parsed channel-mapping table (from a TOML file or built from CLI options);
        see `waveforms.io.mapping` for its keys.
    mapping_source : str
        Where the mapping came from (a path, or ``"command line"``), for messages.
    sample_rate_hz : float or None
        Rate to use when the file has no time column.
    start_time : datetime or None
        Absolute start when the file has none (timezone-aware).
    nominal_frequency_hz, nominal_voltage_v : float or None
        Declared system values; inferred / left unknown when None.
    wiring : {"3-wire", "4-wire"} or None
    resample : bool
        Put irregular time stamps on a uniform grid (only when asked).
    """

    mapping: dict[str, Any] | None = None
    mapping_source: str = ""
    sample_rate_hz: float | None = None
    start_time: _dt.datetime | None = None
    nominal_frequency_hz: float | None = None
    nominal_voltage_v: float | None = None
    wiring: str | None = None
    resample: bool = False


class Deferred:
    """A function named ``"package.module:function"``, imported on its first call."""

    def __init__(self, target: str) -> None:
        if ":" not in target:
            raise InvalidParameterError(f"{target!r} must be 'package.module:function'")
        self.target = target
        self._fn: Callable[..., Any] | None = None

    def resolve(self) -> Callable[..., Any]:
        if self._fn is None:
            module, name = self.target.split(":", 1)
            self._fn = getattr(importlib.import_module(module), name)
        return self._fn

    @property
    def loaded(self) -> bool:
        return self._fn is not None

    def __call__(self, *args: Any, **kwargs: Any) -> Any:
        return self.resolve()(*args, **kwargs)

    def __repr__(self) -> str:
        return f"Deferred({self.target!r})"


#: Where the HDF5 signature may sit: offset 0, or after a user block of 512, 1024, 2048... bytes (MATLAB v7.3 uses 512).
HDF5_SIGNATURE = b"\x89HDF\r\n\x1a\n"
HDF5_MAGIC = tuple((off, HDF5_SIGNATURE) for off in (0, 512, 1024, 2048, 4096))


def head_matches(path: Path, magic: tuple[tuple[int, bytes], ...]) -> bool:
    """True when one of the ``(offset, bytes)`` pairs is found in the file (False for a folder or a missing file).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "x.h5"
    >>> _ = path.write_bytes(HDF5_SIGNATURE + bytes(8))
    >>> head_matches(path, HDF5_MAGIC), head_matches(path, ((0, b"PAR1"),))
    (True, False)
    """
    try:
        with open(path, "rb") as fh:
            for off, sig in magic:
                fh.seek(off)
                if fh.read(len(sig)) == sig:
                    return True
    except OSError:
        return False
    return False


@dataclasses.dataclass(frozen=True)
class Importer:
    """A registered file format.

    Parameters
    ----------
    name, description : str
    extensions : tuple of str
        Lower-case, with the dot.
    sniff, read : callable or str
        ``sniff(path) -> bool`` and ``read(path, options) -> Capture``, or their
        names ``"package.module:function"``: the module is then imported only
        when the function is first called (`Deferred`).
    priority : int
        Higher is tried first.
    magic : tuple of (int, bytes)
        Leading bytes at offsets: the sniffer runs only when one of them is found.
    extensions_only : bool
        The sniffer runs only for files with one of ``extensions``.
    """

    name: str
    description: str
    extensions: tuple[str, ...]
    sniff: Callable[[Path], bool]
    read: Callable[[Path, ReadOptions], Capture]
    priority: int = 0
    magic: tuple[tuple[int, bytes], ...] = ()
    extensions_only: bool = False

    def __post_init__(self) -> None:
        sniff = Deferred(self.sniff) if isinstance(self.sniff, str) else self.sniff
        if isinstance(self.read, str):
            object.__setattr__(self, "read", Deferred(self.read))
        object.__setattr__(self, "sniff", _PreChecked(sniff, self.magic, self.extensions if self.extensions_only else None))

    @property
    def loaded(self) -> bool:
        """Whether the importer's module has been imported (False until its sniffer or reader is first needed)."""
        fns = [self.read, getattr(self.sniff, "inner", None)]
        return all(getattr(f, "loaded", True) for f in fns)


class _PreChecked:
    """A sniffer behind the cheap checks (magic bytes, extension) that need no import."""

    def __init__(self, inner: Callable[[Path], bool], magic: tuple[tuple[int, bytes], ...], extensions: tuple[str, ...] | None) -> None:
        self.inner = inner
        self.magic = magic
        self.extensions = extensions

    def __call__(self, path: Path) -> bool:
        p = Path(path)
        if self.extensions is not None and p.suffix.lower() not in self.extensions:
            return False
        if self.magic and not head_matches(p, self.magic):
            return False
        return bool(self.inner(p))


_REGISTRY: dict[str, Importer] = {}


def register(importer: Importer) -> Importer:
    """Add an importer; names are unique.

    Examples
    --------
    A name can be registered only once:

    >>> register(importers()[0])
    Traceback (most recent call last):
    ...
    waveforms.errors.InvalidParameterError: importer ... is registered twice
    """
    if importer.name in _REGISTRY:
        raise InvalidParameterError(f"importer {importer.name!r} is registered twice")
    _REGISTRY[importer.name] = importer
    return importer


def importers() -> tuple[Importer, ...]:
    """All importers, highest priority first.

    Examples
    --------
    Every importer registered with the package is listed, highest priority first:

    >>> "csv" in [imp.name for imp in importers()]
    True
    """
    _load_builtin()
    return tuple(sorted(_REGISTRY.values(), key=lambda i: (-i.priority, i.name)))


def importer_names() -> tuple[str, ...]:
    """The registered importers' names, highest priority first.

    Examples
    --------
    >>> {"csv", "comtrade", "parquet"} <= set(importer_names())
    True
    """
    return tuple(i.name for i in importers())


def _load_builtin() -> None:
    # Importing the package's modules registers them (one module = one importer).
    from . import builtin  # noqa: F401


def detect_format(path: Path) -> Importer:
    """The importer whose sniffer accepts ``path`` (highest priority first).

    Examples
    --------
    >>> import pathlib, tempfile
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "x.csv"
    >>> _ = path.write_text("time_s,Va\\n0,1\\n0.001,2\\n")
    >>> detect_format(path).name
    'csv'
    """
    candidates = importers()
    for imp in candidates:
        try:
            ok = imp.sniff(path)
        except Exception:  # a sniffer must never raise; treat a broken one as "no"
            ok = False
        if ok:
            return imp
    suffix = path.suffix.lower()
    by_ext = [i for i in candidates if suffix in i.extensions]
    if by_ext:
        return by_ext[0]
    raise CaptureReadError(
        path, "", f"unrecognised file format; known formats: {', '.join(importer_names())} (use --format)"
    )


def read_capture(
    path: str | os.PathLike[str], format: str | None = None, options: ReadOptions | None = None, *, mask: bool = True
) -> Capture:
    """Read one capture file into a `Capture`.

    Parameters
    ----------
    path : path-like
        The capture; opened read-only, never modified.
    format : str, optional
        Registry name of the importer; skips sniffing.
    options : ReadOptions, optional
    mask : bool
        Mask broken samples at once (`waveforms.io.masking.mask_broken`, a pass over the
        samples).  False leaves that to the caller, who then uses
        `waveforms.io.masking.defer_masking` so that a later pass carries the scan.

    Raises
    ------
    CaptureReadError
        With the file, the place and the problem, for anything wrong with the input.

    Examples
    --------
    A small CSV with a time column, written to a temporary folder and read back:

    >>> import pathlib, tempfile
    >>> import numpy as np
    >>> t = np.arange(200) / 2000.0
    >>> rows = ["time_s,Va,Vb,Vc,Ia,Ib,Ic"] + [
    ...     ",".join(f"{x:.6g}" for x in (tk, *(325 * np.cos(2 * np.pi * (50 * tk - k / 3)) for k in range(3)),
    ...                                    *(14 * np.cos(2 * np.pi * (50 * tk - k / 3) - 0.5) for k in range(3))))
    ...     for tk in t]
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "pump_a.csv"
    >>> _ = path.write_text("\\n".join(rows) + "\\n")
    >>> cap = read_capture(path)
    >>> print(cap.channel_names, cap.sample_rate_hz, cap.n_samples)
    ('Va', 'Vb', 'Vc', 'Ia', 'Ib', 'Ic') 2000.0 200
    """
    p = Path(path)
    if not p.exists():
        if p.is_symlink():
            raise CaptureReadError(p, "", "a symbolic link that leads nowhere (a loop, or its target is missing)")
        raise CaptureReadError(p, "", "file not found")
    if p.is_dir():
        raise CaptureReadError(p, "", "is a folder, not a capture file")
    if p.stat().st_size == 0:
        raise CaptureReadError(p, "", "file is empty")
    if format is not None:
        _load_builtin()
        if format not in _REGISTRY:
            raise InvalidParameterError(f"format={format!r} is not one of {list(importer_names())}")
        imp = _REGISTRY[format]
    else:
        imp = detect_format(p)
    cap = imp.read(p, options or ReadOptions())
    if not mask:
        return cap
    from .masking import mask_broken

    return mask_broken(cap, str(p))
