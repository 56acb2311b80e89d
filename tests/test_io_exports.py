"""The export conformance set (tests/data/exports/): every file reads as its sidecar says, or is refused as it says.

Each ``<file>.expect.json`` is written by ``tests/data/exports/make_exports.py`` from the invented
signals it wrote into the file (the ground truth of the generator, no external source); the header
conventions and layouts are common practice in logger exports (no source).
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import numpy as np
import pytest

from waveforms.errors import WaveformsError
from waveforms.io import ReadOptions, read_capture

EXPORTS = Path(__file__).resolve().parent / "data" / "exports"
SIDECARS = sorted(EXPORTS.glob("*.expect.json"))


def _options(d: dict) -> ReadOptions:
    o = dict(d.get("options", {}))
    return ReadOptions(mapping=d.get("mapping"), mapping_source="sidecar mapping" if d.get("mapping") else "", **o)


def test_the_set_is_large_enough_and_small():
    assert len(SIDECARS) >= 25
    files = [EXPORTS / json.loads(p.read_text())["file"] for p in SIDECARS]
    assert all(f.exists() for f in files)
    assert max(f.stat().st_size for f in files) < 32_000  # a few kB each
    kinds = {f.suffix for f in files}
    assert {".csv", ".tsv", ".parquet", ".h5", ".mat", ".cfg"} <= kinds
    assert sum("error" in json.loads(p.read_text()) for p in SIDECARS) >= 5


@pytest.mark.parametrize("sidecar", SIDECARS, ids=lambda p: p.name.removesuffix(".expect.json"))
def test_export_reads_as_its_sidecar_says(sidecar):
    d = json.loads(sidecar.read_text(encoding="utf-8"))
    path = EXPORTS / d["file"]
    before = path.read_bytes()
    if "error" in d:
        with pytest.raises(WaveformsError) as e:
            read_capture(path, d.get("format"), _options(d))
        msg = str(e.value)
        assert "\n" not in msg and path.name in msg, msg
        assert d["error"] in msg, msg
        assert d.get("error_also", "") in msg, msg  # what to add to the mapping
        return
    cap = read_capture(path, d.get("format"), _options(d))
    assert list(cap.channel_names) == d["channels"]
    used = cap.provenance.mapping.get("channels")  # the mapping used; the native file keeps its original's (none here)
    units = [used[c]["unit"] for c in d["channels"]] if used else [cap.channel(c).unit for c in d["channels"]]
    assert units == d["source_units"]
    assert cap.sample_rate_hz == pytest.approx(d["sample_rate_hz"], rel=1e-9)
    assert cap.start_time == dt.datetime.fromisoformat(d["start_time"])
    assert cap.start_time.utcoffset() == dt.datetime.fromisoformat(d["start_time"]).utcoffset()
    assert cap.n_samples == d["n_samples"]
    np.testing.assert_allclose(cap.read(0, 3), np.array(d["first_samples"]), rtol=1e-9, atol=1e-9)
    if "note" in d:
        assert any(d["note"] in n for n in cap.provenance.notes), cap.provenance.notes
    assert path.read_bytes() == before  # user files are never modified
