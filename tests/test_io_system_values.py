"""Nominal values and wiring: the generic HDF5 importer applies the CSV importer's checks (waveforms.io.common).

Consistency tests, no external source: the same bad ``[capture]`` value in a mapping gives the same
one-line error from ``hdf5-mapped`` as from ``csv``, and the same good values give the same capture
metadata and the same wiring note.
"""

from __future__ import annotations

import h5py
import numpy as np
import pytest

from waveforms import ReadOptions, read_capture
from waveforms.errors import CaptureReadError

RATE_HZ = 2000.0
N = 400
NAMES = ("Va", "Vb", "Vc")


def _pair(tmp_path):
    """The same three 50 Hz voltages as a CSV file and as a generic HDF5 file."""
    t = np.arange(N) / RATE_HZ
    x = np.vstack([230.0 * np.sqrt(2) * np.sin(2 * np.pi * 50.0 * t - k * 2 * np.pi / 3) for k in range(3)])
    csv = tmp_path / "three.csv"
    csv.write_text(",".join(NAMES) + "\n" + "\n".join(",".join(f"{v:.6f}" for v in row) for row in x.T) + "\n")
    h5 = tmp_path / "three.h5"
    with h5py.File(h5, "w") as fh:
        for name, row in zip(NAMES, x, strict=True):
            fh.create_dataset(f"/wave/{name}", data=row)
    return csv, h5


def _read(path, capture):
    mapping = {"capture": {"sample_rate_hz": RATE_HZ, **capture}}
    return read_capture(path, options=ReadOptions(mapping=mapping, mapping_source="site.toml"))


@pytest.mark.parametrize(
    ("capture", "message"),
    [
        ({"nominal_frequency_hz": 55}, "site.toml: nominal frequency: 55 Hz must be 50 or 60"),
        ({"nominal_frequency_hz": "fifty"}, "site.toml: key capture.nominal_frequency_hz: 'fifty' is not a number"),
        ({"nominal_frequency_hz": 0}, "site.toml: key capture.nominal_frequency_hz: 0 must be a positive number"),
        ({"nominal_voltage_v": -400}, "site.toml: key capture.nominal_voltage_v: -400 must be a positive number"),
        ({"nominal_voltage_v": "400 V"}, "site.toml: key capture.nominal_voltage_v: '400 V' is not a number"),
        ({"wiring": "2-wire"}, "site.toml: wiring: '2-wire' must be '3-wire' or '4-wire'"),
    ],
)
def test_hdf5_mapped_refuses_what_csv_refuses(tmp_path, capture, message):
    csv, h5 = _pair(tmp_path)
    errors = []
    for path in (csv, h5):
        with pytest.raises(CaptureReadError) as info:
            _read(path, capture)
        errors.append(str(info.value))
    assert errors[0] == errors[1] == message
    assert "\n" not in message


def test_hdf5_mapped_takes_what_csv_takes(tmp_path):
    csv, h5 = _pair(tmp_path)
    good = {"nominal_frequency_hz": 50, "nominal_voltage_v": 400, "wiring": "3-wire"}
    a, b = _read(csv, good), _read(h5, good)
    assert b.provenance.importer == "hdf5-mapped"
    assert (a.nominal_frequency_hz, a.nominal_voltage_v, a.wiring) == (b.nominal_frequency_hz, b.nominal_voltage_v, b.wiring)
    assert (b.nominal_frequency_hz, b.nominal_voltage_v, b.wiring) == (50.0, 400.0, "3-wire")
    # nothing given: both infer 50 Hz from the samples and note the same wiring default
    a, b = _read(csv, {}), _read(h5, {})
    assert a.nominal_frequency_hz == b.nominal_frequency_hz == 50.0
    notes_a = [n for n in a.provenance.notes if n.startswith(("wiring", "nominal frequency"))]
    notes_b = [n for n in b.provenance.notes if n.startswith(("wiring", "nominal frequency"))]
    assert notes_a == notes_b and len(notes_a) == 2
