"""The importer registry: one entry per file format, each a sniffer plus a reader.

An importer is one module in `waveforms.io` that calls `register` at import
time.  `read_capture` picks the importer (explicit ``format=`` skips sniffing;
otherwise the highest-priority importer whose sniffer accepts the file), and
the CLI's ``--format`` choices and the README's format table come from here.

Sniffers are cheap, never raise and never modify the file.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
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


@dataclasses.dataclass(frozen=True)
class Importer:
    """A registered file format."""

    name: str
    description: str
    extensions: tuple[str, ...]
    sniff: Callable[[Path], bool]
    read: Callable[[Path, ReadOptions], Capture]
    priority: int = 0


_REGISTRY: dict[str, Importer] = {}


def register(importer: Importer) -> Importer:
    """Add an importer; names are unique."""
    if importer.name in _REGISTRY:
        raise InvalidParameterError(f"importer {importer.name!r} is registered twice")
    _REGISTRY[importer.name] = importer
    return importer


def importers() -> tuple[Importer, ...]:
    """All importers, highest priority first."""
    _load_builtin()
    return tuple(sorted(_REGISTRY.values(), key=lambda i: (-i.priority, i.name)))


def importer_names() -> tuple[str, ...]:
    return tuple(i.name for i in importers())


def _load_builtin() -> None:
    # Importing the package's modules registers them (one module = one importer).
    from . import builtin  # noqa: F401


def detect_format(path: Path) -> Importer:
    """The importer whose sniffer accepts ``path`` (highest priority first)."""
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
    path: str | os.PathLike[str], format: str | None = None, options: ReadOptions | None = None
) -> Capture:
    """Read one capture file into a `Capture`.

    Parameters
    ----------
    path : path-like
        The capture; opened read-only, never modified.
    format : str, optional
        Registry name of the importer; skips sniffing.
    options : ReadOptions, optional

    Raises
    ------
    CaptureReadError
        With the file, the place and the problem, for anything wrong with the input.
    """
    p = Path(path)
    if not p.exists():
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
    return imp.read(p, options or ReadOptions())
