"""Writing a simulation: the capture (native HDF5 or CSV) and ``<stem>.truth.json`` beside it."""

from __future__ import annotations

import json
import os
from pathlib import Path

from ..atomic import write_text
from ..errors import InvalidParameterError
from .scenario import Scenario
from .simulate import simulate


def truth_path(capture_path: str | os.PathLike[str]) -> Path:
    """``dir/stem.truth.json`` for a capture ``dir/stem.h5`` (or ``.csv``)."""
    p = Path(capture_path)
    return p.with_name(p.stem + ".truth.json")


def write_simulation(sc: Scenario, out: str | os.PathLike[str]) -> tuple[Path, Path]:
    """Simulate ``sc`` and write the capture to ``out`` (``.h5``/``.hdf5`` or ``.csv``) and its truth JSON.

    Both files are written atomically; the truth file names the capture file.
    """
    target = Path(out)
    suffix = target.suffix.lower()
    if suffix not in (".h5", ".hdf5", ".csv"):
        raise InvalidParameterError(f"{target}: the output must end in .h5, .hdf5 or .csv")
    capture, truth = simulate(sc)
    if suffix == ".csv":
        from ..io.csv_writer import write_csv

        write_csv(capture, target)
    else:
        from ..io.hdf5_native import write_native

        write_native(capture, target, dtype=sc.logger.storage)
    truth["capture"]["file"] = target.name
    tp = truth_path(target)
    write_text(tp, json.dumps(truth, indent=1, allow_nan=False) + "\n")
    return target, tp
