"""index.html of a batch run: escaping, sorting and the verdict filter, in a real headless browser.

The rows are invented summary rows (test data only).
"""

from __future__ import annotations

import html as _html
import math
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from waveforms.summary import error_row, index_html, summary_frame, verdict_class, write_summary

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
needs_chromium = pytest.mark.skipif(CHROMIUM is None, reason="Debian's chromium is not installed (.ci/run installs it)")
HOSTILE = '<img src=x onerror="document.title=1">'


def _row(file: str, verdict: str, x_fla: float, **kw) -> dict:
    base = {"file": file, "site": "west-works", "status": "ok", "verdict": verdict, "max_current_x_fla": x_fla,
            "duration_s": 6.0, "start": "2031-05-04T06:00:00+00:00", "report": f"captures/{file}/report.html"}
    base.update(kw)
    return base


def _frame():
    rows = [
        _row("b.h5", "open phase", 1.7, n_open_phase=1, first_open_phase_s=2.0),
        _row("a.h5", "no event found", 0.9, n_open_phase=0),
        _row("c.h5", "open phase + stall", 5.4, n_open_phase=1, n_stall=1),
        error_row(HOSTILE + ".h5", "west-works", "truncated <file> & more"),
    ]
    return summary_frame(rows)


def test_verdict_classes_worst_first():
    assert verdict_class(None) == "not assessed"
    assert verdict_class([]) == "no event found"
    assert verdict_class(["start"]) == "no event found"  # a start is not a finding
    assert verdict_class(["unbalance", "stall", "open_phase", "stall"]) == "open phase + stall + unbalance"


def test_index_escapes_everything_and_carries_only_our_script():
    text = index_html(_frame())
    assert HOSTILE not in text and "onerror=" not in text.replace("onerror=&quot;", "")
    assert _html.escape(HOSTILE) in text  # html.escape, Python standard library
    assert "truncated &lt;file&gt; &amp; more" in text
    assert text.count("<script>") == 1
    m = re.search(r"script-src 'sha256-([^']+)'", text)
    assert m, "a Content-Security-Policy pins the one inline script by its hash"
    assert not re.search(r"(src|href)=\"https?:", text)  # self-contained: nothing fetched


def test_summary_files_round_trip(tmp_path):
    frame = _frame()
    paths = write_summary(frame, tmp_path)
    import pandas as pd

    back = pd.read_parquet(paths["parquet"])
    pd.testing.assert_frame_equal(back, frame)
    csv = pd.read_csv(paths["csv"], keep_default_na=False)
    assert csv["file"].tolist() == frame["file"].tolist()
    assert math.isnan(back.loc[1, "first_open_phase_s"])


def _dom(url: str, profile: Path) -> str:
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", f"--user-data-dir={profile}",
           "--dump-dom", url]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=True).stdout


@needs_chromium
def test_sort_and_filter_in_browser(tmp_path):
    paths = write_summary(_frame(), tmp_path)
    url = paths["html"].as_uri()
    dom = _dom(url + "#sort=-max_current_x_fla", tmp_path / "p1")
    files = re.findall(r'<tr[^>]*data-verdict="[^"]*"[^>]*>\s*<td[^>]*><a href="[^"]*">([^<]*)</a>', dom)
    assert files == ["c.h5", "b.h5", "a.h5"]  # largest current first (input order was b, a, c: the script ran)
    assert 'aria-sort="descending"' in dom
    assert "<title>Capture summary</title>" in dom  # the hostile name did not run (it would set the title)
    dom = _dom(url + "#verdict=open%20phase", tmp_path / "p2")
    shown = re.findall(r'<tr[^>]*data-verdict="([^"]*)"(?![^>]*display: none)[^>]*>', dom)
    assert shown == ["open phase"]
    assert re.search(r'<span id="count">1</span>', dom)
