"""What a file's own metadata says: the key spellings for rate, interval, start time and nominal values.

Exports state their sample rate, start time or nominal voltage in many ways:
``Sample rate: 10 kHz`` above a CSV header, ``fs`` or ``dt`` attributes in an
HDF5 file, ``sample_rate_hz`` in Parquet key-value metadata.  This module is
the one list of those key spellings (`KEYS`, common practice, no source) and
the parsing of their values with units (``10 kHz``, ``100 us``, ``0.4 kV``),
shared by the CSV, matrix-HDF5 and Parquet importers.

`interpret` turns ``(key, value, place)`` triples into the canonical keys the
importers use (``sample_rate_hz``, ``start_time``, ``nominal_frequency_hz``,
``nominal_voltage_v``, ``wiring``) with one import note per key that was not
already written in the canonical form.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from pathlib import Path

from ..errors import CaptureReadError

#: Canonical key -> accepted spellings (normalised: lower case, words joined by "_", unit removed).
KEYS: dict[str, tuple[str, ...]] = {
    "sample_rate_hz": ("sample_rate_hz", "sample_rate", "sampling_rate", "sampling_frequency", "sample_frequency",
                       "samplerate", "samplingrate", "fs", "rate", "sample_rate_(hz)", "scan_rate", "samples_per_second",
                       "sampling_rate_hz", "fs_hz"),
    "sample_interval_s": ("sample_interval_s", "sample_interval", "sampling_interval", "sampling_period", "sample_period",
                          "dt", "delta_t", "time_step", "interval", "dt_s"),
    "start_time": ("start_time", "start", "starttime", "t0", "start_date_time", "start_datetime", "record_start",
                   "recording_start", "start_timestamp", "first_sample_time", "start_time_iso"),
    "nominal_frequency_hz": ("nominal_frequency_hz", "nominal_frequency", "line_frequency", "system_frequency",
                             "rated_frequency", "f_nominal", "fnom", "fn"),
    "nominal_voltage_v": ("nominal_voltage_v", "nominal_voltage", "rated_voltage", "system_voltage", "un", "u_nominal",
                          "vnom", "voltage_nominal", "declared_voltage"),
    "wiring": ("wiring", "wiring_type", "connection"),
}
_BY_SPELLING = {s: k for k, spellings in KEYS.items() for s in spellings}
_UNIT_IN_KEY = re.compile(r"^(?P<key>.*?)\s*[\(\[](?P<unit>[^\)\]]*)[\)\]]\s*$")
_VALUE = re.compile(r"^\s*(?P<num>[+-]?(\d+([.,]\d*)?|[.,]\d+)([eE][+-]?\d+)?)\s*(?P<unit>[A-Za-zµμ]*)\s*$")
_SCALE = {
    "sample_rate_hz": {"": 1.0, "hz": 1.0, "khz": 1e3, "mhz": 1e6, "s/s": 1.0, "sps": 1.0, "ksps": 1e3, "ks/s": 1e3},
    "sample_interval_s": {"": 1.0, "s": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "μs": 1e-6, "ns": 1e-9},
    "nominal_frequency_hz": {"": 1.0, "hz": 1.0},
    "nominal_voltage_v": {"": 1.0, "v": 1.0, "kv": 1e3},
}


def normalise_key(key: str) -> tuple[str, str]:
    """``"Sample rate (Hz)"`` -> ``("sample_rate", "hz")``; ``"# fs"`` -> ``("fs", "")``."""
    k = key.strip().lstrip("#").strip()
    unit = ""
    m = _UNIT_IN_KEY.match(k)
    if m and m.group("key"):
        k, unit = m.group("key"), m.group("unit").strip().lower()
    return re.sub(r"[\s\-\.]+", "_", k.strip().lower()), unit


def canonical(key: str) -> str | None:
    """The canonical key a spelling stands for, or None."""
    k, _ = normalise_key(key)
    return _BY_SPELLING.get(k)


def _number(text: str, key: str, unit_from_key: str, path: str | Path, where: str) -> float:
    m = _VALUE.match(text.replace("\u00a0", " "))
    if m is None:
        raise CaptureReadError(path, where, f"{text!r} is not a number with an optional unit")
    unit = (m.group("unit") or unit_from_key).lower()
    scale = _SCALE[key].get(unit)
    if scale is None:
        raise CaptureReadError(path, where, f"unit {unit!r} does not fit {key} (use one of {', '.join(u for u in _SCALE[key] if u)})")
    x = float(m.group("num").replace(",", ".")) * scale
    if not (math.isfinite(x) and x > 0):
        raise CaptureReadError(path, where, f"{text!r} must be a positive number")
    return x


def interpret(items: Iterable[tuple[str, str, str]], path: str | Path) -> tuple[dict[str, str], list[str], set[str]]:
    """Read ``(key, value, place)`` triples into canonical metadata.

    Parameters
    ----------
    items : iterable of (str, str, str)
        Key as written, its value as text, and the place (``"line 3"``,
        ``"attribute /data:fs"``) for messages and notes.
    path : path-like
        The file, for messages.

    Returns
    -------
    values : dict of str
        Canonical keys (``sample_rate_hz``, ``start_time``, ``nominal_frequency_hz``,
        ``nominal_voltage_v``, ``wiring``) to text, numbers in base units; a
        sample interval becomes ``sample_rate_hz``.
    notes : list of str
        One per key not written exactly as the canonical key (what was read, from where).
    used : set of str
        The keys (as written) that were read.

    Raises
    ------
    CaptureReadError
        A value that is not a positive number in a fitting unit, or a rate
        and an interval that disagree.
    """
    values: dict[str, str] = {}
    notes: list[str] = []
    used: set[str] = set()
    for key, value, where in items:
        k, unit = normalise_key(key)
        canon = _BY_SPELLING.get(k)
        text = str(value).strip().strip('"').strip()
        if canon is None or text in ("", "none", "None", "nan"):
            continue
        used.add(key)
        if canon in _SCALE:
            x = _number(text, canon, unit, path, f"{where} ({key.strip()!r})")
            if canon == "sample_interval_s":
                canon, x = "sample_rate_hz", 1.0 / x
            if canon == "sample_rate_hz" and "sample_rate_hz" in values and abs(float(values[canon]) - x) > 1e-6 * x:
                raise CaptureReadError(path, f"{where} ({key.strip()!r})",
                                       f"gives {x:.9g} Hz, but the metadata above gave {float(values[canon]):.9g} Hz")
            out = repr(x)
        else:
            out = text
        values[canon] = out
        if key.strip().lstrip('#').strip() != canon:
            shown = f"{float(out):.9g}" if canon in _SCALE or canon == "sample_rate_hz" else out
            notes.append(f"{where}: {key.strip()!r} = {text!r} read as {canon} = {shown}")
    return values, notes, used
