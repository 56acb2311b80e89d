"""The motor map: which nameplate goes with which capture (one for all, or per site / name pattern)."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
from pathlib import Path
from typing import Any

from ..errors import CaptureReadError, InvalidParameterError
from ..tomlfile import read_toml
from .inputs import InputFile


@dataclasses.dataclass(frozen=True)
class MotorMap:
    """Which nameplate goes with which capture.

    Read from TOML (paths relative to the mapping file)::

        default = "plates/generic_15kw.toml"     # optional

        [[motor]]
        site = "pump-house"                      # exact site name
        nameplate = "plates/pump_22kw.toml"

        [[motor]]
        match = "north-yard/fan*"                # glob on the capture's name
        nameplate = "plates/fan_7kw.toml"

    The first rule that fits wins; then ``default``; else the nameplate stored
    in the capture, if any.
    """

    rules: tuple[tuple[str, str, Any, str], ...]  # (field, pattern, Nameplate, source)
    default: Any = None
    default_source: str = ""

    @classmethod
    def single(cls, path: str | os.PathLike[str]) -> MotorMap:
        from ..motor.nameplate import load_nameplate

        return cls(rules=(), default=load_nameplate(path), default_source=os.fspath(path))

    @classmethod
    def load(cls, path: str | os.PathLike[str]) -> MotorMap:
        from ..motor.nameplate import load_nameplate

        path = Path(path)
        data, _ = read_toml(path, "motor mapping file")
        for key in data:
            if key not in ("default", "motor"):
                raise CaptureReadError(path, f"key {key}", "unknown key; known keys: ['default', 'motor']")
        rules = []
        items = data.get("motor", [])
        if not isinstance(items, list):
            raise CaptureReadError(path, "key motor", "must be an array of tables [[motor]]")
        for i, item in enumerate(items):
            where = f"motor[{i}]"
            if not isinstance(item, dict):
                raise CaptureReadError(path, f"key {where}", "must be a table")
            extra = sorted(set(item) - {"site", "match", "nameplate"})
            if extra:
                raise CaptureReadError(path, f"key {where}.{extra[0]}", "unknown key; known keys: ['match', 'nameplate', 'site']")
            sel = [k for k in ("site", "match") if k in item]
            if len(sel) != 1 or not isinstance(item[sel[0]], str):
                raise CaptureReadError(path, f"key {where}", "give exactly one of site = \"...\" or match = \"glob\"")
            plate_file = item.get("nameplate")
            if not isinstance(plate_file, str):
                raise CaptureReadError(path, f"key {where}.nameplate", "missing; the nameplate TOML file for these captures")
            full = (path.parent / plate_file)
            rules.append((sel[0], item[sel[0]], load_nameplate(full), str(full)))
        default = data.get("default")
        if default is not None and not isinstance(default, str):
            raise CaptureReadError(path, "key default", f"{default!r} must be a nameplate file name")
        plate = None if default is None else load_nameplate(path.parent / default)
        return cls(rules=tuple(rules), default=plate, default_source="" if default is None else str(path.parent / default))

    def for_input(self, f: InputFile) -> tuple[Any, str]:
        """(Nameplate or None, where it came from) for one capture."""
        import fnmatch

        for field, pattern, plate, source in self.rules:
            if field == "site" and f.site == pattern:
                return plate, source
            if field == "match" and (fnmatch.fnmatchcase(f.name, pattern) or fnmatch.fnmatchcase(f.path, pattern)):
                return plate, source
        return self.default, self.default_source


def plate_digest(plate: Any) -> str:
    if plate is None:
        return "none"
    d = plate.to_dict()
    d.pop("warnings", None)
    return hashlib.sha256(json.dumps(d, sort_keys=True, default=str).encode()).hexdigest()[:12]


def motor_map(motor: str | os.PathLike[str] | None, motors: str | os.PathLike[str] | None) -> MotorMap:
    if motor is not None and motors is not None:
        raise InvalidParameterError("give either motor (one nameplate for all) or motors (a mapping), not both")
    if motor is not None:
        return MotorMap.single(motor)
    return MotorMap.load(motors) if motors is not None else MotorMap(rules=())
