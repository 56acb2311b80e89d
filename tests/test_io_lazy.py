"""Importer loading is lazy: registering a format imports nothing heavy; a module is imported when its file is met.

Consistency checks, no external source.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from waveforms.io.registry import HDF5_MAGIC, Deferred, Importer, head_matches

ROOT = Path(__file__).resolve().parents[1]
DATA = ROOT / "tests" / "data"


def _modules_after(code: str, names: tuple[str, ...]) -> list[str]:
    probe = code + f"\nimport json, sys\nprint(json.dumps([m for m in {names!r} if m in sys.modules]))"
    env = dict(os.environ, PYTHONPATH=str(ROOT) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True, env=env, cwd=ROOT, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


FORMAT_MODULES = ("h5py", "waveforms.io.hdf5_native", "waveforms.io.hdf5_mapped", "waveforms.io.comtrade",
                  "waveforms.io.delimited", "waveforms.io.parquet", "waveforms.io.hdf5_matrix", "pyarrow.parquet")


def test_registering_imports_no_format_module():
    code = "import waveforms.io\nfrom waveforms.io.registry import importers\nassert len(importers()) >= 4"
    assert _modules_after(code, FORMAT_MODULES) == []


def test_reading_a_small_csv_does_not_import_h5py():
    code = ("import waveforms.io\nfrom waveforms.io import read_capture, ReadOptions\n"
            f"cap = read_capture({str(DATA / 'csv_comma_seconds.csv')!r}, options=ReadOptions(nominal_frequency_hz=50.0))\n"
            "assert cap.n_samples > 0")
    loaded = _modules_after(code, FORMAT_MODULES)
    assert "waveforms.io.delimited" in loaded  # guard: the CSV was read by its importer
    assert not {"h5py", "waveforms.io.hdf5_native", "waveforms.io.comtrade", "pyarrow.parquet"} & set(loaded), loaded


def test_reading_native_hdf5_does_not_import_the_csv_importer():
    code = ("from waveforms.io import read_capture\n"
            f"cap = read_capture({str(DATA / 'native.h5')!r})\nassert cap.n_samples > 0")
    loaded = _modules_after(code, FORMAT_MODULES)
    assert "h5py" in loaded
    assert "waveforms.io.delimited" not in loaded and "waveforms.io.comtrade" not in loaded, loaded


def test_deferred_function_is_imported_on_first_call():
    d = Deferred("json:dumps")
    assert not d.loaded
    assert d([1]) == "[1]" and d.loaded


def test_magic_precheck_skips_the_sniffer(tmp_path):
    calls = []
    imp = Importer("x", "test only", (".h5",), sniff=lambda p: calls.append(p) or True, read=lambda p, o: None, magic=HDF5_MAGIC)
    text = tmp_path / "a.h5"
    text.write_text("time,Va\n0,1\n")
    assert imp.sniff(text) is False and calls == []
    block = tmp_path / "b.mat"  # HDF5 signature after a 512-byte user block (as MATLAB v7.3 writes)
    block.write_bytes(b"MATLAB 7.3 MAT-file".ljust(512, b" ") + HDF5_MAGIC[0][1] + b"\0" * 16)
    assert head_matches(block, HDF5_MAGIC)
    assert imp.sniff(block) is True and calls == [block]
    assert imp.sniff(tmp_path) is False  # a folder
