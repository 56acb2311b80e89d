"""Hook-up columns of the batch summary and the --as-recorded option (consistency, no external source)."""

from __future__ import annotations

import json

from click.testing import CliRunner

from _hookup_support import SAMPLES, arrays, fault, rebuild
from waveforms.summary import SUMMARY_COLUMNS, hookup_counts, summary_frame


def test_counts_per_site_and_archive():
    rows = [{"file": f"f{i}", "site": "north" if i < 3 else "south", "hookup": "current clamp Ib reversed" if i < 2 else ""}
            for i in range(5)]
    rows[4]["hookup"] = "current clamp Ib reversed; current sensor Ia dead"
    counts = hookup_counts(rows)
    assert counts[0] == {"hookup_site_count": "current clamp Ib reversed: 2 of 3 files",
                         "hookup_archive_count": "current clamp Ib reversed: 3 of 5 files"}
    assert counts[2] == {"hookup_site_count": "", "hookup_archive_count": ""}
    assert counts[4]["hookup_site_count"] == "current clamp Ib reversed: 1 of 2 files; current sensor Ia dead: 1 of 2 files"
    frame = summary_frame(rows)
    assert list(frame.columns) == list(SUMMARY_COLUMNS)
    assert frame.loc[1, "hookup_archive_count"] == "current clamp Ib reversed: 3 of 5 files"


def test_summary_row_of_a_corrected_capture():
    from waveforms.io import read_capture
    from waveforms.recipe import load_recipe, run_recipe
    from waveforms.summary import summary_row

    cap = read_capture(SAMPLES / "healthy_run.h5")
    st = run_recipe(load_recipe("triage").without("report"), fault(rebuild(cap, arrays(cap)), "Ib negated"))
    row = summary_row(st, "x.h5", "north")
    assert row["hookup"] == "current clamp Ib reversed" and row["hookup_corrected"] == "yes"
    assert row["worst_i2_i1_pct"] < 1.0  # corrected: the healthy motor's own I2/I1


def test_as_recorded_option_of_analyze(tmp_path):
    from waveforms.cli import cli
    from waveforms.io.hdf5_native import write_native
    from waveforms.io import read_capture

    cap = read_capture(SAMPLES / "healthy_run.h5")
    src = tmp_path / "ib_reversed.h5"
    write_native(fault(rebuild(cap, arrays(cap)), "Ib negated"), src)
    for flag, corrected in ((["--as-recorded"], False), ([], True)):
        out = tmp_path / ("rec" if flag else "cor")
        r = CliRunner().invoke(cli, ["analyze", str(src), "--out", str(out), "--no-html", "--no-speed", *flag])
        assert r.exit_code == 0, r.output
        doc = json.loads((out / "result.json").read_text())
        assert doc["hookup"]["corrected"] is corrected and doc["hookup"]["as_recorded"] is (not corrected)
        assert ("Hook-up corrected before analysis" in doc["verdict"]) is corrected
        assert (doc["summary"]["median_I2_I1_pct"] is None) is (not corrected)
