"""Channel mapping: header spellings, unit prefixes, CT/PT ratios, mapping-file validation."""

from __future__ import annotations

import pytest

from waveforms.errors import MappingError, CaptureReadError
from waveforms.io.mapping import (
    Mapping, is_time_header, merge_mappings, parse_mapping, parse_ratio, recognise, resolve_channels,
    split_unit, time_header_unit, unit_factor,
)

# Header spellings seen in logger exports: trade conventions, common practice, no source.
# Phase labels: A/B/C, 1/2/3 and L1/L2/L3 name the same three lines (IEC 60445 uses L1, L2, L3
# for AC lines, from memory); U is the IEC letter for voltage, V the North American one.
SPELLINGS = [
    ("Va", "Va"), ("VA", "Va"), ("Van", "Va"), ("V1 (V)", "Va"), ("UL1", "Va"), ("U1", "Va"), ("UL1N", "Va"),
    ("Voltage L1", "Va"), ("vb", "Vb"), ("U3", "Vc"), ("VL3N", "Vc"),
    ("Vab", "Vab"), ("U12", "Vab"), ("UL1-L2", "Vab"), ("VL23", "Vbc"), ("U31 (kV)", "Vca"), ("Vca", "Vca"),
    ("Ia", "Ia"), ("I1 (A)", "Ia"), ("IL1", "Ia"), ("IL2 [mA]", "Ib"), ("Current L3", "Ic"), ("I_c", "Ic"),
    ("In", "In"), ("IN", "In"), ("VN", "Vn"), ("UNE", "Vn"),
]


@pytest.mark.parametrize(("header", "label"), SPELLINGS)
def test_recognised_spellings(header, label):
    rec = recognise(header)
    assert rec is not None, header
    assert rec.label == label


@pytest.mark.parametrize("header", ["Vba", "U21", "Temperature", "Ix", "P (W)", "Status", "V", "I", "Vd"])
def test_unrecognised_spellings(header):
    # reversed pairs would flip the sign, so they are never guessed (common practice, no source)
    assert recognise(header) is None


@pytest.mark.parametrize(("header", "name", "unit"), [
    ("V1 (kV)", "V1", "kV"), ("IL2 [mA]", "IL2", "mA"), ("Va/V", "Va", "V"), ("Ia", "Ia", None), ("Zeit [ms]", "Zeit", "ms"),
])
def test_split_unit(header, name, unit):
    assert split_unit(header) == (name, unit)


@pytest.mark.parametrize(("unit", "kind", "factor"), [
    # SI prefixes: BIPM, The International System of Units, 9th ed. (2019), Table 7
    ("V", "voltage", 1.0), ("kV", "voltage", 1e3), ("mV", "voltage", 1e-3), ("A", "current", 1.0),
    ("kA", "current", 1e3), ("mA", "current", 1e-3), ("uA", "current", 1e-6), ("µA", "current", 1e-6),
    ("MV", "voltage", 1e6), ("Vrms", "voltage", 1.0),
])
def test_unit_prefixes(unit, kind, factor):
    assert unit_factor(unit, kind, "f.csv", "column x") == factor


def test_wrong_unit_for_kind():
    with pytest.raises(CaptureReadError, match=r"f.csv: column 'Va': unit 'A' does not fit a voltage channel"):
        unit_factor("A", "voltage", "f.csv", "column 'Va'")
    with pytest.raises(CaptureReadError, match=r"unit 'Hz' is not a voltage or current unit"):
        unit_factor("Hz", "current", "f.csv", "column 'Ia'")


@pytest.mark.parametrize(("value", "ratio"), [
    # rated transformation ratio = rated primary / rated secondary (IEC 61869-2 for CTs, IEC 61869-3 for PTs; from memory)
    ("400:5", 80.0), ("11000:110", 100.0), (80, 80.0), ("2.5", 2.5),
])
def test_ratios(value, ratio):
    assert parse_ratio(value, "m.toml", "key channels.Ia.ratio") == pytest.approx(ratio, rel=1e-15)


@pytest.mark.parametrize("value", ["400/5", "x", "5:0", -3, 0])
def test_bad_ratios(value):
    with pytest.raises(MappingError, match=r"m.toml: key channels.Ia.ratio: ratio"):
        parse_ratio(value, "m.toml", "key channels.Ia.ratio")


@pytest.mark.parametrize(("header", "is_time", "unit"), [
    ("Time", True, None), ("Time (s)", True, "s"), ("time_s", True, "s"), ("Zeit [ms]", True, "ms"),
    ("t", True, None), ("Timestamp", True, None), ("Va", False, None), ("Temperature", False, None),
])
def test_time_headers(header, is_time, unit):
    assert is_time_header(header) is is_time
    if is_time:
        assert time_header_unit(header) == unit


def test_mapping_typo_gets_suggestion():
    with pytest.raises(MappingError, match=r"m.toml: key channels.Va.colum: unknown key; did you mean 'column'"):
        parse_mapping({"channels": {"Va": {"colum": "U1"}}}, "m.toml")
    with pytest.raises(MappingError, match=r"key chanels: unknown key; did you mean 'channels'"):
        parse_mapping({"chanels": {}}, "m.toml")


def test_resolve_guesses_and_records():
    specs, notes = resolve_channels(["UL1 [kV]", "IL1"], Mapping(), "f.csv")
    assert [s.name for s in specs] == ["Va", "Ia"]
    assert specs[0].scale == 1e3 and specs[0].guessed
    assert any("recognised as Va" in n for n in notes) and any("no unit stated" in n for n in notes)


def test_resolve_mapping_overrides_and_ratio():
    m = parse_mapping({"channels": {"Ia": {"column": "Strom 1", "unit": "A", "ratio": "400:5"}, "Va": {"column": "Spannung 1", "unit": "kV"}}}, "m.toml")
    specs, _ = resolve_channels(["Spannung 1", "Strom 1"], m, "f.csv")
    assert [(s.name, s.scale, s.guessed) for s in specs] == [("Va", 1e3, False), ("Ia", 80.0, False)]


def test_resolve_unknown_column_suggests():
    with pytest.raises(MappingError, match=r"f.csv: column 'Ix': not a known channel name; did you mean 'In', 'Ic', 'Ib'\?.*--ignore 'Ix'"):
        resolve_channels(["Va", "Ix"], Mapping(), "f.csv")


def test_resolve_missing_mapped_column_suggests():
    m = parse_mapping({"channels": {"Va": {"column": "Volt 1"}}}, "m.toml")
    with pytest.raises(MappingError, match=r"column 'Volt 1' \(mapping channels.Va\): not found in the file; did you mean 'Volt1'"):
        resolve_channels(["Volt1", "Ia"], m, "f.csv")


def test_resolve_duplicate_channel():
    with pytest.raises(MappingError, match=r"columns 'Va' and 'UL1': both give channel Va"):
        resolve_channels(["Va", "UL1"], Mapping(), "f.csv")


def test_ignore_and_unknown_policy():
    specs, notes = resolve_channels(["Va", "Temp", "Status"], parse_mapping({"ignore": ["Temp"], "unknown": "ignore"}), "f.csv")
    assert [s.name for s in specs] == ["Va"]
    assert len(notes) == 3  # Va recognised, Temp ignored, Status dropped


def test_merge_cli_over_file():
    merged = merge_mappings({"channels": {"Va": {"column": "U1", "unit": "V"}}, "ignore": ["T"]},
                            {"channels": {"Va": {"unit": "kV"}}, "ignore": ["S"]})
    assert merged == {"channels": {"Va": {"column": "U1", "unit": "kV"}}, "ignore": ["T", "S"]}


def test_non_label_key_needs_fields():
    m = parse_mapping({"channels": {"spare": {"column": "X"}}}, "m.toml")
    with pytest.raises(MappingError, match=r"key channels.spare: is not a trade label"):
        resolve_channels(["X"], m, "f.csv")
