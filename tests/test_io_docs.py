"""docs/importing.md stays in step with the importer registry (names and extensions); a consistency check, no external source."""

from __future__ import annotations

import re
from pathlib import Path

from waveforms.io.registry import importers

DOC = Path(__file__).resolve().parents[1] / "docs" / "importing.md"


def test_format_table_matches_registry():
    text = DOC.read_text(encoding="utf-8").split("## Formats", 1)[1].split("\n## ", 1)[0]
    rows = re.findall(r"^\| `([a-z0-9-]+)` \| ([^|]+) \|", text, flags=re.MULTILINE)
    documented = {name: tuple(ext.split()) for name, ext in rows}
    registered = {i.name: i.extensions for i in importers()}
    assert registered  # guard: the registry is not empty
    assert documented == registered
