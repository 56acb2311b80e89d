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
