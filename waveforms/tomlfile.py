"""Reading the small TOML files users write (nameplates, mappings, scenarios, recipes).

One place for the messages: a missing file, bytes that are not UTF-8 and text
that is not TOML each end in one line naming the file.
"""

from __future__ import annotations

import tomllib
from os import PathLike
from pathlib import Path
from typing import Any

from .errors import CaptureReadError


def read_toml(
    path: str | PathLike[str], what: str, error: type[CaptureReadError] = CaptureReadError
) -> tuple[dict[str, Any], bytes]:
    """Parse a TOML file; return its tables and its raw bytes (for a fingerprint).

    Parameters
    ----------
    path : path-like
    what : str
        What the file is, for messages (``"nameplate file"``).
    error : CaptureReadError subclass
        The error raised, with the file named.
    """
    p = Path(path)
    try:
        raw = p.read_bytes()
    except FileNotFoundError:
        raise error(p, "", f"{what} not found") from None
    except OSError as e:
        raise error(p, "", f"cannot read the {what} ({e.strerror})") from None
    try:
        return tomllib.loads(raw.decode("utf-8")), raw
    except UnicodeDecodeError as e:
        raise error(p, f"byte {e.start}", "not UTF-8 text") from None
    except tomllib.TOMLDecodeError as e:
        raise error(p, "", f"not valid TOML ({e})") from None


def table_or_top(data: dict[str, Any], name: str, path: str | PathLike[str]) -> dict[str, Any]:
    """The table ``[name]`` if present, else the top-level keys (both layouts are accepted)."""
    table = data.get(name, data)
    if not isinstance(table, dict):
        raise CaptureReadError(path, f"key {name}", "must be a table")
    return dict(table)
