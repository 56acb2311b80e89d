"""What the importers share: start times, the epoch, and the checks of nominal values and wiring.

One place for the rules every importer applies the same way, so that a bad
nominal frequency, nominal voltage or wiring gives the same one-line error
(`waveforms.errors.CaptureReadError`, naming the file and the place) whatever
the file format.  An importer takes these public names from here, never
another importer's private ones.
"""

from __future__ import annotations

import datetime as _dt
import math
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .. import timebase
from ..errors import CaptureReadError, positive_number

if TYPE_CHECKING:
    from .mapping import Mapping
    from .registry import ReadOptions

#: Start of POSIX time; the start given to captures without an absolute time.
EPOCH = _dt.datetime(1970, 1, 1, tzinfo=_dt.timezone.utc)

#: Metadata values that mean "not given".
_UNSET = ("", "none", "None", "nan")


def one_line(text: str, limit: int = 200) -> str:
    """``text`` (often a library's message) on one line, at most ``limit`` characters.

    Line breaks become `` | ``; every error of this package is one line naming
    the file, the place and the problem (`waveforms.errors`).
    """
    flat = " | ".join(part.strip() for part in str(text).splitlines() if part.strip())
    return flat if len(flat) <= limit else flat[: limit - 3] + "..."


def parse_utc_offset(text: str, source: str | Path, where: str) -> _dt.timezone:
    """``"+01:00"``, ``"-0530"``, ``"Z"`` or ``"UTC"`` as a fixed offset.

    Raises
    ------
    MappingError
        Not an offset (``source`` and ``where`` name the place).
    """
    from ..errors import MappingError
    import re

    if text in ("Z", "UTC", "utc"):
        return _dt.timezone.utc
    m = re.fullmatch(r"([+-])(\d{2}):?(\d{2})", text.strip())
    if not m:
        raise MappingError(source, where, f"{text!r} is not a UTC offset like '+01:00'")
    sign = 1 if m.group(1) == "+" else -1
    return _dt.timezone(sign * _dt.timedelta(hours=int(m.group(2)), minutes=int(m.group(3))))


def parse_start_time(text: str, source: str, where: str) -> _dt.datetime:
    """An ISO 8601 start time with offset (``2024-03-01T10:00:00+01:00``).

    Raises
    ------
    CaptureReadError
        Not ISO 8601, or without a UTC offset (``source`` and ``where`` name the place).
    """
    try:
        t = _dt.datetime.fromisoformat(str(text).strip().replace("Z", "+00:00"))
    except ValueError:
        raise CaptureReadError(source, where, f"{text!r} is not an ISO 8601 time") from None
    if t.tzinfo is None:
        raise CaptureReadError(source, where, f"{text!r} has no UTC offset (write e.g. '+01:00' or 'Z')")
    return plausible_start(t, source, where)


#: Years a capture may start in (common practice, no source: before 1900 or after 2200 a stamp is a broken clock,
#: and the end of a capture must stay inside the calendar the program computes with).
START_YEARS = (1900, 2200)
#: Highest sample rate an importer accepts [Hz] (common practice, no source: waveform recorders sample at kHz to a
#: few MHz; far beyond, the value is a mistake in the file).
MAX_SAMPLE_RATE_HZ = 1e8


def plausible_start(t: _dt.datetime, source: str | Path, where: str) -> _dt.datetime:
    """``t`` when its year is within `START_YEARS`, else a `CaptureReadError` naming the place."""
    if not START_YEARS[0] <= t.year <= START_YEARS[1]:
        raise CaptureReadError(source, where, f"start time {t.isoformat()} is outside the years "
                                              f"{START_YEARS[0]}-{START_YEARS[1]} (a logger clock not set?)")
    return t


def check_sample_rate(rate: object, source: str | Path, where: str) -> float:
    """A finite sample rate above 0 and at most `MAX_SAMPLE_RATE_HZ`, else a `CaptureReadError` naming the place."""
    try:
        r = float(rate)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise CaptureReadError(source, where, f"sample rate {rate!r} is not a number") from None
    if not (math.isfinite(r) and 0 < r <= MAX_SAMPLE_RATE_HZ):
        raise CaptureReadError(source, where, f"sample rate {r:g} Hz must be above 0 and at most {MAX_SAMPLE_RATE_HZ:g} Hz")
    if r < 100.0:
        raise CaptureReadError(source, where, f"sample rate {r:g} Hz is too low for a 50/60 Hz waveform (at least 100 Hz)")
    return r


def infer_nominal_frequency_of(specs: list, values: np.ndarray, rate: float) -> tuple[float | None, str]:
    """Infer 50/60 Hz from the first phase voltage (else the first current); returns (value, note).

    ``specs`` are the channels' `waveforms.io.mapping.ChannelSpec`, ``values``
    their first samples (one row per channel) at ``rate`` [Hz].
    """
    order = sorted(range(len(specs)), key=lambda i: (specs[i].kind != "voltage", specs[i].reference not in ("LN", "LL")))
    for i in order:
        f, peak = timebase.infer_nominal_frequency(values[i], rate)
        if f is not None:
            return f, f"nominal frequency inferred as {f:g} Hz (dominant component at {peak:.2f} Hz in {specs[i].name}); give --nominal-frequency to override"
    return None, "nominal frequency unknown: no dominant component near 50 or 60 Hz (give --nominal-frequency)"


def system_values(options: ReadOptions, mapping: Mapping, meta: dict[str, str], src: str, path: str | Path,
                  specs: list, values: np.ndarray, rate: float, notes: list[str]) -> dict[str, Any]:
    """Nominal frequency, nominal voltage and wiring: given, from metadata, or inferred (with a note).

    The order is: command-line options, then the mapping's ``[capture]``
    table (named ``src`` in errors), then the file's own metadata ``meta``
    (named ``path``), then inference from the samples (``values`` of the
    channels ``specs`` at ``rate`` [Hz]), with a note appended to ``notes``.

    Returns
    -------
    dict
        ``nominal_frequency_hz``, ``nominal_voltage_v`` (None when not given)
        and ``wiring``: keyword arguments for `waveforms.capture.Capture`.

    Raises
    ------
    CaptureReadError
        A value that is not a positive number, a nominal frequency other than
        50 or 60 Hz, or a wiring other than '3-wire' / '4-wire'.
    """
    fnom = options.nominal_frequency_hz
    if fnom is None and "nominal_frequency_hz" in mapping.capture:
        fnom = positive_number(mapping.capture["nominal_frequency_hz"], src, "key capture.nominal_frequency_hz")
    if fnom is None and meta.get("nominal_frequency_hz", "") not in _UNSET:
        fnom = positive_number(meta["nominal_frequency_hz"], str(path), "metadata nominal_frequency_hz")
    if fnom is not None and fnom not in (50.0, 60.0):
        raise CaptureReadError(src, "nominal frequency", f"{fnom:g} Hz must be 50 or 60")
    if fnom is None:
        fnom, note = infer_nominal_frequency_of(specs, values, rate)
        notes.append(note)
    vnom = options.nominal_voltage_v
    if vnom is None and "nominal_voltage_v" in mapping.capture:
        vnom = positive_number(mapping.capture["nominal_voltage_v"], src, "key capture.nominal_voltage_v")
    if vnom is None and meta.get("nominal_voltage_v", "") not in _UNSET:
        vnom = positive_number(meta["nominal_voltage_v"], str(path), "metadata nominal_voltage_v")
    wiring = options.wiring or mapping.capture.get("wiring") or meta.get("wiring")
    if wiring is None:
        # the default follows the channels and the load: a three-phase motor circuit is 3-wire (no neutral goes to
        # the motor), so only a measured neutral (In, or a neutral-to-earth voltage Vn) says 4-wire; line-to-neutral
        # voltage leads alone do not (they may be taken to earth or a panel neutral).  Common practice, no source.
        has_neutral = any(s.reference == "neutral" for s in specs)
        has_ln = any(s.reference == "LN" for s in specs)
        wiring = "4-wire" if has_neutral else "3-wire"
        why = ("a neutral channel is present" if has_neutral else
               "no neutral channel; line-to-neutral leads alone do not make a 4-wire system, a motor circuit is 3-wire; "
               "give --wiring 4-wire for a 4-wire system" if has_ln else "line-to-line voltages only" if specs else "default")
        notes.append(f"wiring taken as {wiring} ({why})")
    if wiring not in ("3-wire", "4-wire"):
        raise CaptureReadError(src, "wiring", f"{wiring!r} must be '3-wire' or '4-wire'")
    return {"nominal_frequency_hz": fnom, "nominal_voltage_v": vnom, "wiring": wiring}


def start_plus(base: _dt.datetime, seconds: float, source: str | Path, where: str) -> _dt.datetime:
    """``base`` plus the first time stamp ``seconds``, within `START_YEARS`; a `CaptureReadError` when out of range."""
    try:
        if not math.isfinite(seconds) or abs(seconds) > 1e10:
            raise OverflowError
        t = base + _dt.timedelta(seconds=float(seconds))
    except (OverflowError, ValueError):
        raise CaptureReadError(source, where, f"time stamp {seconds:g} s is out of range (more than 300 years from the start)") from None
    return plausible_start(t, source, where)


def checked_capture(file: str | Path, /, **fields: Any) -> Any:
    """A `waveforms.capture.Capture` whose rate and start are checked first; its own errors name the file."""
    from ..capture import Capture
    from ..errors import InvalidParameterError

    fields["sample_rate_hz"] = check_sample_rate(fields["sample_rate_hz"], file, "time base")
    plausible_start(fields["start_time"], file, "start time")
    try:
        return Capture(**fields)
    except (InvalidParameterError, OverflowError) as e:
        raise CaptureReadError(file, "", str(e)) from None
