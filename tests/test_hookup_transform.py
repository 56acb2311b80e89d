"""The declarative hook-up correction, applied lazily chunk by chunk (consistency, no external source)."""

from __future__ import annotations

import numpy as np
import pytest

from waveforms.capture import Channel, from_arrays, standard_channels
from waveforms.errors import InvalidParameterError
from waveforms.hookup import ChannelRule, apply_rules


def _cap(n=5000):
    rng = np.random.default_rng(3)
    return from_arrays(rng.standard_normal((6, n)), standard_channels(), 5000.0)


def test_permute_negate_derive_equal_the_arrays():
    cap = _cap()
    x = cap.read()
    ib = Channel("Ib", "current", "B", "line", "A")
    rules = [ChannelRule(Channel("Ia", "current", "A", "line", "A"), ((1.0, "Ic"),)),
             ChannelRule(ib, ((-1.0, "Ia"), (-1.0, "Ic"))),
             ChannelRule(Channel("Vb", "voltage", "B", "LN", "V"), ((-1.0, "Vb"),))]
    out = apply_rules(cap, rules, "test")
    y = out.read()
    np.testing.assert_array_equal(y[3], x[5])
    np.testing.assert_array_equal(y[4], -(x[3] + x[5]))
    np.testing.assert_array_equal(y[1], -x[1])
    np.testing.assert_array_equal(y[[0, 2, 5]], x[[0, 2, 5]])
    assert out.provenance.history[-1] == "test"
    assert rules[1].describe() == "Ib = -(Ia + Ic)"


def test_chunks_of_the_corrected_capture_equal_one_read():
    cap = _cap(20000)
    out = apply_rules(cap, [ChannelRule(Channel("Ib", "current", "B", "line", "A"), ((-1.0, "Ib"),))], "negate Ib")
    whole = out.read(channels=["Ib", "Va"])
    parts = [c.owned for c in out.iter_chunks(4096, 100, channels=["Ib", "Va"])]
    np.testing.assert_array_equal(np.hstack(parts), whole)
    np.testing.assert_array_equal(whole[0], -cap.read(channels=["Ib"])[0])


def test_derived_channel_is_added_and_the_source_is_read_lazily():
    chans = tuple(c for c in standard_channels() if c.name != "Ib")
    rng = np.random.default_rng(4)
    cap = from_arrays(rng.standard_normal((5, 3000)), chans, 5000.0)
    reads = []

    class Counting:
        def __init__(self, base):
            self.base = base
            self.n_samples, self.n_channels = base.n_samples, base.n_channels

        def read(self, a, b, idx):
            reads.append((a, b, tuple(idx)))
            return self.base.read(a, b, idx)

    cap = cap.replace(source=Counting(cap.source))
    out = apply_rules(cap, [ChannelRule(Channel("Ib", "current", "B", "line", "A"), ((-1.0, "Ia"), (-1.0, "Ic")))], "two-CT")
    assert out.channel_names == ("Va", "Vb", "Vc", "Ia", "Ic", "Ib")
    assert reads == []  # nothing read when the correction is made
    out.read(100, 200, ["Ib"])
    assert reads == [(100, 200, (3, 4))]  # only the block asked for, only the channels it needs


def test_a_rule_naming_an_unknown_channel_is_refused():
    with pytest.raises(InvalidParameterError, match="no channel 'In'"):
        apply_rules(_cap(), [ChannelRule(Channel("Ib", "current", "B", "line", "A"), ((1.0, "In"),))], "x")
