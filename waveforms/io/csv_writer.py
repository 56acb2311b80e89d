"""Export a `Capture` as delimited text that this package reads back without a mapping file.

Layout::

    # motor-waveforms capture export
    # start_time: 2024-03-01T10:00:00.000000+01:00
    # sample_rate_hz: 10000
    # nominal_frequency_hz: 50
    # nominal_voltage_v: 400
    # wiring: 4-wire
    time_s,Va (V),Vb (V),Vc (V),Ia (A),Ib (A),Ic (A)
    0.000000000,...

Channel headers are the trade labels with the base unit, so automatic header
recognition maps them back; ``time_s`` is seconds from ``start_time``.  NaN
samples (gaps) are written as empty cells; whole gap rows are left out so
that the reader finds the same gaps in the time stamps.  The file is written
atomically, chunk by chunk (bounded memory).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd

from ..atomic import atomic_path, same_file
from ..capture import Capture
from ..errors import InvalidParameterError, WriteError


def write_csv(
    capture: Capture,
    path: str | os.PathLike[str],
    delimiter: str = ",",
    float_format: str = "%.10g",
    chunk_samples: int = 1 << 17,
) -> Path:
    """Write ``capture`` as CSV, atomically, streaming chunk by chunk.

    Parameters
    ----------
    capture : Capture
    path : path-like
        Target file (not the capture's own source).
    delimiter : {",", ";", "\\t"}
        Field separator (the decimal mark is always ``.``).
    float_format : str
        printf format of the samples; the default keeps 10 significant digits.
    chunk_samples : int
        Samples per block written (memory bound).

    Returns
    -------
    Path
    """
    if delimiter not in (",", ";", "\t"):
        raise InvalidParameterError(f"{delimiter=} must be ',', ';' or a tab")
    target = Path(path)
    if capture.provenance.source_path and same_file(capture.provenance.source_path, target):
        raise WriteError(f"{target}: refusing to overwrite the input capture")
    headers = ["time_s"] + [f"{c.label if c.label == c.name else c.name} ({c.unit})" for c in capture.channels]
    fnom = "" if capture.nominal_frequency_hz is None else f"{capture.nominal_frequency_hz:g}"
    vnom = "" if capture.nominal_voltage_v is None else f"{capture.nominal_voltage_v:g}"
    lines = [
        "# motor-waveforms capture export",
        f"# start_time: {capture.start_time.isoformat(timespec='microseconds')}",
        f"# sample_rate_hz: {capture.sample_rate_hz!r}",
        f"# nominal_frequency_hz: {fnom}",
        f"# nominal_voltage_v: {vnom}",
        f"# wiring: {capture.wiring}",
    ]
    gap_mask_needed = bool(capture.gaps)
    try:
        with atomic_path(target) as tmp:
            with open(tmp, "w", encoding="utf-8", newline="") as fh:
                fh.write("\n".join(lines) + "\n")
                fh.write(delimiter.join(headers) + "\n")
                for chunk in capture.iter_chunks(chunk_samples):
                    block = chunk.owned
                    idx = np.arange(chunk.owned_start_index, chunk.owned_start_index + block.shape[1])
                    # time to the nanosecond, independent of the samples' float_format
                    cols = {"time_s": np.char.mod("%.9f", idx / capture.sample_rate_hz)}
                    cols.update({h: block[i] for i, h in enumerate(headers[1:])})
                    df = pd.DataFrame(cols)
                    if gap_mask_needed:
                        keep = ~np.zeros(block.shape[1], dtype=bool)
                        for g in capture.gaps:
                            a = max(g.start_index, chunk.owned_start_index) - chunk.owned_start_index
                            b = min(g.stop_index, chunk.owned_start_index + block.shape[1]) - chunk.owned_start_index
                            if b > a:
                                keep[a:b] = False
                        df = df[keep]
                    df.to_csv(fh, sep=delimiter, header=False, index=False, float_format=float_format,
                              lineterminator="\n", na_rep="")
    except OSError as e:
        raise WriteError(f"{target}: cannot write ({e.strerror or e})") from None
    return target
