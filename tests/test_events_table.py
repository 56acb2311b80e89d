"""One events-table schema for events.csv, the batch events table and `RunState.events_frame`.

Consistency of three writers (no external source): they share `waveforms.detect.event.EVENT_COLUMNS`.
"""

from __future__ import annotations

import csv
import io
import json

import pandas as pd
import pytest

from _batch_support import make_capture, write_nameplate
from waveforms import batch
from waveforms.detect.event import EVENT_COLUMNS, events_frame
from waveforms.motor.nameplate import load_nameplate
from waveforms.recipe import load_recipe, run_recipe


@pytest.fixture(scope="module")
def run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("events")
    path = make_capture(tmp / "open_c.h5", seconds=3.0, open_c_at_s=1.5)
    plate = load_nameplate(write_nameplate(tmp / "plate.toml"))
    state = run_recipe(load_recipe("triage"), path, nameplate=plate, out_dir=tmp / "out")
    return tmp, path, plate, state


def test_events_csv_and_run_state_share_columns_and_values(run):
    tmp, _, _, state = run
    text = (tmp / "out" / "events.csv").read_text(encoding="utf-8")
    rows = list(csv.DictReader(io.StringIO(text)))
    frame = state.events_frame()
    assert tuple(frame.columns) == EVENT_COLUMNS == tuple(rows[0])
    assert len(rows) == len(frame) == len(state.events) and len(rows) >= 1
    for row, (_, ev) in zip(rows, frame.iterrows(), strict=True):
        assert row["kind"] == ev["kind"] and row["start_time"] == ev["start_time"] and ev["start_time"]
        assert float(row["start_s"]) == pytest.approx(ev["start_s"], rel=1e-12)
        assert json.loads(row["figures_json"]) == json.loads(ev["figures_json"])


def test_batch_events_table_has_the_same_columns(run):
    _, path, plate, state = run
    one = batch.run_one(path, recipe=load_recipe("triage").without("report"), nameplate=plate)
    assert tuple(one.events.columns) == EVENT_COLUMNS
    pd.testing.assert_frame_equal(one.events, state.events_frame())
    empty = events_frame([])
    assert tuple(empty.columns) == EVENT_COLUMNS and len(empty) == 0
