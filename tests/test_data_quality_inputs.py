"""Data-quality notes on unusual but usable inputs (issue 20): small-integer datasets.

Behaviour checks of the package's own rules: no external source.
"""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner

from _hostile_support import _h5, _int8_currents
from waveforms.cli import cli


def test_int8_datasets_are_accepted_with_a_resolution_note(tmp_path: Path):
    """Currents stored as int8 are analysed; each gets a "resolution" warning naming int8, its 1 A step and range."""
    path = _h5(_int8_currents, "int8.h5")(tmp_path)
    res = CliRunner().invoke(cli, ["analyze", str(path), "--out", str(tmp_path / "out"), "--no-html", "--no-speed"])
    assert res.exit_code == 0, res.output
    doc = json.loads((tmp_path / "out" / "result.json").read_text(encoding="utf-8"))
    notes = [q for q in doc["data_quality"] if q["check"] == "resolution"]
    assert sorted(q["channel"] for q in notes) == ["Ia", "Ib", "Ic"]
    for q in notes:
        assert q["dtype"] == "int8" and q["levels"] == 256 and "int8" in q["message"]
        assert q["step"] == 1.0 and 1.1 < q["step_pct_of_peak"] < 1.3  # 1 A of a peak of about 82 A
    ins = CliRunner().invoke(cli, ["inspect", str(path)])
    assert ins.exit_code == 0 and "int8" in ins.stdout


def test_float_datasets_get_no_resolution_note(tmp_path: Path):
    """The float32 base file carries no resolution note (the check does not fire on every capture)."""
    from _hostile_support import base_h5

    path = base_h5(tmp_path)
    res = CliRunner().invoke(cli, ["analyze", str(path), "--out", str(tmp_path / "out"), "--no-html", "--no-speed"])
    assert res.exit_code == 0, res.output
    doc = json.loads((tmp_path / "out" / "result.json").read_text(encoding="utf-8"))
    assert not [q for q in doc["data_quality"] if q["check"] == "resolution"]


def _clip_from(start: int, share: float):
    def change(x):
        import numpy as np

        pk = float(np.max(np.abs(x)))
        x[start:] = np.clip(x[start:], -share * pk, share * pk)
        return x
    return change


def test_a_clipped_voltage_is_a_data_quality_stretch_not_a_dip(tmp_path: Path):
    """Va flat-topped at 70 % of its peak from sample 2000 on (an overdriven input): no dip, a clipping stretch instead.

    Without the clipping rule the RMS of a sine clipped at 70 % of its peak reads about 83 % and the dip
    detector reported a dip on Va (issue 20).  Common practice, no source (flat tops = clipping).
    """
    from _hostile_support import _with

    path = _h5(_with("Va", _clip_from(2000, 0.7)), "clipped.h5")(tmp_path)
    res = CliRunner().invoke(cli, ["analyze", str(path), "--out", str(tmp_path / "out"), "--no-html", "--no-speed"])
    assert res.exit_code == 0, res.output
    doc = json.loads((tmp_path / "out" / "result.json").read_text(encoding="utf-8"))
    assert not [e for e in doc["events"] if e["kind"] in ("dip", "swell")], doc["events"]
    stretch = [q for q in doc["data_quality"] if q["check"] == "clipping_stretch"]
    assert len(stretch) == 1 and stretch[0]["channel"] == "Va"
    t_clip = 2000 / doc["capture"]["sample_rate_hz"]
    assert abs(stretch[0]["start_s"] - t_clip) <= 0.02 and stretch[0]["cycles"] >= 30
    assert any("clipped cycles dropped" in n for n in doc["notes"])


def test_a_real_dip_has_no_flat_tops():
    """A sine dipped to 50 % (peaks lower, not flat) has no flat-top run; a clipped one has two per cycle (no external source)."""
    import numpy as np

    from waveforms.clipping import flat_top_runs

    t = np.arange(5000) / 5000.0
    x = 375.0 * np.sin(2 * np.pi * 60 * t)
    x[2000:3000] *= 0.5
    assert flat_top_runs(x).size == 0
    clipped = np.clip(x, -300.0, 300.0)
    runs = flat_top_runs(clipped)
    assert 2 * 45 <= len(runs) <= 2 * 61  # two flat tops per unclipped cycle (the dipped cycles stay below 300 V)


def test_formula_like_text_is_guarded_in_csv_and_kept_exactly_in_parquet(tmp_path: Path):
    """summary.csv prefixes = + - @ cells with an apostrophe; summary.parquet keeps the typed value (docs/batch.md).

    The guard against spreadsheet formulas in CSV cells is common practice, no source; the choice to keep
    Parquet raw is ours (a typed format read by programs).
    """
    import pandas as pd

    from waveforms.summary import summary_frame, write_summary

    hostile = ['=HYPERLINK("http://example.invalid","x")', "+1+1", "-2", "@SUM(A1)", "plain"]
    rows = [{"file": f"f{i}.h5", "site": "yard", "nameplate": v, "verdict": "no event found"} for i, v in enumerate(hostile)]
    frame = summary_frame(rows)
    paths = write_summary(frame, tmp_path)
    csv = pd.read_csv(paths["csv"], keep_default_na=False)
    assert csv["nameplate"].tolist() == ["'" + v for v in hostile[:4]] + ["plain"]
    pq = pd.read_parquet(paths["parquet"])
    assert pq["nameplate"].tolist() == hostile
