"""report.html in a real headless browser (Debian's chromium), result.json against its schema, events.csv.

The browser checks: the page's sections are there in the documented order
with their text, every embedded figure decodes, and a capture whose header
and file name hold markup yields an inert page (no script element, no event
handler attribute, the markup shown as text).
"""

from __future__ import annotations

import csv
import dataclasses
import html as _html
import io
import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from waveforms.analysis import analyze
from waveforms.io import read_capture
from waveforms.io.hdf5_native import write_native
from waveforms.report import events_csv, result_dict, validate, write_report
from waveforms.report.events_csv import EVENT_CSV_COLUMNS

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
needs_chromium = pytest.mark.skipif(CHROMIUM is None, reason="Debian's chromium is not installed (apt-get install chromium; .ci/run installs it)")

SECTIONS = [
    "Verdict", "Timeline", "Line currents against FLA", "Unbalance: I2/I1 and V2/V1", "Speed track",
    "Phasors before and after the onset", "Current spectrum with slip components", "Events", "Supply and terminal voltage", "Thermal stress",
    "Data quality", "Provenance", "Safety cautions",
]
HOSTILE = '<script>document.title="owned"</script><img src=x onerror="document.title=1">'


def _chromium(args: list[str], url: str, profile: Path) -> str:
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", f"--user-data-dir={profile}", *args, url]
    out = subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=True)
    return out.stdout


@pytest.fixture(scope="module")
def report_dir(tmp_path_factory):
    cap = read_capture(SAMPLES / "open_phase_stall.h5")
    res = analyze(cap)
    out = tmp_path_factory.mktemp("report")
    paths = write_report(res, out)
    return res, paths


def test_outputs_written_and_schema_valid(report_dir):
    res, paths = report_dir
    assert set(paths) == {"result.json", "events.csv", "report.html"}
    doc = json.loads(paths["result.json"].read_text())
    validate(doc)
    assert doc["schema_version"] == "1.1"
    assert doc["capture"]["sha256"] == res.capture.provenance.sha256 and len(doc["capture"]["sha256"]) == 64
    for e in doc["events"]:
        assert re.match(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{6}[+-]\d\d:\d\d$", e["start_time"])  # ISO 8601 with offset
    rows = list(csv.DictReader(io.StringIO(paths["events.csv"].read_text())))
    assert [r["kind"] for r in rows] == [e["kind"] for e in doc["events"]] and rows


def test_schema_rejects_a_wrong_kind(report_dir):
    import jsonschema

    res, _ = report_dir
    doc = result_dict(res)
    doc["events"][0]["kind"] = "trip"
    with pytest.raises(jsonschema.ValidationError, match="trip"):
        validate(doc)


def test_events_csv_defuses_formulas():
    # a cell starting with "=" would be run by a spreadsheet (common practice, no source)
    text = events_csv([{"kind": "dip", "summary": "=HYPERLINK(1)", "figures": {}}])
    row = next(csv.DictReader(io.StringIO(text)))
    assert row["summary"] == "'=HYPERLINK(1)"
    assert tuple(next(csv.reader(io.StringIO(text)))) == EVENT_CSV_COLUMNS


def test_html_is_self_contained(report_dir):
    _, paths = report_dir
    text = paths["report.html"].read_text()
    assert "Content-Security-Policy" in text and "default-src 'none'" in text
    assert not re.search(r"<script|src=\"(?!data:)|href=\"http", text, flags=re.I)
    assert text.count('src="data:image/png;base64,') >= 7


@needs_chromium
def test_sections_in_browser(report_dir, tmp_path):
    res, paths = report_dir
    dom = _chromium(["--dump-dom"], paths["report.html"].as_uri(), tmp_path / "prof")
    heads = [_html.unescape(h) for h in re.findall(r"<h2>(.*?)</h2>", dom)]
    assert heads == SECTIONS
    assert _html.escape(res.verdict[:60], quote=False) in dom
    assert "qualified people" in dom and "local electrical codes" in dom
    assert res.capture.provenance.sha256 in dom


@needs_chromium
def test_images_decode_in_browser(report_dir, tmp_path):
    _, paths = report_dir
    srcs = re.findall(r'src="(data:image/png;base64,[^"]+)"', paths["report.html"].read_text())
    assert len(srcs) >= 7
    imgs = "".join(f'<img src="{s}">' for s in srcs)
    harness = tmp_path / "harness.html"
    harness.write_text(
        "<!DOCTYPE html><html><body>" + imgs + "<pre id='out'>pending</pre><script>"
        "window.onload=function(){var ok=0,n=0;for(const i of document.images){n++;"
        "if(i.complete&&i.naturalWidth>100&&i.naturalHeight>50)ok++;}"
        "document.getElementById('out').textContent='decoded '+ok+'/'+n;};</script></body></html>"
    )
    dom = _chromium(["--dump-dom", "--virtual-time-budget=10000"], harness.as_uri(), tmp_path / "prof")
    assert f"decoded {len(srcs)}/{len(srcs)}" in dom


@needs_chromium
def test_screenshot_renders(report_dir, tmp_path):
    _, paths = report_dir
    shot = tmp_path / "shot.png"
    _chromium([f"--screenshot={shot}", "--window-size=1100,4000"], paths["report.html"].as_uri(), tmp_path / "prof")
    assert shot.stat().st_size > 50_000  # a page of text and figures, not a blank one


def test_hostile_header_gives_inert_report(tmp_path):
    base = read_capture(SAMPLES / "healthy_run.h5")
    chans = tuple(dataclasses.replace(c, source_label=f"{c.name}{HOSTILE}") for c in base.channels)
    plate = dataclasses.replace(base.nameplate, name=HOSTILE)
    hostile_file = tmp_path / "site<script>x.h5"
    write_native(base.replace(channels=chans, nameplate=plate), hostile_file)
    cap = read_capture(hostile_file)
    assert any(HOSTILE in c.source_label for c in cap.channels)  # the markup survived the import
    res = analyze(cap, speed=False, quality=False)
    paths = write_report(res, tmp_path / "out")
    text = paths["report.html"].read_text()
    assert "<script" not in text.lower() and "<img src=x" not in text.lower()
    assert "&lt;script&gt;" in text and "&lt;img src=x onerror" in text  # shown as text
    if CHROMIUM is not None:
        dom = _chromium(["--dump-dom"], paths["report.html"].as_uri(), tmp_path / "prof")
        assert "<script" not in dom.lower()
        assert not re.search(r"<img[^>]*onerror", dom, flags=re.I)
        assert "owned" not in re.search(r"<title>(.*?)</title>", dom, flags=re.S).group(1)
