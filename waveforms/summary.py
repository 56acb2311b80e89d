"""The archive summary: one row per capture, as CSV, Parquet and a sortable HTML index (waveforms.batch.index_page).

A row says where the capture came from (file, site), when it starts and how
long it is, the verdict, how many events of each kind were found and when the
first of each began, the worst current unbalance I2/I1, the largest line
current in multiples of the nameplate FLA, the thermal capacity used, and the
error when the capture could not be analysed.  Column names and meanings are
listed in docs/batch.md.

Rows are computed in the worker from a finished `waveforms.recipe.RunState`
(`summary_row`) or from a failure (`error_row`); `summary_frame` puts them in
a fixed column order; `write_summary` writes the three files atomically.
"""

from __future__ import annotations

import io
import math
import os
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .atomic import atomic_path, write_text
# the detectors' list is the one list of event kinds; the events table has one schema (EVENT_COLUMNS, as events.csv)
from .detect.event import EVENT_KINDS, events_frame, iso_at

#: Verdict shown for a capture that could not be analysed.
ERROR_VERDICT = "error"

_HEAD = ["file", "site", "status", "verdict", "start", "duration_s"]
#: Verdict classes, worst first: one per kind of finding, joined with " + " when several.
VERDICT_CLASSES: tuple[tuple[str, str], ...] = (
    ("open_phase", "open phase"), ("stall", "stall"), ("interruption", "interruption"),
    ("dip", "dip"), ("swell", "swell"), ("unbalance", "unbalance"),
)
NO_EVENT_VERDICT = "no event found"
NOT_ASSESSED_VERDICT = "not assessed"
#: Per event kind: its count and the capture-relative time of its first event [s].
EVENT_COUNT_COLUMNS: tuple[str, ...] = tuple(c for k in EVENT_KINDS for c in (f"n_{k}", f"first_{k}_s"))
_TAIL = ["verdict_text", "worst_i2_i1_pct", "max_current_x_fla", "thermal_capacity_used_pct", "nameplate", "error",
         "report", "outputs", "path", "sha256", "recipe", "recipe_hash", "elapsed_s", "notes"]
#: Summary columns, in order.
_EVENT_TIME_COLS = [f"first_{k}_time" for k in EVENT_KINDS]
#: Hook-up columns (waveforms.hookup): the findings of this file, whether it was corrected, and how often the same
#: findings occur at the file's site and in the whole archive ("clamp Ib reversed in 23 of 400 files").
_HOOKUP_COLS = ["hookup", "hookup_corrected", "hookup_site_count", "hookup_archive_count"]
SUMMARY_COLUMNS: tuple[str, ...] = tuple(_HEAD + list(EVENT_COUNT_COLUMNS) + _TAIL + _EVENT_TIME_COLS + _HOOKUP_COLS)
#: Summary columns held as floats (NaN when absent) and as whole numbers.
FLOAT_COLUMNS: frozenset[str] = frozenset({"duration_s", "worst_i2_i1_pct", "max_current_x_fla", "thermal_capacity_used_pct", "elapsed_s"} | {
    f"first_{k}_s" for k in EVENT_KINDS})
INT_COLUMNS: frozenset[str] = frozenset(f"n_{k}" for k in EVENT_KINDS)


# -- rows --------------------------------------------------------------------------------
def verdict_class(kinds: Iterable[str] | None) -> str:
    """Short verdict for filtering: the kinds of finding present, worst first (``"open phase + stall"``).

    ``None`` (detection not run) gives "not assessed"; no event of a listed
    kind gives "no event found" (starts alone are not findings).
    """
    if kinds is None:
        return NOT_ASSESSED_VERDICT
    present = set(kinds)
    found = [label for kind, label in VERDICT_CLASSES if kind in present]
    return " + ".join(found) if found else NO_EVENT_VERDICT



def _finite_max(values: Any) -> float:
    arr = np.asarray(values, dtype=float)
    arr = arr[np.isfinite(arr)]
    return float(arr.max()) if arr.size else math.nan


def summary_row(state: Any, file: str, site: str, extra: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The summary row of one analysed capture.

    Parameters
    ----------
    state : waveforms.recipe.RunState
        After the recipe ran.
    file, site : str
        How the capture is named in the archive, and its site.
    extra : mapping, optional
        Further columns (path, sha256, recipe, recipe_hash, elapsed_s, report...).

    Notes
    -----
    ``worst_i2_i1_pct`` is the largest per-cycle ``I2_I1_pct`` of the cycle
    table; ``max_current_x_fla`` the largest per-cycle line RMS current
    (``Ia_rms``, ``Ib_rms``, ``Ic_rms``) divided by the nameplate FLA (NaN
    without a nameplate); both over complete cycles only (rows with a
    tracked ``frequency_hz``); ``thermal_capacity_used_pct`` the thermal stage's
    peak ``theta_motor_pct``.  NaN means "not computed", never zero.
    """
    row: dict[str, Any] = {c: None for c in SUMMARY_COLUMNS}
    detected = "detect" in state.timings_s or "trend_detect" in state.timings_s  # trend logs: waveforms.trends
    ev = events_frame(state.events)
    row.update(file=file, site=site, status="ok", error="", verdict_text=state.verdict,
               verdict=verdict_class(list(ev["kind"]) if detected else None))
    cap = state.capture
    if cap is not None:
        row["start"] = cap.start_time.isoformat()
        row["duration_s"] = float(cap.duration_s)
    for k in EVENT_KINDS:
        sel = ev[ev["kind"] == k]
        row[f"n_{k}"] = int(len(sel)) if detected else None
        row[f"first_{k}_s"] = float(sel["start_s"].min()) if len(sel) else math.nan
        if len(sel) and cap is not None:  # the same instant as a clock time, with the capture's UTC offset
            row[f"first_{k}_time"] = iso_at(cap.start_time, row[f"first_{k}_s"])
    cycles = state.cycles
    row["worst_i2_i1_pct"] = math.nan
    row["max_current_x_fla"] = math.nan
    if cycles is not None and "frequency_hz" in cycles:
        # only complete, tracked cycles: a partial window at the capture's edge has no frequency
        # and its "RMS" is not over a whole cycle
        cycles = cycles[np.isfinite(cycles["frequency_hz"].to_numpy(float))]
    if cycles is not None and len(cycles):
        if "I2_I1_pct" in cycles:
            i2i1 = cycles["I2_I1_pct"].to_numpy(float)  # NaN below the level gate (waveforms.measure.gate)
            # above 100 % the negative sequence dominates (reversed rotation or labels): not an unbalance
            row["worst_i2_i1_pct"] = _finite_max(i2i1[~(i2i1 > 101.0)])  # 1 point of noise tolerance (our choice)
        lines = [f"I{c}_rms" for c in "abc" if f"I{c}_rms" in cycles]
        if lines and state.nameplate is not None:
            row["max_current_x_fla"] = _finite_max(cycles[lines].to_numpy(float)) / float(state.nameplate.fla_a)
    th = state.thermal
    used = None if th is None else th.summary.get("thermal_capacity_used_pct")
    row["thermal_capacity_used_pct"] = math.nan if used is None else float(used)
    if state.nameplate is not None:
        row["nameplate"] = (getattr(state.nameplate, "name", "") or state.nameplate_source or "given")
    else:
        row["nameplate"] = ""
    row["notes"] = "; ".join(state.notes)
    hk = getattr(state, "hookup", None)
    row["hookup"] = "" if hk is None else "; ".join(f.label for f in hk.findings)
    row["hookup_corrected"] = "" if hk is None else ("yes" if hk.corrected else "no" if hk.findings else "")
    if hk is not None and "I2_I1_pct" in hk.absent_ratios:  # meaningless as recorded: absent (docs/hookup.md)
        row["worst_i2_i1_pct"] = math.nan
    if extra:
        row.update({k: v for k, v in extra.items() if k in row})
    return row


def error_row(file: str, site: str, error: str, extra: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """The summary row of a capture that could not be analysed (``status`` "error", the reason in ``error``)."""
    row: dict[str, Any] = {c: None for c in SUMMARY_COLUMNS}
    row.update(file=file, site=site, status="error", verdict=ERROR_VERDICT, error=error, notes="")
    for k in EVENT_KINDS:
        row[f"first_{k}_s"] = math.nan
    if extra:
        row.update({k: v for k, v in extra.items() if k in row})
    return row


def hookup_counts(rows: Sequence[Mapping[str, Any]]) -> list[dict[str, str]]:
    """Per row: how often each of its hook-up findings occurs at its site and in the archive.

    ``"clamp Ib reversed: 23 of 400 files"``, findings joined by ``"; "``; empty for a row without findings.
    """
    def labels(r: Mapping[str, Any]) -> list[str]:
        return [x for x in str(r.get("hookup") or "").split("; ") if x]

    n_all = len(rows)
    all_counts: dict[str, int] = {}
    site_counts: dict[tuple[str, str], int] = {}
    site_n: dict[str, int] = {}
    for r in rows:
        site = str(r.get("site") or "")
        site_n[site] = site_n.get(site, 0) + 1
        for lab in set(labels(r)):
            all_counts[lab] = all_counts.get(lab, 0) + 1
            site_counts[(site, lab)] = site_counts.get((site, lab), 0) + 1
    out = []
    for r in rows:
        site = str(r.get("site") or "")
        labs = labels(r)
        out.append({"hookup_site_count": "; ".join(f"{lab}: {site_counts[(site, lab)]} of {site_n[site]} files" for lab in labs),
                    "hookup_archive_count": "; ".join(f"{lab}: {all_counts[lab]} of {n_all} files" for lab in labs)})
    return out


def summary_frame(rows: Sequence[Mapping[str, Any]]) -> pd.DataFrame:
    """Rows in the fixed column order, numbers as floats / nullable integers, text as strings."""
    rows = [{**r, **c} for r, c in zip(rows, hookup_counts(rows), strict=True)]
    frame = pd.DataFrame.from_records([{c: r.get(c) for c in SUMMARY_COLUMNS} for r in rows], columns=list(SUMMARY_COLUMNS))
    for c in SUMMARY_COLUMNS:
        if c in FLOAT_COLUMNS:
            frame[c] = pd.to_numeric(frame[c], errors="coerce").astype("float64")
        elif c in INT_COLUMNS:
            frame[c] = pd.to_numeric(frame[c], errors="coerce").astype("Int64")
        else:
            frame[c] = frame[c].fillna("").astype(str)
    return frame


# -- files ---------------------------------------------------------------------------
def _csv_safe(frame: pd.DataFrame) -> pd.DataFrame:
    """Text cells a spreadsheet would run as a formula get a leading apostrophe (common practice, no source)."""
    out = frame.copy()
    for c in out.columns:
        if out[c].dtype == object or pd.api.types.is_string_dtype(out[c]):
            out[c] = out[c].map(lambda v: "'" + v if isinstance(v, str) and v[:1] in ("=", "+", "-", "@", "\t", "\r") else v)
    return out


def write_summary(frame: pd.DataFrame, out_dir: str | os.PathLike[str], title: str = "Capture summary",
                  timelines: list[dict[str, Any]] | None = None) -> dict[str, Path]:
    """Write ``summary.csv``, ``summary.parquet`` and ``index.html`` into ``out_dir``, atomically.

    ``timelines``: per-site figures for the page (`waveforms.incidents.site_timelines`).
    """
    out = Path(out_dir)
    paths = {"csv": out / "summary.csv", "parquet": out / "summary.parquet", "html": out / "index.html"}
    buf = io.StringIO()
    _csv_safe(frame).to_csv(buf, index=False)
    write_text(paths["csv"], buf.getvalue())
    with atomic_path(paths["parquet"]) as tmp:
        frame.to_parquet(tmp, index=False)
    write_text(paths["html"], index_html(frame, title, timelines))
    return paths


def index_html(frame: pd.DataFrame, title: str = "Capture summary", timelines: list[dict[str, Any]] | None = None) -> str:
    """The ``index.html`` page of the summary (built by `waveforms.batch.index_page.index_html`)."""
    from .batch.index_page import index_html as page  # here, not at the top: waveforms.batch imports this module

    return page(frame, title, timelines)
