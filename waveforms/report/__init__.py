"""The outputs of one analysed capture: result.json, events.csv, report.html.

`write_report` writes all three atomically into a folder; the pieces
(`result_dict`, `events_csv`, `render`) are public for other front ends.
"""

from __future__ import annotations

import os
from pathlib import Path

from ..analysis import AnalysisResult
from ..atomic import same_file, write_text
from ..errors import WriteError
from .events_csv import EVENT_CSV_COLUMNS, events_csv
from .result_json import SCHEMA_VERSION, result_dict, schema, to_json, validate

OUTPUT_FILES = ("result.json", "events.csv", "report.html")


def write_report(res: AnalysisResult, out_dir: str | os.PathLike[str], html: bool = True) -> dict[str, Path]:
    """Write result.json, events.csv and (unless ``html=False``) report.html into ``out_dir``.

    Each file is written atomically; an input capture is never overwritten.
    Returns name -> path of what was written.
    """
    out = Path(out_dir)
    src = res.capture.provenance.source_path
    doc = result_dict(res)
    written: dict[str, Path] = {}
    targets = {"result.json": to_json(doc), "events.csv": events_csv(doc["events"])}
    for name, text in targets.items():
        p = out / name
        if src and same_file(src, p):
            raise WriteError(f"{p}: refusing to overwrite the input capture")
        write_text(p, text)
        written[name] = p
    if html:  # matplotlib and jinja2 only when a page is drawn
        from .html import render
        from .plots import all_figures

        p = out / "report.html"
        if src and same_file(src, p):
            raise WriteError(f"{p}: refusing to overwrite the input capture")
        write_text(p, render(res, doc, all_figures(res)))
        written["report.html"] = p
    return written


__all__ = ["EVENT_CSV_COLUMNS", "OUTPUT_FILES", "SCHEMA_VERSION", "events_csv", "result_dict", "schema", "to_json",
           "validate", "write_report"]
