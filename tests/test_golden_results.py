"""result.json of every bundled sample equals the stored copy made before a refactor.

Regression pin, no external source: the stored copies (``tests/data/golden/``, written by
``tests/data/make_golden.py``) hold what the chain found on each bundled sample.  A refactor must not
change a finding; an intended change regenerates the copies in the same commit.  Numbers compare to
1e-9 relative so that a different CPU's floating-point summation order does not fail the check.
"""

from __future__ import annotations

import importlib.util
import json
import math
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
_spec = importlib.util.spec_from_file_location("make_golden", HERE / "data" / "make_golden.py")
golden = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(golden)


def _diff(a, b, where="$"):
    if isinstance(a, dict) and isinstance(b, dict):
        if set(a) != set(b):
            return [f"{where}: keys {sorted(set(a) ^ set(b))}"]
        return [d for k in a for d in _diff(a[k], b[k], f"{where}.{k}")]
    if isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            return [f"{where}: length {len(a)} != {len(b)}"]
        return [d for i, (x, y) in enumerate(zip(a, b)) for d in _diff(x, y, f"{where}[{i}]")]
    if isinstance(a, float) or isinstance(b, float):
        if isinstance(a, (int, float)) and isinstance(b, (int, float)) and math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12):
            return []
    elif a == b:
        return []
    return [f"{where}: {a!r} != {b!r}"]


@pytest.mark.parametrize("path", golden.sample_paths(), ids=lambda p: p.stem)
def test_result_equals_stored_copy(path):
    stored = json.loads((golden.GOLDEN / f"{path.stem}.result.json").read_text())
    assert _diff(golden.fresh(path), stored) == []


def test_every_sample_has_a_stored_copy():
    assert sorted(p.name for p in golden.GOLDEN.glob("*.result.json")) == sorted(
        f"{p.stem}.result.json" for p in golden.sample_paths())
