"""The one list of header spellings: every example gives its channel, refusals are refused, the docs table is rendered from it.

Spellings are trade conventions seen in logger exports (common practice, no source); L1/L2/L3
for the AC lines follows IEC 60445 (from memory). The table check is a consistency check, no
external source.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from waveforms.errors import MappingError
from waveforms.io.mapping import Mapping, resolve_channels
from waveforms.io.spellings import REFUSALS, SPELLINGS, TABLE_BEGIN, TABLE_END, recognise, refusal, render_into

DOC = Path(__file__).resolve().parents[1] / "docs" / "importing.md"
EXAMPLES = [(sp.meaning, e, label) for sp in SPELLINGS for e, label in sp.examples]
REFUSED = [e for r in REFUSALS for e in r.examples]


@pytest.mark.parametrize(("rule", "header", "label"), EXAMPLES, ids=[e for _, e, _ in EXAMPLES])
def test_every_listed_example_gives_its_channel(rule, header, label):
    rec = recognise(header)
    assert rec is not None, header
    assert rec.label == label
    # the kind inferred from the reference or the unit (no kind letter) is said in the notes
    assert bool(rec.rule) == ("no kind letter" in rule or "conductor alone" in rule)


@pytest.mark.parametrize("header", REFUSED)
def test_every_refused_example_is_refused_with_advice(header):
    assert recognise(header) is None
    why = refusal(header)
    assert why is not None and repr(header) in why and "\n" not in why
    assert "mapping" in why  # says what to write in the mapping file


@pytest.mark.parametrize(("header", "kind", "ref"), [
    ("L1-N [V]", "voltage", "LN"), ("L1 [A]", "current", "line"), ("L1-L2", "voltage", "LL"), ("L12", "voltage", "LL"),
    ("A-N", "voltage", "LN"), ("AN", "voltage", "LN"), ("Phase A Voltage", "voltage", "LN"), ("Voltage L1", "voltage", "LN"),
    ("Current L1", "current", "line"), ("I L1", "current", "line"),
])
def test_issue_conventions(header, kind, ref):
    rec = recognise(header)
    assert rec is not None and (rec.kind, rec.conductor, rec.reference) == (kind, "A", ref)


def test_refusal_message_in_resolve_names_the_column_and_the_mapping_key():
    with pytest.raises(MappingError, match=r"f\.csv: column 'Ia_rms': looks like a derived value \(rms\).*ignore = \['Ia_rms'\]"):
        resolve_channels(["Va", "Ia_rms"], Mapping(), "f.csv")
    with pytest.raises(MappingError, match=r"column 'L1': a conductor name only.*\[channels\.Va\] column = 'L1'"):
        resolve_channels(["L1"], Mapping(), "f.csv")


def test_recognition_is_said_in_the_notes():
    specs, notes = resolve_channels(["L1-N [V]", "L1 [A]"], Mapping(), "f.csv")
    assert [s.name for s in specs] == ["Va", "Ia"]
    assert any("'L1-N [V]' recognised as Va" in n and "conductor-to-neutral: a voltage" in n for n in notes)


def test_docs_table_is_rendered_from_the_list():
    text = DOC.read_text(encoding="utf-8")
    assert TABLE_BEGIN in text and TABLE_END in text
    assert render_into(text) == text, "run: python -m waveforms.io.spellings --write docs/importing.md"
