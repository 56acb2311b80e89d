"""Start-up of the command: heavy libraries are imported only by the subcommand that uses them.

Consistency checks, no external source.
"""

from __future__ import annotations

import importlib
import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

ROOT = Path(__file__).resolve().parents[1]
HEAVY = ("pandas", "scipy", "matplotlib", "h5py", "pyarrow", "jinja2", "dask")


def _loaded_after(code: str) -> list[str]:
    probe = code + f"\nimport json, sys\nprint(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))"
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, env=env, cwd=ROOT, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_importing_the_cli_loads_no_heavy_library():
    assert _loaded_after("import waveforms.cli") == []


def test_top_level_help_loads_no_heavy_library():
    code = ("import contextlib, io\nfrom waveforms.cli import cli\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            "    try:\n        cli(['--help'], prog_name='motor-waveforms')\n"
            "    except SystemExit:\n        pass")
    assert _loaded_after(code) == []


def test_listed_help_is_each_commands_own():
    from waveforms import cli as cli_mod

    for name, text in cli_mod.COMMAND_MODULES.items():
        cmd = importlib.import_module(f"waveforms.commands.{name}").command
        assert cmd.name == name
        assert cmd.get_short_help_str(10**6) == text, name


def test_help_lists_every_command_and_each_runs():
    from waveforms import cli as cli_mod

    res = CliRunner().invoke(cli_mod.cli, ["--help"])
    assert res.exit_code == 0
    listed = [ln.split()[0] for ln in res.output.split("Commands:")[1].splitlines() if ln.startswith("  ")]
    assert listed == sorted(cli_mod.COMMAND_MODULES)
    for name in cli_mod.COMMAND_MODULES:
        sub = CliRunner().invoke(cli_mod.cli, [name, "--help"])
        assert sub.exit_code == 0 and "Usage: " in sub.output, name
    bad = CliRunner().invoke(cli_mod.cli, ["no-such-command"])
    assert bad.exit_code == 2 and "No such command" in bad.output


@pytest.mark.parametrize("name", ["dip_one_phase.csv", "dip_three_phase.h5"])
def test_inspect_loads_no_plotting_or_scipy(name):
    # inspect reads the file (pandas/pyarrow for CSV, h5py for HDF5) but needs neither scipy nor matplotlib
    code = ("import contextlib, io\nfrom waveforms.cli import cli\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            f"    try:\n        cli(['inspect', 'sample_captures/{name}'], prog_name='motor-waveforms')\n"
            "    except SystemExit as e:\n        assert not e.code, e.code")
    loaded = _loaded_after(code)
    assert "matplotlib" not in loaded and "scipy" not in loaded and "jinja2" not in loaded
    # a CSV with numeric stamps is parsed by pyarrow alone: pandas (about half a second to import) is left out too
    assert "pandas" not in loaded


def test_csv_columns_read_from_arrow_buffers_keep_nulls_and_offsets():
    # the numeric CSV path copies Arrow float64 buffers itself (no pandas); pyarrow's own conversion is the
    # reference (a general reference library, not our code)
    import numpy as np
    import pyarrow as pa

    from waveforms.io.delimited import _float_column

    arr = pa.chunked_array([pa.array([9.0, 1.0, None, 3.0, 4.5, 8.0]).slice(1, 4), pa.array([None, -2.0, 7.0])])
    expected = np.concatenate([c.to_numpy(zero_copy_only=False) for c in arr.chunks])
    np.testing.assert_array_equal(_float_column(arr), expected)


def test_the_analysis_module_leaves_scipy_to_the_stages_that_use_it():
    """scipy.signal (about 1 s to import) comes with the measurement engine and the thermal filter, not with the chain's module."""
    code = "import sys, waveforms.analysis, waveforms.motor.thermal\nprint(json.dumps('scipy.signal' in sys.modules))"
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", "import json\n" + code], capture_output=True, text=True, env=env, cwd=ROOT, check=True)
    assert json.loads(out.stdout.strip().splitlines()[-1]) is False


def test_top_level_help_does_not_import_numpy():
    """``--help`` needs click only: the package's own names are served on first use (PEP 562)."""
    code = ("import contextlib, io, json, sys\nfrom waveforms.cli import cli\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            "    try:\n        cli(['--help'], prog_name='motor-waveforms')\n"
            "    except SystemExit:\n        pass\n"
            "print(json.dumps('numpy' in sys.modules))")
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=ROOT, check=True)
    assert json.loads(out.stdout.strip().splitlines()[-1]) is False
    import waveforms

    assert waveforms.Capture.__name__ == "Capture" and callable(waveforms.read_capture)
