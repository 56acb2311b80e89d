"""The command a person types and the name the tool presents itself under (no external source: project naming)."""

from __future__ import annotations

import json
import subprocess
import sys
import tomllib
from pathlib import Path

from click.testing import CliRunner

from waveforms import PROGRAM_NAME, __version__
from waveforms.cli import cli
from waveforms.report import validate

ROOT = Path(__file__).resolve().parent.parent


def test_console_scripts_are_the_projects_own():
    scripts = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]["scripts"]
    assert set(scripts) == {"motor-waveforms", "mwf"}
    assert PROGRAM_NAME == "motor-waveforms"
    assert len(set(scripts.values())) == 1  # the alias runs the same entry point


def test_version_and_help_name_the_command():
    r = CliRunner().invoke(cli, ["--version"], prog_name=PROGRAM_NAME)
    assert r.exit_code == 0 and r.output.startswith(f"{PROGRAM_NAME}, version {__version__}")
    r = subprocess.run([sys.executable, "-m", "waveforms", "--help"], capture_output=True, text=True, check=True)
    assert r.stdout.startswith(f"Usage: {PROGRAM_NAME} ")


def test_result_names_the_software(tmp_path):
    out = tmp_path / "o"
    r = CliRunner().invoke(cli, ["analyze", str(ROOT / "sample_captures" / "healthy_run.h5"), "--out", str(out),
                                 "--no-speed", "--no-html"])
    assert r.exit_code == 0, r.output
    doc = json.loads((out / "result.json").read_text())
    validate(doc)
    assert doc["provenance"]["software"] == {"name": PROGRAM_NAME, "version": __version__}


def test_docs_do_not_type_the_old_command():
    """Every example a reader copies starts with the command's own name."""
    offenders = []
    for p in [ROOT / "README.md", ROOT / "DEVELOPERS.md", *sorted((ROOT / "docs").glob("*.md")),
              ROOT / "sample_captures" / "README.md", ROOT / ".ci" / "run"]:
        for n, line in enumerate(p.read_text().splitlines(), 1):
            s = line.strip().lstrip("$ ").strip("`")
            if s.startswith("waveforms ") and not s.startswith("waveforms/"):
                offenders.append(f"{p.name}:{n}: {line.strip()}")
    assert offenders == []
