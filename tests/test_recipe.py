"""Recipes: loading, validation errors (file and key named), the stage registry, running one capture."""

from __future__ import annotations

import cmath
import dataclasses
import filecmp
import importlib
import inspect
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from _batch_support import make_capture, write_nameplate
from waveforms.cli import cli
from waveforms.motor.nameplate import load_nameplate
from waveforms.recipe import (
    DEFAULT_RECIPE, RecipeError, load_recipe, parse_recipe, run_recipe, shipped_recipes, stage_names, stages,
)

REPO = Path(__file__).resolve().parents[1]


def _write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "r.toml"
    p.write_text(text, encoding="utf-8")
    return p


# -- shipped recipes -------------------------------------------------------------------
def test_shipped_recipes_load_and_match_top_level_pipelines_folder():
    shipped = shipped_recipes()
    assert {"investigate", "triage"} <= set(shipped)
    assert DEFAULT_RECIPE in shipped
    top = sorted(p.name for p in (REPO / "pipelines").glob("*.toml"))
    pkg = sorted(p.name for p in (REPO / "waveforms" / "pipelines_data").glob("*.toml"))
    assert top == pkg and top
    match, mismatch, errors = filecmp.cmpfiles(REPO / "pipelines", REPO / "waveforms" / "pipelines_data", top, shallow=False)
    assert match == top and not mismatch and not errors
    for name in shipped:
        rec = load_recipe(name)
        assert rec.name == name
        # waveform recipes read a capture first; the trend recipe reads an RMS trend log first (docs/trends.md)
        assert rec.stage_names[0] == ("trend_import" if name == "trend" else "import")


def test_triage_skips_html_report_and_investigate_writes_it():
    tri = load_recipe("triage")
    inv = load_recipe("investigate")
    assert tri.params("report")["html"] is False
    assert "speed" not in tri.stage_names
    assert inv.params("report")["html"] is True
    assert inv.stage_names == ("import", "hookup", "measure", "speed", "detect", "thermal", "report")


# -- validation errors name the file and the key -------------------------------------------
@pytest.mark.parametrize(
    ("text", "where", "problem"),
    [
        ('[recipe]\nname="x"\nstages=["import","mesure"]\n', r"key recipe\.stages\[1\]", "unknown stage 'mesure'"),
        ('[recipe]\nname="x"\nstages=["import","measure"]\n[measure]\nchunk=3\n', r"key measure\.chunk", "unknown parameter"),
        ('[recipe]\nname="x"\nstages=["import","speed"]\n[speed]\nwindow_s="long"\n', r"key speed\.window_s", "must be a number"),
        ('[recipe]\nname="x"\nstages=["import","report"]\n[report]\ncycles="xlsx"\n', r"key report\.cycles", "not one of"),
        ('[recipe]\nname="x"\nstages=["import","measure","thermal"]\n[thermal]\ntrip_classes=["15"]\n',
         r"key thermal\.trip_classes", "'15' is not one of"),
        ('[recipe]\nname="x"\nstages=["import","detect","measure"]\n', r"key recipe\.stages\[1\]", r"needs \['measure'\]"),
        ('[recipe]\nname="x"\nstages=["import","measure"]\n[speed]\nwindow_s=2.0\n', r"table \[speed\]", "not in recipe.stages"),
        ('[recipe]\nname="x"\nstages=["import","speed"]\n[speed]\ncomponents="bogus"\n', r"table \[speed\]", "components"),
        ('[recipe]\nname="x"\nstages=["import","import"]\n', r"key recipe\.stages\[1\]", "listed twice"),
        ('[recipe]\nname="x"\nstages=[]\n', r"key recipe\.stages", "non-empty list"),
        ('[recipe]\nstages=["import"]\n', r"key recipe\.name", "missing"),
        ('[recipe]\nname="x"\nstages=["import"]\nstage=["measure"]\n', r"key recipe\.stage", "unknown key"),
        ('name="x"\n', r"table \[recipe\]", "missing"),
        ('[recipe]\nname="x"\nstages=["import"]\n[batch]\njobs=-1\n', r"key batch\.jobs", "below the minimum"),
        ('[recipe]\nname="x"\nstages=["import"]\n[import]\nformat="xlsx"\n', r"key import\.format", "not an importer"),
        ('[recipe]\nname="x"\nstages=["import","measure","detect"]\n[detect]\ndetectors=["stal"]\n',
         r"key detect\.detectors", "'stal' is not a detector"),
        ('[recipe]\nname="x"\nstages=["import"]\nplugins=["no_such_module_here"]\n', r"key recipe\.plugins\[0\]", "cannot be imported"),
        ('[recipe]\nname = "x"\nstages = ["import"\n', "", "not valid TOML"),
    ],
)
def test_recipe_errors_name_file_and_key(tmp_path, text, where, problem):
    path = _write(tmp_path, text)
    with pytest.raises(RecipeError, match=rf"r\.toml{': ' + where if where else ''}.*{problem}"):
        load_recipe(path)


def test_missing_recipe_name_lists_the_shipped_ones():
    with pytest.raises(RecipeError, match=r"not a shipped recipe name \(\['investigate', 'trend', 'triage'"):
        load_recipe("investgate")


def test_bool_is_not_accepted_as_a_number(tmp_path):
    # TOML true is a boolean; Python's bool is an int subclass, so this is a real trap.
    path = _write(tmp_path, '[recipe]\nname="x"\nstages=["import","speed"]\n[speed]\nwindow_s=true\n')
    with pytest.raises(RecipeError, match=r"key speed\.window_s: True must be a number"):
        load_recipe(path)


def test_defaults_filled_and_fingerprint_tracks_parameters_not_batch_settings():
    base = {"recipe": {"name": "x", "stages": ["import", "measure", "detect"]}}
    a = parse_recipe(base)
    assert set(a.params("detect")) == {p.name for p in next(s for s in stages() if s.name == "detect").params}
    b = parse_recipe({**base, "batch": {"jobs": 2, "scheduler": "tcp://10.0.0.9:8786"}})
    c = parse_recipe({**base, "detect": {"min_stall_s": 2.5}})
    assert a.fingerprint() == b.fingerprint()
    assert a.fingerprint() != c.fingerprint()
    assert c.params("detect")["min_stall_s"] == 2.5


# -- the registry is the one list ---------------------------------------------------------
def test_every_forwarded_parameter_exists_in_the_wrapped_library():
    """A stage parameter passed on to a library function must be one of its arguments or settings fields."""
    checked = 0
    for st in stages():
        if not st.library or ":" not in st.library:
            continue
        mod, name = st.library.split(":")
        target = getattr(importlib.import_module(mod), name)
        if st.name in ("speed", "detect", "thermal", "trend_detect"):
            settings = {"speed": "waveforms.speed.estimator:SpeedSettings", "detect": "waveforms.detect:DetectParams",
                        "thermal": "waveforms.motor.thermal:ThermalParams",
                        "trend_detect": "waveforms.detect:DetectParams"}[st.name]
            m2, n2 = settings.split(":")
            accepted = {f.name for f in dataclasses.fields(getattr(importlib.import_module(m2), n2))}
            accepted |= set(inspect.signature(target).parameters)
        else:
            accepted = set(inspect.signature(target).parameters)
        for p in st.params:
            if p.target:
                assert p.target in accepted, f"stage {st.name}: parameter {p.name} is not accepted by {st.library}"
                checked += 1
    assert checked >= 20


def test_recipes_command_lists_registry_and_rejects_bad_file(tmp_path):
    runner = CliRunner()
    res = runner.invoke(cli, ["recipes"])
    assert res.exit_code == 0, res.output
    for name in ("investigate", "triage", *stage_names()):
        assert name in res.output
    res = runner.invoke(cli, ["recipes", "triage"])
    assert res.exit_code == 0 and "dip_threshold_pct = 90.0" in res.output
    bad = _write(tmp_path, '[recipe]\nname="x"\nstages=["import","measure"]\n[measure]\noverlap_cycles=5\n')
    res = runner.invoke(cli, ["recipes", str(bad)])
    assert res.exit_code == 2
    assert "r.toml: key measure.overlap_cycles: 5 is below the minimum 20" in res.output
    assert "Traceback" not in res.output


# -- running one capture ----------------------------------------------------------------------
def _fortescue_i2_i1_pct(mags: tuple[float, float, float]) -> float:
    """|I2| / |I1| from phasors at 0, -120, +120 degrees (Fortescue 1918, the standard transformation matrix)."""
    a = cmath.exp(2j * math.pi / 3)
    ia, ib, ic = (m * cmath.exp(1j * math.radians(d)) for m, d in zip(mags, (0.0, -120.0, 120.0), strict=True))
    i1 = (ia + a * ib + a * a * ic) / 3
    i2 = (ia + a * a * ib + a * ic) / 3
    return 100 * abs(i2) / abs(i1)


def test_run_recipe_on_one_capture_gives_pandas_views_and_the_analysis(tmp_path):
    path = make_capture(tmp_path / "pump.h5", i_rms=(20.0, 20.0, 16.0))
    plate = load_nameplate(write_nameplate(tmp_path / "plate.toml", fla=21.0))
    state = run_recipe("triage", path, nameplate=plate, out_dir=tmp_path / "out")
    cyc = state.cycles
    assert len(cyc) > 50
    # steady part of the capture: I2/I1 from the measured table against Fortescue's matrix on the set amplitudes
    mid = cyc["I2_I1_pct"].iloc[10:-10].to_numpy()
    assert np.allclose(mid, _fortescue_i2_i1_pct((20.0, 20.0, 16.0)), rtol=2e-3)
    assert state.analysis is not None and state.analysis.verdict == state.verdict
    assert (tmp_path / "out" / "events.csv").is_file()
    assert not (tmp_path / "out" / "report.html").exists()  # triage: no HTML
    assert state.events_frame().columns[:4].tolist() == ["kind", "phase", "start_s", "end_s"]


def test_recipe_chain_agrees_with_analyze(tmp_path):
    """Consistency of two paths (no external source): the recipe's stages and `analyze` find the same."""
    from waveforms.analysis import analyze
    from waveforms.io import read_capture

    path = make_capture(tmp_path / "open_c.h5", seconds=3.0, open_c_at_s=1.5)
    plate = load_nameplate(write_nameplate(tmp_path / "plate.toml"))
    state = run_recipe(load_recipe("investigate").without("report"), path, nameplate=plate)
    ref = analyze(read_capture(path), plate)
    assert [(e.kind, e.phase) for e in state.events] == [(e.kind, e.phase) for e in ref.events]
    assert [e.kind for e in state.events].count("open_phase") == 1
    assert state.verdict == ref.verdict
    assert state.speed is not None and len(state.speed) > 0
    pd.testing.assert_frame_equal(state.speed, ref.speed)
    assert state.thermal.summary["thermal_capacity_used_pct"] == pytest.approx(ref.thermal.summary["thermal_capacity_used_pct"])
    # both paths call the same step functions of waveforms.analysis: notes, parameters and states agree exactly
    assert state.analysis.notes == ref.notes
    assert state.analysis.parameters == ref.parameters
    assert state.analysis.quality == ref.quality
    pd.testing.assert_frame_equal(state.timeline, ref.timeline)


def test_recipe_chain_agrees_with_analyze_without_nameplate_or_speed(tmp_path):
    """Consistency of two paths (no external source): no nameplate (no speed, no thermal), and triage (no speed stage)."""
    from waveforms.analysis import analyze
    from waveforms.io import read_capture

    path = make_capture(tmp_path / "open_c.h5", seconds=3.0, open_c_at_s=1.5)
    state = run_recipe(load_recipe("investigate").without("report"), path)
    ref = analyze(read_capture(path))
    assert state.verdict == ref.verdict and "No nameplate was given" in ref.verdict
    assert state.analysis.notes == ref.notes
    assert any(n.startswith("speed: not estimated, no nameplate") for n in ref.notes)
    assert state.speed is None and state.thermal is None and ref.thermal is None
    assert state.analysis.parameters == ref.parameters
    plate = load_nameplate(write_nameplate(tmp_path / "plate.toml"))
    tri = run_recipe(load_recipe("triage").without("report"), path, nameplate=plate)
    ref2 = analyze(read_capture(path), plate, speed=False)
    assert tri.verdict == ref2.verdict and tri.analysis.notes == ref2.notes
    assert tri.analysis.parameters == ref2.parameters and ref2.parameters["speed_enabled"] is False


def test_default_speed_window_rule():
    """The project's own rule (our choice, no external source): a sixth of the capture, clamped to 0.5-10 s."""
    from waveforms.analysis import (
        default_speed_window_s,
        resolve_speed_options,
        speed_record,
    )

    assert default_speed_window_s(1.0) == 0.5
    assert default_speed_window_s(14.0) == 2.33
    assert default_speed_window_s(60.0) == 10.0
    assert default_speed_window_s(3600.0) == 10.0
    cap = type("C", (), {"duration_s": 30.0})()
    assert resolve_speed_options(cap, None) == {"window_s": 5.0}
    assert resolve_speed_options(cap, {"window_s": 2.0}) == {"window_s": 2.0}
    assert "window_s" not in resolve_speed_options(cap, {"settings": object()})
    # the record leaves out a setting given at its library default (SpeedSettings.threshold_db = 12.0)
    assert speed_record({"window_s": 5.0, "threshold_db": 12.0, "slot_nus": [-1, 1], "max_slip": 0.3}) == {
        "window_s": 5.0, "max_slip": 0.3}


def test_with_params_checks_values_like_a_recipe_file():
    rec = load_recipe("investigate")
    changed = rec.with_params("thermal", {"motor_tau_s": 900.0})
    assert changed.params("thermal")["motor_tau_s"] == 900.0
    assert rec.params("thermal")["motor_tau_s"] is None  # the original is unchanged (frozen)
    assert changed.fingerprint() != rec.fingerprint()
    with pytest.raises(RecipeError, match=r"key thermal.motor_tau_s: .*below the minimum"):
        rec.with_params("thermal", {"motor_tau_s": 0.5})
    with pytest.raises(RecipeError, match=r"key speed.windw_s: unknown parameter"):
        rec.with_params("speed", {"windw_s": 2.0})
    with pytest.raises(RecipeError, match=r"stage 'speed' is not in recipe.stages"):
        load_recipe("triage").with_params("speed", {"window_s": 2.0})
