"""Helpers shared by the importer tests: the fixtures' closed-form signals and CLI runs."""

from __future__ import annotations

import importlib.util
from pathlib import Path

from click.testing import CliRunner

DATA = Path(__file__).resolve().parent / "data"

_spec = importlib.util.spec_from_file_location("make_fixtures", DATA / "make_fixtures.py")
assert _spec is not None and _spec.loader is not None
make_fixtures = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(make_fixtures)
wave = make_fixtures.wave


def run_cli(*args: str):
    """Run ``waveforms ARGS`` in-process; returns click's Result (stdout and stderr kept apart)."""
    from waveforms.cli import cli

    return CliRunner().invoke(cli, [str(a) for a in args], catch_exceptions=True)


def assert_clean_failure(result, match: str) -> None:
    """Non-zero exit, one ``error:`` line containing ``match``, and no traceback."""
    import re

    assert result.exit_code != 0, result.output
    assert result.exception is None or isinstance(result.exception, SystemExit), repr(result.exception)
    err = result.stderr
    assert "Traceback" not in err and "Traceback" not in result.stdout
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert lines[0].startswith("error: ")
    assert re.search(match, lines[0]), lines[0]
