"""Command-line options that say how to read a capture, shared by the commands that read one.

`read_options` is a click decorator adding ``--mapping --format --rate --start
--nominal-frequency --nominal-voltage --wiring --resample --map --unit --ratio
--ignore --ignore-unknown``; `options_from` turns the parsed values into
(`format`, `ReadOptions`) for `waveforms.io.read_capture`.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Callable
from typing import Any

import click

from ..errors import InvalidParameterError
from ..io.mapping import load_mapping_file, merge_mappings, parse_mapping
from ..io.registry import ReadOptions, importer_names


#: Highest sample rate accepted [Hz] (common practice, no source: waveform recorders sample at
#: kHz to a few MHz; beyond this a value is a mistake in the file or the option).
MAX_RATE_HZ = 1e8


def positive_option(value: float | None, option: str, unit: str) -> float | None:
    """``value`` when it is a finite positive number (or None), else a one-line error naming the option."""
    if value is not None and not (math.isfinite(value) and value > 0):
        raise InvalidParameterError(f"{option} {value!r}: must be a finite positive number [{unit}]")
    return value


def safe_stem(stem: str | None) -> str | None:
    """A ``--stem`` that stays a file name inside the output folder: no separator, no absolute path, no ``..``."""
    if stem is None:
        return None
    bad = (not stem.strip() or "/" in stem or "\\" in stem or stem in (".", "..") or stem.startswith("~")
           or any(ord(c) < 32 for c in stem) or ":" in stem)
    if bad:
        raise InvalidParameterError(f"--stem {stem!r}: must be a plain file-name stem (no path separator, "
                                    "no absolute path, no '..'); outputs are always written inside --out")
    return stem


def _pairs(values: tuple[str, ...], option: str) -> list[tuple[str, str]]:
    out = []
    for v in values:
        if "=" not in v:
            raise InvalidParameterError(f"{option} {v!r}: expected NAME=VALUE")
        k, val = v.split("=", 1)
        out.append((k.strip(), val.strip()))
    return out


def read_options(func: Callable[..., Any]) -> Callable[..., Any]:
    """Add the reading options to a click command."""
    opts = [
        click.option("--mapping", "mapping_file", type=click.Path(dir_okay=False), help="Channel-mapping TOML file (see docs/importing.md)."),
        click.option("--format", "format_name", type=click.Choice(importer_names()), help="Importer to use; skips format recognition."),
        click.option("--rate", "rate_hz", type=float, help="Sample rate [Hz] when the file has no time column."),
        click.option("--start", "start", help="Absolute start time, ISO 8601 with UTC offset (2024-03-01T10:00:00+01:00)."),
        click.option("--nominal-frequency", "nominal_frequency_hz", type=click.Choice(["50", "60"]), help="Declared system frequency [Hz]; inferred when not given."),
        click.option("--nominal-voltage", "nominal_voltage_v", type=float, help="Declared line-to-line RMS voltage [V]."),
        click.option("--wiring", type=click.Choice(["3-wire", "4-wire"]), help="Supply wiring."),
        click.option("--resample", is_flag=True, help="Interpolate irregular time stamps onto a uniform grid (recorded in the history)."),
        click.option("--map", "maps", multiple=True, metavar="COLUMN=NAME", help="Map a column or dataset to a channel (Va, Vab, Ia, In...). Repeatable."),
        click.option("--unit", "units", multiple=True, metavar="NAME=UNIT", help="Unit of a channel's raw numbers (kV, mA...). Repeatable."),
        click.option("--ratio", "ratios", multiple=True, metavar="NAME=RATIO", help="CT/PT ratio of a channel, '400:5' or a number. Repeatable."),
        click.option("--ignore", "ignores", multiple=True, metavar="COLUMN", help="Column or dataset not to read. Repeatable."),
        click.option("--ignore-unknown", is_flag=True, help="Drop unrecognised columns (with a note) instead of stopping."),
    ]
    for o in reversed(opts):
        func = o(func)
    return func


def default_threads() -> int:
    """Threads a command uses when ``--threads`` is not given: every core this process may run on."""
    import os

    try:
        return max(1, len(os.sched_getaffinity(0)))
    except (AttributeError, OSError):  # not on every platform
        return max(1, os.cpu_count() or 1)


def threads_option(func: Callable[..., Any]) -> Callable[..., Any]:
    """Add ``--threads N`` (default: all cores) to a click command."""
    return click.option("--threads", "threads", type=click.IntRange(min=1), default=None,
                        help="Threads for independent work (measurement blocks, speed windows) [all cores]. "
                             "Results are the same for any value.")(func)


def options_from(kw: dict[str, Any]) -> tuple[str | None, ReadOptions]:
    """(format name, ReadOptions) from the values of `read_options`; pops them from ``kw``."""
    mapping_file = kw.pop("mapping_file", None)
    base = load_mapping_file(mapping_file) if mapping_file else None
    extra: dict[str, Any] = {}
    chans: dict[str, dict[str, Any]] = {}
    for col, name in _pairs(kw.pop("maps", ()), "--map"):
        chans.setdefault(name, {})["column"] = col
    for name, unit in _pairs(kw.pop("units", ()), "--unit"):
        chans.setdefault(name, {})["unit"] = unit
    for name, ratio in _pairs(kw.pop("ratios", ()), "--ratio"):
        chans.setdefault(name, {})["ratio"] = ratio
    if chans:
        extra["channels"] = chans
    ignores = kw.pop("ignores", ())
    if ignores:
        extra["ignore"] = list(ignores)
    if kw.pop("ignore_unknown", False):
        extra["unknown"] = "ignore"
    mapping = merge_mappings(base, extra)
    source = mapping_file or ("command line" if extra else "")
    if mapping_file and extra:
        source = f"{mapping_file} + command line"
    if mapping is not None:
        parse_mapping(mapping, source)
    start = kw.pop("start", None)
    start_time = None
    if start:
        try:
            start_time = _dt.datetime.fromisoformat(start.replace("Z", "+00:00"))
        except ValueError:
            raise InvalidParameterError(f"--start {start!r} is not an ISO 8601 time") from None
        if start_time.tzinfo is None:
            raise InvalidParameterError(f"--start {start!r} needs a UTC offset (e.g. +01:00 or Z)")
    rate = kw.pop("rate_hz", None)
    if rate is not None and not (math.isfinite(rate) and 0 < rate <= MAX_RATE_HZ):
        raise InvalidParameterError(f"--rate {rate!r}: must be a sample rate above 0 and at most {MAX_RATE_HZ:g} Hz")
    fnom = kw.pop("nominal_frequency_hz", None)
    vnom = kw.pop("nominal_voltage_v", None)
    if vnom is not None and not (math.isfinite(vnom) and vnom > 0):
        raise InvalidParameterError(f"--nominal-voltage {vnom!r}: must be a positive line-to-line RMS voltage [V]")
    opts = ReadOptions(
        mapping=mapping, mapping_source=source, sample_rate_hz=rate, start_time=start_time,
        nominal_frequency_hz=None if fnom is None else float(fnom),
        nominal_voltage_v=vnom, wiring=kw.pop("wiring", None),
        resample=bool(kw.pop("resample", False)),
    )
    return kw.pop("format_name", None), opts
