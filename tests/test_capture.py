"""The Capture model: chunked access equals whole access, metadata is validated with clear messages."""

import datetime as dt

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from waveforms.capture import Channel, from_arrays, standard_channels
from waveforms.errors import InvalidParameterError

UTC = dt.timezone.utc


def _cap(n=1000, rate=1000.0):
    x = np.arange(6 * n, dtype=float).reshape(6, n)
    return from_arrays(x, standard_channels(), rate, dt.datetime(2026, 5, 4, 3, 2, 1, tzinfo=UTC)), x


@settings(max_examples=60, deadline=None)
@given(n=st.integers(1, 400), chunk=st.integers(1, 150), overlap=st.integers(0, 60))
def test_owned_parts_of_chunks_rebuild_the_capture(n, chunk, overlap):
    cap, x = _cap(n)
    chunks = list(cap.iter_chunks(chunk, overlap))
    assert chunks, "at least one chunk"
    rebuilt = np.concatenate([c.owned for c in chunks], axis=1)
    np.testing.assert_array_equal(rebuilt, x)
    for c in chunks:
        # every chunk's data is the capture's samples at its own indices, overlap included
        np.testing.assert_array_equal(c.data, x[:, c.start_index : c.start_index + c.data.shape[1]])
        assert c.lead <= overlap and c.trail <= overlap


def test_time_base_and_derived_fields():
    cap, _ = _cap(2500, rate=500.0)
    assert cap.duration_s == 5.0
    assert cap.end_time == dt.datetime(2026, 5, 4, 3, 2, 6, tzinfo=UTC)
    np.testing.assert_allclose(cap.time_s(10, 13), [0.02, 0.022, 0.024])
    assert [c.label for c in cap.channels] == ["Va", "Vb", "Vc", "Ia", "Ib", "Ic"]
    assert set(cap.phase_channels("current")) == {"A", "B", "C"}
    assert cap.read(5, 7, channels=["Ib"]).shape == (1, 2)


def test_line_to_line_labels():
    chans = standard_channels(voltages="LL")
    assert [c.label for c in chans[:3]] == ["Vab", "Vbc", "Vca"]


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"kind": "power"}, r"kind='power' must be one of"),
        ({"conductor": "D"}, r"conductor='D' must be one of"),
        ({"unit": "kV"}, r"unit='kV'; samples are stored in 'V'"),
        ({"reference": "line"}, r"a voltage has reference"),
    ],
)
def test_channel_validation(kwargs, match):
    base = {"name": "Va", "kind": "voltage", "conductor": "A", "reference": "LN", "unit": "V"} | kwargs
    with pytest.raises(InvalidParameterError, match=match):
        Channel(**base)


def test_capture_validation():
    x = np.zeros((6, 10))
    with pytest.raises(InvalidParameterError, match="must be timezone-aware"):
        from_arrays(x, standard_channels(), 1000.0, dt.datetime(2026, 1, 1))
    with pytest.raises(InvalidParameterError, match="nominal_frequency_hz=55.0 must be 50 or 60"):
        from_arrays(x, standard_channels(), 1000.0, nominal_frequency_hz=55.0)
    with pytest.raises(InvalidParameterError, match="sample source has 6 channels but 3 are described"):
        from_arrays(x, standard_channels()[:3], 1000.0)
    cap, _ = _cap(10)
    with pytest.raises(InvalidParameterError, match=r"no channel 'Iz'; channels are"):
        cap.index_of("Iz")
    with pytest.raises(InvalidParameterError, match=r"sample range \[5, 20\) is outside \[0, 10\]"):
        cap.read(5, 20)


def test_reading_never_changes_the_stored_samples():
    cap, x = _cap(10)
    block = cap.read()
    block[:] = -1.0  # a caller scribbling on what it was given
    np.testing.assert_array_equal(cap.read(), x)
