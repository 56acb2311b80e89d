"""analyze / measure on a streamed CSV give what the in-memory CSV path gives (issue 10 item 2).

Pure consistency tests, no external source.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from waveforms.io import read_capture
from waveforms.io.csv_stream import SpooledSource, open_capture, spooled_capture
from waveforms.recipe import default_recipe, run_recipe

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
CSV = SAMPLES / "dip_one_phase.csv"


def _strip(d):
    if isinstance(d, dict):
        return {k: _strip(v) for k, v in d.items() if k not in ("timings_s", "generated_at")}
    if isinstance(d, list):
        return [_strip(x) for x in d]
    return d


def test_spooled_capture_equals_the_in_memory_one():
    mem = read_capture(CSV)
    sp = spooled_capture(CSV)
    assert isinstance(sp.source, SpooledSource)
    np.testing.assert_array_equal(mem.read(), sp.read())
    assert sp.summary() == mem.summary()  # channels, time base, gaps, provenance (path, SHA-256, notes) alike
    folder = Path(sp.source.folder)
    assert folder.exists()
    sp.source.close()
    assert not folder.exists()  # the spool goes with its source


def test_open_capture_streams_only_large_files():
    assert not isinstance(open_capture(CSV).source, SpooledSource)  # a few MB: in memory, faster
    assert isinstance(open_capture(CSV, stream_min_bytes=1).source, SpooledSource)
    h5 = SAMPLES / "jam.h5"
    assert type(open_capture(h5, stream_min_bytes=1).source) is type(read_capture(h5).source)


@pytest.mark.parametrize("threads", [1, 2])
def test_analysis_of_a_streamed_csv_equals_the_in_memory_one(tmp_path, threads):
    plate = SAMPLES / "fan1.nameplate.toml"
    rec = default_recipe().with_params("report", {"html": False})
    a = run_recipe(rec, read_capture(CSV), nameplate=plate, out_dir=tmp_path / "mem", threads=threads)
    b = run_recipe(rec, open_capture(CSV, stream_min_bytes=1), nameplate=plate, out_dir=tmp_path / "stream", threads=threads)
    pd.testing.assert_frame_equal(a.cycles, b.cycles, check_exact=True)
    ja = json.loads((tmp_path / "mem" / "result.json").read_text())
    jb = json.loads((tmp_path / "stream" / "result.json").read_text())
    assert _strip(ja) == _strip(jb)
    assert (tmp_path / "mem" / "events.csv").read_text() == (tmp_path / "stream" / "events.csv").read_text()
