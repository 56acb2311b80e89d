"""HDF5: generic files through a mapping (lazy, scaled on read), and native round trips."""

from __future__ import annotations

import datetime as dt

import h5py
import numpy as np
import pytest

from waveforms import ReadOptions, read_capture
from waveforms.errors import CaptureReadError
from waveforms.io.hdf5_native import HDF5Source
from waveforms.io.mapping import load_mapping_file

from _io_support import DATA, wave


def _generic(**kw):
    m = load_mapping_file(DATA / "hdf5_generic.toml")
    return read_capture(DATA / "hdf5_generic.h5", options=ReadOptions(mapping=m, mapping_source="hdf5_generic.toml", **kw))


def test_generic_mapped_values_rate_start():
    cap = _generic()
    assert cap.provenance.importer == "hdf5-mapped"
    assert isinstance(cap.source, HDF5Source)  # lazy: samples stay on disk
    assert cap.sample_rate_hz == 1000.0
    assert cap.start_time == dt.datetime.fromisoformat("2022-11-02T03:04:05+00:00")
    assert cap.channel_names == ("Va", "Vb", "Vc", "Ia", "Ib", "Ic")
    t = cap.time_s()
    x = cap.read()
    with h5py.File(DATA / "hdf5_generic.h5", "r") as fh:
        raw_v = fh["/acq/ch1"][:]
        raw_i = fh["/acq/ch4"][:]
    # 0.1 V per count; mA counts on a 14:5 CT (IEC 61869-2 ratio primary/secondary, from memory)
    np.testing.assert_allclose(x[1], raw_v * 0.1, rtol=1e-15)
    np.testing.assert_allclose(x[4], raw_i * 1e-3 * 14.0 / 5.0, rtol=1e-14)
    # and against the closed-form signal, within the integer rounding of the counts
    np.testing.assert_allclose(x[0], wave("v", "A", t, 50.0), rtol=0, atol=0.05 + 1e-9)
    np.testing.assert_allclose(x[3], wave("i", "A", t, 50.0), rtol=0, atol=0.5e-3 * 14 / 5 + 1e-9)


def test_generic_chunked_read_equals_whole():
    cap = _generic()
    whole = cap.read()
    parts = np.hstack([c.owned for c in cap.iter_chunks(37)])
    np.testing.assert_array_equal(whole, parts)


def test_generic_auto_recognised_names(tmp_path):
    p = tmp_path / "named.h5"
    with h5py.File(p, "w") as fh:
        fh.attrs["rate"] = 2000
        fh.attrs["start"] = 1.7e9  # POSIX seconds
        for name in ("UL1", "UL2", "UL3"):
            fh.create_dataset(f"/wave/{name}", data=np.sin(np.arange(500) * 2 * np.pi * 50 / 2000))
        fh.create_dataset("/wave/notes", data=np.zeros(3))
    cap = read_capture(p, options=ReadOptions(mapping={"hdf5": {"rate_attribute": "/:rate", "start_attribute": "/:start"}}))
    assert cap.channel_names == ("Va", "Vb", "Vc")
    assert cap.sample_rate_hz == 2000.0
    assert cap.start_time == dt.datetime.fromtimestamp(1.7e9, tz=dt.timezone.utc)
    assert cap.nominal_frequency_hz == 50.0
    assert any("recognised as Va" in n for n in cap.provenance.notes)


def test_generic_missing_attribute_and_dataset(tmp_path):
    m = load_mapping_file(DATA / "hdf5_generic.toml")
    m["hdf5"]["rate_attribute"] = "/acq:rate"
    with pytest.raises(CaptureReadError, match=r"hdf5_generic\.h5: attribute /acq:rate \(mapping hdf5\.rate_attribute\): not found; attributes there: \['fs', 't0'\]"):
        read_capture(DATA / "hdf5_generic.h5", options=ReadOptions(mapping=m))
    m = load_mapping_file(DATA / "hdf5_generic.toml")
    m["channels"]["Va"]["dataset"] = "/acq/ch9"
    with pytest.raises(CaptureReadError, match=r"hdf5_generic\.h5: dataset /acq/ch9: not found in the file; did you mean '/acq/ch\d'"):
        read_capture(DATA / "hdf5_generic.h5", options=ReadOptions(mapping=m))


def test_generic_no_rate(tmp_path):
    m = load_mapping_file(DATA / "hdf5_generic.toml")
    del m["hdf5"]["rate_attribute"]
    with pytest.raises(CaptureReadError, match=r"hdf5_generic\.h5: no sample rate: give \[hdf5\] rate_attribute"):
        read_capture(DATA / "hdf5_generic.h5", options=ReadOptions(mapping=m))
    cap = read_capture(DATA / "hdf5_generic.h5", options=ReadOptions(mapping=m, sample_rate_hz=1000.0))
    assert cap.sample_rate_hz == 1000.0


def test_generic_to_native_and_back(tmp_path):
    from waveforms.io.hdf5_native import write_native

    cap = _generic()
    out = write_native(cap, tmp_path / "n.h5")
    back = read_capture(out)
    assert back.provenance.importer == "hdf5-native"
    np.testing.assert_array_equal(back.read(), cap.read())
    assert back.provenance.mapping == cap.provenance.mapping
    assert [c.scale for c in back.channels] == [c.scale for c in cap.channels]
