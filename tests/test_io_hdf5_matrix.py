"""Matrix-shaped HDF5 (and MATLAB v7.3 .mat): one 2-D dataset, names from an attribute or a string dataset.

Files are written with h5py (a general reference library from PyPI) and read back through our
importer; the values are compared with what was written (no external source). The 512-byte
user block before the HDF5 signature is how MATLAB v7.3 files begin (from memory).
"""

from __future__ import annotations

import h5py
import numpy as np
import pytest

from waveforms.errors import CaptureReadError, MappingError
from waveforms.io import ReadOptions, read_capture
from waveforms.io.hdf5_matrix import MatrixSource
from waveforms.io.registry import detect_format

RATE = 2000.0
N = 3000


def _m():
    t = np.arange(N) / RATE
    return np.stack([325 * np.sin(2 * np.pi * 50 * t - k * 2.0944) for k in range(3)] + [10 * np.sin(2 * np.pi * 50 * t)], axis=1)


def test_samples_by_channels_with_name_attribute(tmp_path):
    p, m = tmp_path / "a.h5", _m()
    with h5py.File(p, "w") as f:
        d = f.create_dataset("acq/data", data=m, chunks=(256, 4))
        d.attrs["channel_names"] = ["L1-N [V]", "L2-N [V]", "L3-N [V]", "L1 [A]"]
        f["acq"].attrs["sample_rate"] = RATE
        f.attrs["start_time"] = "2024-03-01T10:00:00+01:00"
    assert detect_format(p).name == "hdf5-matrix"
    cap = read_capture(p)
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia") and cap.sample_rate_hz == RATE
    assert cap.start_time.isoformat() == "2024-03-01T10:00:00+01:00"
    assert isinstance(cap.source, MatrixSource)
    np.testing.assert_array_equal(cap.read(), m.T)
    np.testing.assert_array_equal(np.hstack([c.data for c in cap.iter_chunks(512)]), m.T)
    assert any("samples x channels (3000 x 4" in n for n in cap.provenance.notes)


def test_channels_by_samples_with_companion_dataset_and_units(tmp_path):
    p, m = tmp_path / "b.h5", _m()
    with h5py.File(p, "w") as f:
        f.create_dataset("rec", data=m.T)
        f["names"] = np.array([b"Va", b"Vb", b"Vc", b"Ia"])
        f["rec"].attrs["units"] = ["kV", "kV", "kV", "mA"]
        f["rec"].attrs["dt"] = 1 / RATE
    cap = read_capture(p)
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia")
    np.testing.assert_allclose(cap.read(100, 200, ["Vc", "Ia"]), m.T[[2, 3], 100:200] * np.array([[1e3], [1e-3]]))


def test_matlab_v73_layout(tmp_path):
    # MATLAB writes an m x n matrix transposed (column-major) and chars as uint16 with MATLAB_class = 'char'
    p, m = tmp_path / "c.mat", _m()
    with h5py.File(p, "w", userblock_size=512) as f:
        f.create_dataset("wave", data=m.T)
        f["wave"].attrs["MATLAB_class"] = np.bytes_("double")
        names = ["Va", "Vb", "Vc", "Ia"]
        chars = np.array([[ord(c) for c in nm] for nm in names], dtype=np.uint16).T  # 2 chars x 4 names
        f.create_dataset("labels", data=chars).attrs["MATLAB_class"] = np.bytes_("char")
        f.create_dataset("fs", data=np.array([[RATE]])).attrs["MATLAB_class"] = np.bytes_("double")
    with open(p, "r+b") as fh:
        fh.write(b"MATLAB 7.3 MAT-file, invented for a test")
    assert detect_format(p).name == "hdf5-matrix"
    cap = read_capture(p)
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia") and cap.sample_rate_hz == RATE
    np.testing.assert_array_equal(cap.read(), m.T)


def test_no_names_map_by_index(tmp_path):
    p, m = tmp_path / "d.h5", _m()
    with h5py.File(p, "w") as f:
        f.create_dataset("x", data=m).attrs["fs"] = RATE
    with pytest.raises(CaptureReadError, match=r"d.h5: dataset /x: no channel names.*\[channels.Va\] column = 1"):
        read_capture(p)
    mp = {"channels": {"Ia": {"column": 4}, "Va": {"column": 1}}, "ignore": ["column 2", "column 3"]}
    cap = read_capture(p, options=ReadOptions(mapping=mp, mapping_source="m.toml"))
    assert cap.channel_names == ("Va", "Ia")
    np.testing.assert_array_equal(cap.read(), m.T[[0, 3]])
    with pytest.raises(MappingError, match=r"m.toml: key channels.Va.column: 9 is not a channel index of /x \(1 to 4"):
        read_capture(p, options=ReadOptions(mapping={"channels": {"Va": {"column": 9}}}, mapping_source="m.toml"))


@pytest.mark.parametrize(("shape", "names", "fragment"), [
    ((4, 4), None, r"square matrix \(4 x 4\): say \[hdf5\] channels_along"),
    ((100, 4), ["Va", "Vb", "Vc"], r"3 names do not fit the matrix /x of shape 100 x 4"),
])
def test_orientation_errors(tmp_path, shape, names, fragment):
    p = tmp_path / "e.h5"
    with h5py.File(p, "w") as f:
        d = f.create_dataset("x", data=np.zeros(shape))
        d.attrs["fs"] = RATE
        if names:
            d.attrs["names"] = names
    mp = None if names else {"channels": {"Va": {"column": 1}}}
    with pytest.raises(CaptureReadError, match=fragment):
        read_capture(p, options=ReadOptions(mapping=mp))


def test_time_channel_gives_the_rate(tmp_path):
    p, m = tmp_path / "t.h5", _m()
    with h5py.File(p, "w") as f:
        f.create_dataset("x", data=np.column_stack([np.arange(N) / RATE, m[:, :1]])).attrs["names"] = "time, UL1"
    cap = read_capture(p)
    assert cap.channel_names == ("Va",) and cap.sample_rate_hz == RATE


def test_reads_never_the_whole_matrix(tmp_path, monkeypatch):
    p, m = tmp_path / "w.h5", _m()
    with h5py.File(p, "w") as f:
        d = f.create_dataset("x", data=m)
        d.attrs["names"] = ["Va", "Vb", "Vc", "Ia"]
        d.attrs["fs"] = RATE
    cap = read_capture(p)
    sizes = []
    real = h5py.Dataset.__getitem__
    monkeypatch.setattr(h5py.Dataset, "__getitem__", lambda self, k: (lambda a: sizes.append(a.size) or a)(real(self, k)))
    for _ in cap.iter_chunks(500):
        pass
    assert sizes and max(sizes) <= 500 * 4
