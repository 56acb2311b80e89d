"""Registry-wide checks: every sniffer on every fixture, format detection, no sniffer raises (no external source)."""

from __future__ import annotations

import pytest

from waveforms.io.registry import detect_format, importers

from _io_support import DATA

FIXTURES = sorted(p for p in DATA.iterdir() if p.suffix in (".csv", ".tsv", ".h5", ".toml", ".py", ".cfg", ".dat", ".cff"))
EXPECTED = {"csv_comma_seconds.csv": "csv", "csv_semicolon_decimal_comma.csv": "csv", "csv_tab_iso8601.tsv": "csv",
            "csv_no_time.csv": "csv", "hdf5_generic.h5": "hdf5-mapped", "native.h5": "hdf5-native",
            "comtrade_ascii.cfg": "comtrade", "comtrade_ascii.dat": "comtrade",
            "comtrade_binary.cfg": "comtrade", "comtrade_binary.dat": "comtrade"}


def test_fixtures_present():
    assert {p.name for p in FIXTURES} >= set(EXPECTED)


@pytest.mark.parametrize("imp", importers(), ids=lambda i: i.name)
@pytest.mark.parametrize("path", FIXTURES, ids=lambda p: p.name)
def test_every_sniffer_on_every_fixture(imp, path):
    before = (path.read_bytes(), path.stat().st_mtime_ns)
    got = imp.sniff(path)  # must not raise
    assert isinstance(got, bool)
    if path.name in EXPECTED:
        assert got == (EXPECTED[path.name] == imp.name) or (imp.name == "csv" and EXPECTED[path.name] == "csv")
    assert (path.read_bytes(), path.stat().st_mtime_ns) == before


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_detect_format(name):
    assert detect_format(DATA / name).name == EXPECTED[name]


def test_sniffers_on_odd_paths(tmp_path):
    (tmp_path / "empty.csv").write_bytes(b"")
    for imp in importers():
        assert imp.sniff(tmp_path / "missing.csv") is False
        assert imp.sniff(tmp_path) is False
        assert imp.sniff(tmp_path / "empty.csv") is False
