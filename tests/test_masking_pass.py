"""The broken-sample scan rides on the measure stage's pass (issue 10 item 3, after issue 20's masking).

Pure consistency tests, no external source: the gaps and the note the deferred scan
(`waveforms.io.masking.defer_masking` + `BrokenScan`, fed by the measurement engine's pass)
lists are the ones the separate pass (`mask_broken`) lists, the refusal of a capture without
a usable sample stays at import, and a file is read once, not twice.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from waveforms.capture import from_arrays, standard_channels
from waveforms.errors import CaptureReadError
from waveforms.io import read_capture
from waveforms.io import hdf5_native
from waveforms.io.hdf5_native import write_native
from waveforms.io.masking import BrokenScan, MaskedSource, defer_masking, mask_broken
from waveforms.recipe import default_recipe, run_recipe

FS = 5000.0


def _samples(duration_s: float = 12.0) -> np.ndarray:
    n = int(duration_s * FS)
    t = np.arange(n) / FS
    v = [325.0 * np.cos(2 * np.pi * 50.0 * t - k * 2 * np.pi / 3) for k in range(3)]
    i = [14.0 * np.cos(2 * np.pi * 50.0 * t - k * 2 * np.pi / 3 - 0.5) for k in range(3)]
    return np.vstack(v + i)


def _broken(x: np.ndarray) -> np.ndarray:
    x = x.copy()
    x[3, 20_000:20_300] = np.nan       # Ia: a NaN run
    x[4, 31_000:31_010] = np.inf       # Ib: +inf
    x[0, 40_000:40_050] = 1e300        # Va: out of range
    x[5, 40_020] = -np.inf             # Ic: one -inf inside the same stretch
    return x


def _file(tmp_path: Path, x: np.ndarray, name: str = "broken.h5") -> Path:
    cap = from_arrays(x, standard_channels(), FS, nominal_frequency_hz=50.0)
    return write_native(cap, tmp_path / name)


def _count_reads(monkeypatch) -> list[tuple[int, int, tuple[int, ...]]]:
    """Every read through the native HDF5 source, as (start, stop, channels)."""
    reads: list[tuple[int, int, tuple[int, ...]]] = []
    plain = hdf5_native.HDF5Source.read

    def counted(self, start, stop, channel_indices):
        reads.append((int(start), int(stop), tuple(channel_indices)))
        return plain(self, start, stop, channel_indices)

    monkeypatch.setattr(hdf5_native.HDF5Source, "read", counted)
    return reads


def _coverage(reads: list[tuple[int, int, tuple[int, ...]]], n: int, channel: int = 1) -> np.ndarray:
    """How many times each sample of ``channel`` was read."""
    cov = np.zeros(n + 1, dtype=np.int64)
    for a, b, ch in reads:
        if channel in ch:
            cov[a] += 1
            cov[b] -= 1
    return np.cumsum(cov)[:-1]

@pytest.mark.parametrize("chunk", [997, 4096, 1 << 18])

def test_scan_fed_block_by_block_equals_the_separate_pass(tmp_path, chunk):
    raw = read_capture(_file(tmp_path, _broken(_samples())), mask=False)
    eager = mask_broken(raw, "broken.h5")
    masked, scan = defer_masking(raw, "broken.h5")
    assert isinstance(scan, BrokenScan) and isinstance(masked.source, MaskedSource)
    assert masked.gaps == () and masked.provenance.notes == raw.provenance.notes  # nothing listed before the pass
    for ch in masked.iter_chunks(chunk):
        scan.feed(ch.owned)
    done = scan.apply(masked)
    assert done.gaps == eager.gaps and len(done.gaps) == 3
    assert done.provenance == eager.provenance
    assert "non-finite or out of range" in done.provenance.notes[-1]
    np.testing.assert_array_equal(done.read(), eager.read())  # the same samples read as NaN


def test_clean_capture_lists_nothing_and_reads_the_same(tmp_path):
    x = _samples(2.0)
    raw = read_capture(_file(tmp_path, x), mask=False)
    masked, scan = defer_masking(raw)
    for ch in masked.iter_chunks(4096):
        scan.feed(ch.owned)
    assert scan.apply(masked) is masked
    assert mask_broken(raw) is raw
    np.testing.assert_array_equal(masked.read(), x)


def test_refusal_stays_at_import_and_reads_only_to_the_first_usable_sample(tmp_path):
    x = np.full((6, 30_000), np.nan)
    raw = read_capture(_file(tmp_path, x, "allnan.h5"), mask=False)
    with pytest.raises(CaptureReadError, match="no usable sample in any channel"):
        defer_masking(raw, "allnan.h5")
    with pytest.raises(CaptureReadError, match="no usable sample in any channel"):
        mask_broken(raw, "allnan.h5")
    x = x.copy()
    x[2, 25_000] = 1.0  # one usable sample near the end: accepted
    raw = read_capture(_file(tmp_path, x, "one.h5"), mask=False)
    defer_masking(raw)
    # an ordinary capture: only the first block of 4096 samples is read at import
    clean = read_capture(_file(tmp_path, _samples(2.0), "clean.h5"), mask=False)
    reads = []
    inner = clean.source

    class Counting:
        n_samples, n_channels = inner.n_samples, inner.n_channels

        def read(self, start, stop, rows):
            reads.append((start, stop))
            return inner.read(start, stop, rows)

    defer_masking(clean.replace(source=Counting()))
    assert reads == [(0, 4096)]


def test_analyze_reads_the_file_once_and_lists_the_broken_stretches(tmp_path, monkeypatch):
    path = _file(tmp_path, _broken(_samples(60.0)))  # the broken samples all in the first of five blocks
    reads = _count_reads(monkeypatch)
    rec = default_recipe().without("report", "hookup").with_params("measure", {"chunk_samples": 1 << 16})
    state = run_recipe(rec, path)
    cov = _coverage(reads, int(60.0 * FS))
    # one pass (block overlaps, the engine's short survey blocks and the raw re-read of the one block
    # holding broken samples aside); a separate masking pass would make it 2
    assert np.median(cov) == 1 and cov.min() >= 1
    assert np.mean(cov[1 << 16:] > 1) < 0.2  # past the broken block: overlaps and survey blocks only
    monkeypatch.undo()
    eager = read_capture(path)
    assert state.capture.gaps == eager.gaps
    assert eager.provenance.notes[-1] in state.capture.provenance.notes
    assert any("non-finite" in q["message"] or "broken" in q["message"] for q in state.quality)


def test_the_analyze_command_reads_the_file_once(tmp_path, monkeypatch):
    # the command opens the capture itself (mapping, options): it must leave the broken-sample scan to the measure
    # stage's pass too, not mask at once (a second full read); consistency, no external source
    from click.testing import CliRunner

    from waveforms.cli import cli

    path = _file(tmp_path, _broken(_samples(240.0)))  # long against the default block (2^18)
    reads = _count_reads(monkeypatch)
    out = tmp_path / "out"
    r = CliRunner().invoke(cli, ["analyze", str(path), "--out", str(out), "--no-html"])
    assert r.exit_code == 0, r.output
    cov = _coverage(reads, int(240.0 * FS))
    # one pass (the raw re-read of the one block holding broken samples aside); a masking pass at import makes it 2
    assert np.median(cov) == 1 and cov.min() >= 1
    import json

    doc = json.loads((out / "result.json").read_text())
    assert any("non-finite" in q["message"] or "broken" in q["message"] for q in doc["data_quality"])
