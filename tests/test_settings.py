"""Settings dataclasses: each field's bound is written once and met by every way in.

The project's own rules (no external source).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from waveforms.analysis import analyze, assess_motor_thermal
from waveforms.cli import cli
from waveforms.detect import DetectParams
from waveforms.errors import InvalidParameterError
from waveforms.motor.thermal import ThermalParams
from waveforms.recipe import RecipeError, load_recipe, stages
from waveforms.settings import SettingError

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"


def test_a_settings_object_checks_its_fields_when_made():
    with pytest.raises(SettingError, match=r"min_stall_s: -1.0 is below the minimum 0") as e:
        DetectParams(min_stall_s=-1.0)
    assert e.value.field == "min_stall_s"
    with pytest.raises(SettingError, match=r"min_open_cycles: 2.5 must be a whole number"):
        DetectParams(min_open_cycles=2.5)


def test_the_motor_time_constant_has_one_bound_everywhere(tmp_path):
    # the same rule (at least 1 s) from the library step, a recipe table and the command line
    with pytest.raises(SettingError, match="motor_tau_s: 0.5 is below the minimum 1 s"):
        assess_motor_thermal(None, None, ThermalParams(motor_tau_s=0.5))
    with pytest.raises(RecipeError, match="key thermal.motor_tau_s: 0.5 is below the minimum 1 s"):
        load_recipe("investigate").with_params("thermal", {"motor_tau_s": 0.5})
    r = CliRunner().invoke(cli, ["analyze", str(SAMPLES / "healthy_run.h5"), "--out", str(tmp_path / "o"), "--motor-tau", "0.5"])
    assert r.exit_code == 2 and "--motor-tau: 0.5 is below the minimum 1 s" in r.output
    assert load_recipe("investigate").with_params("thermal", {"motor_tau_s": 1.0}).params("thermal")["motor_tau_s"] == 1.0


def test_analyze_meets_the_recipe_checks():
    from waveforms.io import read_capture

    cap = read_capture(SAMPLES / "healthy_run.h5")
    with pytest.raises(InvalidParameterError, match=r"key speed.windw_s: unknown parameter"):
        analyze(cap, speed_options={"windw_s": 2.0})


def test_every_stage_key_has_a_meaning():
    for st in stages():
        for p in st.params:
            assert p.doc and not p.doc.startswith("see "), f"{st.name}.{p.name} has no description"
