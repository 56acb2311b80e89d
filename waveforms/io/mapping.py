"""Channel mapping: which column or dataset is which channel, in which unit, with which ratio.

A mapping comes from a small TOML file (``--mapping FILE``), from command-line
options, or from automatic recognition of common header spellings; every
guess is recorded in ``Provenance.notes`` and ``Provenance.mapping``.

Mapping file (every table and key optional)::

    unknown = "error"            # or "ignore": drop unrecognised columns (with a note)
    ignore = ["Temp", "Status"]  # columns / datasets never read

    [capture]
    sample_rate_hz = 10000       # when the file has no time column
    start_time = "2024-03-01T10:00:00+01:00"
    nominal_frequency_hz = 50
    nominal_voltage_v = 400      # declared line-to-line RMS
    wiring = "4-wire"

    [time]
    column = "Zeit"              # "" or absent: recognised automatically; none = true: no time column
    format = "seconds"           # "seconds" or "iso8601" (default: recognised)
    unit = "ms"                  # for numeric time: s, ms, us, ns
    utc_offset = "+01:00"        # for ISO time stamps written without an offset

    [csv]
    delimiter = ";"              # ",", ";", "\\t" (default: recognised)
    decimal = ","                # "." or "," (default: recognised)
    header_line = 4              # 1-based line of the header row (default: recognised)
    encoding = "latin-1"         # default: utf-8, falling back to latin-1

    [hdf5]                       # generic HDF5 files (importer "hdf5-mapped")
    rate_attribute = "/data:fs"      # "<object path>:<attribute>", rate in Hz
    interval_attribute = "/data:dt"  # or the sample interval in s
    start_attribute = "/:t0"         # ISO 8601 text with offset, or POSIX seconds (UTC)
    matrix = "/data"                 # matrix-shaped files (importer "hdf5-matrix"): the 2-D dataset
    channels_along = "columns"       # "columns" (samples x channels) or "rows"; default from the shape

    [channels.Va]                # the key is the channel name; a trade label (Va, Vab, Ia, In)
    column = "U1"                # CSV header as written (or dataset = "/data/u1" for HDF5)
    unit = "kV"                  # unit of the raw numbers, with prefix (V, kV, mV, A, mA, kA, uA)
    ratio = "11000:110"          # PT/CT ratio, primary:secondary or a number; samples x ratio
    kind = "voltage"             # only needed when the key is not a trade label
    conductor = "A"
    reference = "LN"             # LN, LL, line, neutral, winding

    [channels.Iab]               # a delta winding current (six-lead hook-up): winding A-B, measured A -> B
    column = "CT1"               # (Ibc: B-C, Ica: C-A; turned into line currents Ia = Iab - Ica ..., docs/importing.md)

Recognised header spellings: `waveforms.io.spellings.SPELLINGS` (the table in
docs/importing.md is rendered from it).
"""

from __future__ import annotations

import dataclasses
import difflib
import math
import re
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from ..capture import BASE_UNIT, Channel
from ..errors import CaptureReadError, MappingError
from ..tomlfile import read_toml
from .spellings import (  # noqa: F401  (TIME_UNITS, UNIT_RE, Recognised, split_unit are used from here too)
    TIME_UNITS, UNIT_RE, Recognised, channel_label, recognise, refusal, split_unit,
)

TOP_KEYS = ("unknown", "ignore", "capture", "time", "csv", "hdf5", "channels")
SECTION_KEYS = {
    "capture": ("sample_rate_hz", "start_time", "nominal_frequency_hz", "nominal_voltage_v", "wiring"),
    "time": ("column", "none", "format", "unit", "utc_offset"),
    "csv": ("delimiter", "decimal", "header_line", "encoding"),
    "hdf5": ("rate_attribute", "interval_attribute", "start_attribute", "matrix", "channels_along"),
}
CHANNEL_KEYS = ("column", "dataset", "unit", "ratio", "kind", "conductor", "reference")

#: Unit prefixes accepted in headers and mapping files.
PREFIX = {"": 1.0, "k": 1e3, "K": 1e3, "M": 1e6, "m": 1e-3, "u": 1e-6, "µ": 1e-6, "μ": 1e-6}
_TIME_RE = re.compile(
    r"^(?P<name>t|time|times|timestamp|time ?stamp|date ?time|datetime|zeit|temps|tiempo|seconds|sec|elapsed)"
    r"(?:[_ ](?P<unit>s|ms|us|ns))?$", re.IGNORECASE)

#: Canonical spellings offered as suggestions for unrecognised headers.
CANONICAL = ("Va", "Vb", "Vc", "Vab", "Vbc", "Vca", "Vn", "Ia", "Ib", "Ic", "In")
_label = channel_label


def is_time_header(header: str) -> bool:
    """True for the usual names of a time column (``Time``, ``t (s)``, ``time_s``, ``Timestamp``, ``Zeit [ms]``)."""
    name, _ = split_unit(header)
    return bool(_TIME_RE.match(name.strip()))


def time_header_unit(header: str) -> str | None:
    """The unit written in a time header: ``"ms"`` for ``Time (ms)`` or ``time_ms``; None when absent."""
    name, unit = split_unit(header)
    if unit:
        return unit
    m = _TIME_RE.match(name.strip())
    return m.group("unit") if m and m.group("unit") else None


def time_unit_factor(unit: str | None, path: str | Path, where: str) -> float:
    """Seconds per unit of a numeric time column (``s`` when no unit is given)."""
    if unit is None or unit == "":
        return 1.0
    if unit in TIME_UNITS:
        return TIME_UNITS[unit]
    raise CaptureReadError(path, where, f"time unit {unit!r} is not one of {sorted(TIME_UNITS)}")


def unit_factor(unit: str, kind: str, path: str | Path, where: str) -> float:
    """Factor from a unit with prefix (``kV``, ``mA``) to the base unit of ``kind``.

    Raises
    ------
    CaptureReadError
        When the unit is not a voltage/current unit, or belongs to the other kind
        (a voltage channel in A).
    """
    m = UNIT_RE.match(unit.strip())
    if m is None:
        raise CaptureReadError(path, where, f"unit {unit!r} is not a voltage or current unit (V, kV, mV, A, kA, mA, uA)")
    base = "V" if m.group("base").upper().startswith("V") else "A"
    if base != BASE_UNIT[kind]:
        raise CaptureReadError(path, where, f"unit {unit!r} does not fit a {kind} channel (expected {BASE_UNIT[kind]} with an optional prefix)")
    return PREFIX[m.group("prefix")]


def parse_ratio(value: Any, path: str | Path, where: str) -> float:
    """A CT/PT ratio given as a number or as ``"primary:secondary"`` (``"400:5"`` -> 80)."""
    try:
        if isinstance(value, str) and ":" in value:
            p, s = value.split(":", 1)
            r = float(p) / float(s)
        else:
            r = float(value)
    except (TypeError, ValueError, ZeroDivisionError):
        raise MappingError(path, where, f"ratio {value!r} is not a number or 'primary:secondary'") from None
    if not (math.isfinite(r) and r > 0):
        raise MappingError(path, where, f"ratio {value!r} must be positive")
    return r


def suggest(name: str, candidates: Iterable[str], n: int = 3) -> str:
    """``"; did you mean 'Ia', 'Ib'?"`` or ``""`` (difflib close matches, case-insensitive)."""
    cands = list(dict.fromkeys(candidates))
    lower = {c.lower(): c for c in cands}
    hits = difflib.get_close_matches(name.lower(), list(lower), n=n, cutoff=0.5)
    if not hits:
        return ""
    return "; did you mean " + ", ".join(repr(lower[h]) for h in hits) + "?"


# -- mapping tables -------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class Mapping:
    """A validated mapping table (see the module docstring for its keys)."""

    source: str = ""
    channels: dict[str, dict[str, Any]] = dataclasses.field(default_factory=dict)
    capture: dict[str, Any] = dataclasses.field(default_factory=dict)
    time: dict[str, Any] = dataclasses.field(default_factory=dict)
    csv: dict[str, Any] = dataclasses.field(default_factory=dict)
    hdf5: dict[str, Any] = dataclasses.field(default_factory=dict)
    ignore: tuple[str, ...] = ()
    unknown: str = "error"


def load_mapping_file(path: str | Path) -> dict[str, Any]:
    """Read a mapping TOML file into a plain dict (validated by `parse_mapping`)."""
    p = Path(path)
    d, _ = read_toml(p, "mapping file", MappingError)
    parse_mapping(d, str(p))  # validate early, with the file's name in messages
    return d


def merge_mappings(base: dict[str, Any] | None, extra: dict[str, Any] | None) -> dict[str, Any] | None:
    """Overlay ``extra`` (command-line options) on ``base`` (a mapping file), one level deep per table."""
    if not base and not extra:
        return None
    out: dict[str, Any] = {k: (dict(v) if isinstance(v, dict) else v) for k, v in (base or {}).items()}
    for k, v in (extra or {}).items():
        if k == "channels" and isinstance(v, dict):
            chans = out.setdefault("channels", {})
            for name, spec in v.items():
                chans[name] = {**chans.get(name, {}), **spec}
        elif k == "ignore":
            out["ignore"] = list(out.get("ignore", [])) + list(v)
        elif isinstance(v, dict):
            out[k] = {**out.get(k, {}), **v}
        else:
            out[k] = v
    return out


def _check_keys(d: dict[str, Any], allowed: Sequence[str], source: str, where: str) -> None:
    for k in d:
        if k not in allowed:
            raise MappingError(source, f"key {where}{k}", f"unknown key{suggest(k, allowed)} (allowed: {', '.join(allowed)})")


def parse_mapping(d: dict[str, Any] | None, source: str = "mapping") -> Mapping:
    """Validate a mapping dict (from TOML or CLI options) into a `Mapping`."""
    if not d:
        return Mapping(source=source)
    if not isinstance(d, dict):
        raise MappingError(source, "", "a mapping must be a table")
    _check_keys(d, TOP_KEYS, source, "")
    sections: dict[str, dict[str, Any]] = {}
    for sec, keys in SECTION_KEYS.items():
        v = d.get(sec, {})
        if not isinstance(v, dict):
            raise MappingError(source, f"key {sec}", "must be a table ([section])")
        _check_keys(v, keys, source, f"{sec}.")
        sections[sec] = dict(v)
    chans = d.get("channels", {})
    if not isinstance(chans, dict):
        raise MappingError(source, "key channels", "must be a table of tables ([channels.Va])")
    for name, spec in chans.items():
        if not isinstance(spec, dict):
            raise MappingError(source, f"key channels.{name}", "must be a table (column = ..., unit = ...)")
        _check_keys(spec, CHANNEL_KEYS, source, f"channels.{name}.")
        if "ratio" in spec:
            parse_ratio(spec["ratio"], source, f"key channels.{name}.ratio")
    unknown = d.get("unknown", "error")
    if unknown not in ("error", "ignore"):
        raise MappingError(source, "key unknown", f"{unknown!r} must be 'error' or 'ignore'")
    ignore = d.get("ignore", [])
    if isinstance(ignore, str) or not all(isinstance(x, str) for x in ignore):
        raise MappingError(source, "key ignore", "must be a list of column / dataset names")
    return Mapping(source=source, channels={k: dict(v) for k, v in chans.items()}, ignore=tuple(ignore), unknown=unknown, **sections)


# -- resolving against a file ----------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class ChannelSpec:
    """One channel as it will be read: where from, and the factor to base units."""

    name: str
    source_label: str
    kind: str
    conductor: str
    reference: str
    unit: str
    prefix_factor: float
    ratio: float
    guessed: bool

    @property
    def scale(self) -> float:
        return self.prefix_factor * self.ratio

    def channel(self) -> Channel:
        return Channel(
            name=self.name, kind=self.kind, conductor=self.conductor, reference=self.reference,  # type: ignore[arg-type]
            unit=BASE_UNIT[self.kind], source_label=self.source_label, scale=self.scale,
        )

    def record(self) -> dict[str, Any]:
        return {
            "source": self.source_label, "kind": self.kind, "conductor": self.conductor,
            "reference": self.reference, "unit": self.unit, "ratio": self.ratio, "scale": self.scale,
            "how": "guessed from the header" if self.guessed else "given",
        }


def _spec_from_entry(name: str, entry: dict[str, Any], source_label: str, header_unit: str | None,
                     mapping: Mapping, path: str | Path, where: str) -> ChannelSpec:
    rec = recognise(name)
    kind = entry.get("kind", rec.kind if rec else None)
    conductor = entry.get("conductor", rec.conductor if rec else None)
    reference = entry.get("reference", rec.reference if rec else None)
    if kind is None or conductor is None or reference is None:
        raise MappingError(mapping.source, f"key channels.{name}",
                           "is not a trade label (Va, Vab, Ia, In...); give kind, conductor and reference")
    unit = entry.get("unit", header_unit)
    try:
        Channel(name, kind, conductor, reference, BASE_UNIT.get(kind, "V"))  # validates the three fields
    except Exception as e:
        raise MappingError(mapping.source, f"key channels.{name}", str(e)) from None
    factor = 1.0 if unit in (None, "") else unit_factor(str(unit), kind, path, where)
    ratio = parse_ratio(entry.get("ratio", 1.0), mapping.source, f"key channels.{name}.ratio")
    spec = ChannelSpec(_label(kind, conductor, reference), source_label, kind, conductor, reference,
                       str(unit or BASE_UNIT[kind]), factor, ratio, False)
    return spec


def resolve_channels(
    headers: Sequence[str], mapping: Mapping, path: str | Path, what: str = "column",
    where_of: Any = None,
) -> tuple[list[ChannelSpec], list[str]]:
    """Decide which of ``headers`` are which channels.

    Parameters
    ----------
    headers : sequence of str
        Column headers (or dataset paths) available, excluding the time column.
    mapping : Mapping
    path : path-like
        The capture, for messages.
    what : {"column", "dataset"}
        The mapping key that names a source.
    where_of : callable, optional
        ``where_of(header) -> str`` place text for messages (default ``"column 'X'"``).

    Returns
    -------
    specs : list of ChannelSpec
        In the order of ``headers``.
    notes : list of str
        What was guessed or dropped.

    Raises
    ------
    MappingError
        A mapped column is missing (with suggestions), a header is not recognised
        and not ignored (with suggestions), or two columns give the same channel.
    """
    where_of = where_of or (lambda h: f"{what} {h!r}")
    notes: list[str] = []
    by_source: dict[str, ChannelSpec] = {}
    for name, entry in mapping.channels.items():
        src = entry.get(what) or entry.get("column") or entry.get("dataset")
        if src is None:
            # key alone: a header spelled like the key
            key_rec = recognise(name)
            matches = [h for h in headers if h == name or (key_rec is not None and (r := recognise(h)) is not None and r.label == key_rec.label)]
            if not matches:
                raise MappingError(mapping.source, f"key channels.{name}", f"names no {what}; give {what} = ...{suggest(name, headers)}")
            src = matches[0]
        if src not in headers:
            raise MappingError(path, f"{what} {src!r} (mapping channels.{name})", f"not found in the file{suggest(src, headers)} ({what}s: {', '.join(map(repr, headers))})")
        _, hunit = split_unit(src)
        by_source[src] = _spec_from_entry(name, entry, src, hunit, mapping, path, where_of(src))
    specs: list[ChannelSpec] = []
    for h in headers:
        if h in by_source:
            specs.append(by_source[h])
            continue
        if h in mapping.ignore:
            notes.append(f"{what} {h!r} ignored (mapping)")
            continue
        rec = recognise(h)
        if rec is None:
            why = refusal(h)
            if mapping.unknown == "ignore":
                notes.append(f"{what} {h!r} not recognised as a channel{' (' + why + ')' if why else ''}; ignored")
                continue
            if why is not None:
                raise MappingError(path, where_of(h), why if what == "column" else why.replace("column = ", f"{what} = "))
            raise MappingError(
                path, where_of(h),
                f"not a known channel name{suggest(split_unit(h)[0], CANONICAL) or '.'} "
                f"Map it in a mapping file ([channels.Va] {what} = {h!r}) or ignore it (--ignore {h!r})",
            )
        factor = 1.0 if rec.unit is None else unit_factor(rec.unit, rec.kind, path, where_of(h))
        spec = ChannelSpec(rec.label, h, rec.kind, rec.conductor, rec.reference, rec.unit or BASE_UNIT[rec.kind], factor, 1.0, True)
        unit_txt = f" in {rec.unit}" if rec.unit else f", no unit stated, taken as {BASE_UNIT[rec.kind]}"
        rule = f"; spelling: {rec.rule}" if rec.rule else ""
        notes.append(f"{what} {h!r} recognised as {rec.label} ({rec.kind}, {rec.conductor}, {rec.reference}{rule}){unit_txt}")
        specs.append(spec)
    seen: dict[str, str] = {}
    for s in specs:
        if s.name in seen:
            raise MappingError(path, f"{what}s {seen[s.name]!r} and {s.source_label!r}", f"both give channel {s.name}; map or ignore one of them")
        seen[s.name] = s.source_label
    if not specs:
        raise MappingError(path, "", f"no channels found among {what}s {', '.join(map(repr, headers)) or '(none)'}")
    return specs, notes


def mapping_record(specs: Sequence[ChannelSpec], extra: dict[str, Any] | None = None) -> dict[str, Any]:
    """The mapping actually used, for ``Provenance.mapping``."""
    out: dict[str, Any] = {"channels": {s.name: s.record() for s in specs}}
    out.update(extra or {})
    return out
