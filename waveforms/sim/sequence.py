"""One long simulated scenario written as consecutive files with gaps, and the truth of its incidents.

A logger that writes blocks (10-minute files, hourly files) loses a little
time between one file and the next.  `write_sequence` runs a scenario once
over its whole length, cuts the recording into ``n_files`` files of
``file_s`` seconds separated by ``gap_s`` seconds that no file covers, and
writes beside them ``<stem>.sequence.truth.json``: every truth event of the
long run (`waveforms.sim.truth.events`) as clock times, with the files that
see it, the first file it appears in, the instant it is last seen in a file,
and the gap time inside the event that no file covers.  Those are the
incident boundaries a cross-file analysis (`waveforms.incidents`) must find.
"""

from __future__ import annotations

import datetime as _dt
import json
import os
from pathlib import Path
from typing import Any

import numpy as np

from ..atomic import write_text
from ..capture import from_arrays
from ..errors import InvalidParameterError
from .scenario import Scenario


def file_spans_s(n_files: int, file_s: float, gap_s: float) -> np.ndarray:
    """(n_files, 2) array of [start, end) of each file, seconds from the scenario start [s]."""
    if n_files < 1 or file_s <= 0 or gap_s < 0:
        raise InvalidParameterError(f"n_files={n_files}, file_s={file_s}, gap_s={gap_s}: need n_files >= 1, file_s > 0, gap_s >= 0")
    starts = np.arange(n_files) * (file_s + gap_s)
    return np.column_stack([starts, starts + file_s])


def incident_truth(events: list[dict[str, Any]], spans_s: np.ndarray, names: list[str], t0: _dt.datetime,
                   total_s: float) -> list[dict[str, Any]]:
    """Each truth event seen by the files: first file, last instant seen, files spanned, gap time not covered.

    Parameters
    ----------
    events : list of dict
        Truth events of the long run (``start_s``, ``end_s`` None = to the end), seconds from ``t0``.
    spans_s : ndarray (n, 2)
        File spans [s] (`file_spans_s`).
    names : list of str
        File names, in order.
    t0 : datetime
        Clock time of the scenario start.
    total_s : float
        Length of the scenario [s].
    """
    out = []
    for e in events:
        a = float(e["start_s"])
        b = total_s if e.get("end_s") is None else float(e["end_s"])
        seen = [k for k, (s, f) in enumerate(spans_s) if s < b and a < f]
        if not seen:
            continue
        first, last = seen[0], seen[-1]
        onset_s = max(a, float(spans_s[first, 0]))
        last_s = min(b, float(spans_s[last, 1]))
        covered = sum(min(b, float(spans_s[k, 1])) - max(a, float(spans_s[k, 0])) for k in seen)
        out.append({
            "kind": e["kind"], "line": e.get("phase"),
            "true_start_s": a, "true_end_s": None if e.get("end_s") is None else b,
            "first_file": names[first], "first_seen_s": onset_s,
            "first_seen_time": (t0 + _dt.timedelta(seconds=onset_s)).isoformat(timespec="microseconds"),
            "last_file": names[last], "last_seen_s": last_s,
            "last_seen_time": (t0 + _dt.timedelta(seconds=last_s)).isoformat(timespec="microseconds"),
            "files": [names[k] for k in seen], "n_files": len(seen),
            "gap_not_covered_s": round((last_s - onset_s) - covered, 9),
            "open_before_first_file": a < float(spans_s[first, 0]) - 1e-9,
            "figures": {k: v for k, v in e.items() if k not in ("kind", "phase", "start_s", "end_s")},
        })
    return out


def write_sequence(sc: Scenario, folder: str | os.PathLike[str], n_files: int, gap_s: float,
                   stem: str | None = None, suffix: str = ".h5") -> dict[str, Any]:
    """Simulate ``sc`` once and write it as ``n_files`` consecutive files with ``gap_s`` between them.

    The files share the scenario's length ``sc.duration_s = n_files * file_s + (n_files - 1) * gap_s``;
    ``file_s`` follows from it.  Files are ``<stem>_<k>.h5`` (``k`` from 1), each with
    its own start time; the truth is ``<stem>.sequence.truth.json``.  Every file is
    written atomically.

    Returns
    -------
    dict
        The truth document (also written).
    """
    from .simulate import run
    from .truth import events as truth_events

    if suffix not in (".h5", ".csv"):
        raise InvalidParameterError(f"suffix={suffix!r}: the files are written as .h5 or .csv")
    file_s = (sc.duration_s - (n_files - 1) * gap_s) / n_files
    if not file_s > 0:
        raise InvalidParameterError(f"{sc.name}: duration_s={sc.duration_s} leaves no time for {n_files} files with {gap_s} s gaps")
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    stem = stem or sc.name
    sim = run(sc)
    cap = sim.capture
    fs = cap.sample_rate_hz
    spans = file_spans_s(n_files, file_s, gap_s)
    data = cap.read()
    names = []
    for k, (a, b) in enumerate(spans):
        i0, i1 = int(round(a * fs)), min(int(round(b * fs)), cap.n_samples)
        part = from_arrays(data[:, i0:i1], cap.channels, fs, cap.start_time + _dt.timedelta(seconds=i0 / fs),
                           nominal_frequency_hz=cap.nominal_frequency_hz, nominal_voltage_v=cap.nominal_voltage_v,
                           wiring=cap.wiring, provenance=cap.provenance, nameplate=cap.nameplate)
        name = f"{stem}_{k + 1}{suffix}"
        target = folder / name
        if suffix == ".csv":
            from ..io.csv_writer import write_csv

            write_csv(part, target)
        else:
            from ..io.hdf5_native import write_native

            write_native(part, target, dtype=sc.logger.storage)
        names.append(name)
    truth = {
        "format": "motor-waveforms sequence truth", "scenario": sc.name, "description": sc.description,
        "start_time": cap.start_time.isoformat(timespec="microseconds"), "duration_s": sc.duration_s,
        "file_s": file_s, "gap_s": gap_s,
        "files": [{"file": n, "start_s": float(a), "end_s": float(b),
                   "start_time": (cap.start_time + _dt.timedelta(seconds=float(a))).isoformat(timespec="microseconds")}
                  for n, (a, b) in zip(names, spans, strict=True)],
        "incidents": incident_truth(truth_events(sim), spans, names, cap.start_time, sc.duration_s),
        "note": "invented scenario, simulated (waveforms.sim); times in seconds from the scenario start",
    }
    write_text(folder / f"{stem}.sequence.truth.json", json.dumps(truth, indent=1, allow_nan=False) + "\n")
    return truth


def load_layout_scenario(path: str | os.PathLike[str], table: str) -> tuple[Scenario, dict[str, Any]]:
    """A scenario file with one extra table (``[sequence]`` or ``[trend]``) saying how it is written.

    The extra table (``n_files``, ``gap_s`` for a sequence; ``interval_s`` for a
    trend log) is taken out before the scenario is read as usual
    (`waveforms.sim.scenario.scenario_from_dict`).
    """
    import dataclasses
    import hashlib

    from ..tomlfile import read_toml
    from .scenario import scenario_from_dict

    p = Path(path)
    data, raw = read_toml(p, "scenario file")
    layout = data.pop(table, None)
    if not isinstance(layout, dict):
        from ..errors import CaptureReadError

        raise CaptureReadError(p, f"table [{table}]", "missing; it says how the run is written")
    sc = scenario_from_dict(data, str(p), p.parent)
    return dataclasses.replace(sc, source_sha256=hashlib.sha256(raw).hexdigest()), dict(layout)
