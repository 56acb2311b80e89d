"""`build_incidents`: events of consecutive captures of one site joined into incidents.

The rule
--------
Captures are grouped by site and ordered by start time.  An event of a
*lasting* kind (open phase, stall, sustained unbalance) that is still present
at the end of one capture (its ``end_s`` is None, or within ``edge_tolerance_s``
plus the capture's resolution of the end) continues into the next capture of
the site when

* the next capture starts no more than ``gap_tolerance_s`` after this one ends, and
* it holds an event of the same kind on the same line present at its start
  (``start_s`` within the same tolerance of 0, or the detector's own
  ``present_at_capture_start`` / ``in_progress_at_capture_start`` figure).

Chains of such events are one incident, from the first onset to the last
instant seen; the time between the files is counted as *gap time not covered*
(the condition is taken to have lasted through it, which the files cannot
prove).  Failed start attempts (start events with ``success`` false) of a site
closer together than ``start_series_s`` form one incident of kind
``failed_starts``.  Short supply events (dips, swells, interruptions) and
successful starts stay events of their capture, not incidents.

Defaults
--------
``gap_tolerance_s = 60``: block-writing loggers lose from a fraction of a
second to a few seconds between files; a minute leaves room for that and for
clock steps, while staying short against a motor's thermal time constant (tens
of minutes), so that a condition seen on both sides of the gap is unlikely to
have cleared and come back unseen within it (common practice, no source).  A
longer gap breaks the chain: the second file's condition is then reported as
present when that file began, not as the same incident.
``edge_tolerance_s = 1``: a detector needs some cycles to confirm a condition
(the unbalance detector a 1 s rolling median), so an event found within a second
of a file's start or end is taken as present there (no external source).
``start_series_s = 600``: repeated start attempts within ten minutes, before a
motor has cooled from the last attempt, are one series (common practice, no
source; NEMA MG 1 limits successive starts from cold to two, from memory).
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import math
from collections.abc import Iterable
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InvalidParameterError
from .captures import capture_spans, event_figures

DEFAULT_GAP_TOLERANCE_S = 60.0
DEFAULT_EDGE_TOLERANCE_S = 1.0
DEFAULT_START_SERIES_S = 600.0

#: Event kinds that last and are joined across files.
LASTING_KINDS: tuple[str, ...] = ("open_phase", "stall", "unbalance")
#: Incident kinds: the lasting kinds and a series of failed start attempts.
INCIDENT_KINDS: tuple[str, ...] = LASTING_KINDS + ("failed_starts",)

#: Columns of incidents.csv / incidents.parquet, in order (docs/incidents.md).
INCIDENT_COLUMNS: tuple[str, ...] = (
    "site", "kind", "line", "first_onset", "first_file", "first_onset_s", "last_seen", "last_file", "duration_s",
    "files_spanned", "files", "gap_not_covered_s", "open_when_recording_began", "still_present_at_end",
    "n_events", "worst_current_a", "worst_current_x_fla", "worst_unbalance_pct", "resolution_s", "note",
)

#: Figures giving a current [A], a current in multiples of FLA, and an unbalance [%], by preference.
_CURRENT_A = ("live_line_current_a", "i_max_median_a", "inrush_rms_a", "current_max_a")
_CURRENT_FLA = ("live_line_current_pu_fla", "i_max_median_pu_fla", "inrush_pu_fla", "current_max_pu_fla")
_UNBAL = ("i2_i1_pct", "v_unbal_nema_pct_max", "I_unbal_nema_pct_mean", "unbalance_max_pct")


@dataclasses.dataclass
class _Piece:
    """One event of one capture, placed on the site's time axis."""

    file: str
    k: int  # the capture's position in the site's ordered list
    kind: str
    line: str | None
    start: _dt.datetime
    end: _dt.datetime  # the end, or the capture's end when still present
    start_s: float
    at_start: bool
    at_end: bool
    figures: dict[str, Any]
    resolution_s: float


def _first(figs: dict[str, Any], keys: Iterable[str]) -> float:
    for k in keys:
        v = figs.get(k)
        if isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v):
            return float(v)
    return math.nan


def _nanmax(values: list[float]) -> float:
    arr = np.asarray(values, float)
    arr = arr[np.isfinite(arr)]
    return float(arr.max()) if arr.size else math.nan


def _pieces(spans: pd.DataFrame, events: pd.DataFrame, edge_s: float) -> dict[str, list[_Piece]]:
    """Per site, the events of its captures as `_Piece`, in time order."""
    pos = {(r.site, r.file): k for site, grp in spans.groupby("site", sort=False)
           for k, r in enumerate(grp.itertuples(index=False))}
    span_of = {r.file: r for r in spans.itertuples(index=False)}
    out: dict[str, list[_Piece]] = {}
    if events is None or not len(events):
        return out
    for ev in events.itertuples(index=False):
        sp = span_of.get(str(ev.file))
        if sp is None or ev.kind not in LASTING_KINDS + ("start",):
            continue
        figs = event_figures(getattr(ev, "figures_json", None))
        res = _first(figs, ("resolution_s",))
        res = 0.0 if math.isnan(res) else res
        tol = edge_s + res
        start_s = float(ev.start_s)
        end_s = None if ev.end_s is None or (isinstance(ev.end_s, float) and math.isnan(ev.end_s)) else float(ev.end_s)
        at_start = start_s <= tol or bool(figs.get("present_at_capture_start")) or bool(figs.get("in_progress_at_capture_start"))
        at_end = end_s is None or end_s >= sp.duration_s - tol
        line = ev.phase if isinstance(ev.phase, str) and ev.phase else None
        out.setdefault(sp.site, []).append(_Piece(
            file=sp.file, k=pos[(sp.site, sp.file)], kind=str(ev.kind), line=line,
            start=sp.start + _dt.timedelta(seconds=start_s),
            end=sp.end if end_s is None else sp.start + _dt.timedelta(seconds=end_s),
            start_s=start_s, at_start=at_start, at_end=at_end, figures=figs, resolution_s=res))
    for lst in out.values():
        lst.sort(key=lambda p: (p.k, p.start_s))
    return out


def _chains(pieces: list[_Piece], spans: pd.DataFrame, gap_s: float) -> list[list[_Piece]]:
    """Lasting events joined across consecutive captures of one site."""
    starts = list(spans["start"])
    ends = list(spans["end"])
    open_chain: dict[tuple[str, str | None], list[_Piece]] = {}
    chains: list[list[_Piece]] = []
    by_file: dict[int, list[_Piece]] = {}
    for p in pieces:
        if p.kind in LASTING_KINDS:
            by_file.setdefault(p.k, []).append(p)
    for k in sorted(by_file):
        nxt: dict[tuple[str, str | None], list[_Piece]] = {}
        for p in by_file[k]:
            key = (p.kind, p.line)
            prev = open_chain.pop(key, None)
            if prev is not None and p.at_start and prev[-1].k == k - 1 and \
                    (starts[k] - ends[k - 1]).total_seconds() <= gap_s:
                prev.append(p)
                chain = prev
            else:
                chain = [p]
                chains.append(chain)
            if p.at_end:
                nxt[key] = chain
        open_chain = nxt
    return chains


def _lasting_row(site: str, chain: list[_Piece], spans: pd.DataFrame, gap_s: float) -> dict[str, Any]:
    first, last = chain[0], chain[-1]
    starts, ends, files = list(spans["start"]), list(spans["end"]), list(spans["file"])
    # overlapping files (a clock step) cover their overlap: no negative gap time
    gap = sum(max(0.0, (starts[b.k] - ends[a.k]).total_seconds()) for a, b in zip(chain, chain[1:], strict=False))
    note = []
    open_began = False
    if first.at_start:
        if first.k == 0:
            open_began = True
            note.append("already open when recording began" if first.kind == "open_phase"
                        else "already present when recording began")
        else:
            g = (starts[first.k] - ends[first.k - 1]).total_seconds()
            why = (f"the gap of {g:.1f} s before it exceeds the gap tolerance ({gap_s:g} s)" if g > gap_s
                   else f"the previous file ({files[first.k - 1]}) ended without it")
            note.append(f"present at the start of {first.file}; began in the {g:.1f} s before it ({why})")
    still = last.at_end and last.k == len(files) - 1
    if still:
        note.append(f"still present at the end of the last file ({last.file})")
    elif last.at_end:
        note.append(f"present at the end of {last.file}; not at the start of the next file")
    return {
        "site": site, "kind": first.kind, "line": first.line or "",
        "first_onset": first.start.isoformat(timespec="microseconds"), "first_file": first.file,
        "first_onset_s": first.start_s, "last_seen": last.end.isoformat(timespec="microseconds"), "last_file": last.file,
        "duration_s": (last.end - first.start).total_seconds(), "files_spanned": last.k - first.k + 1,
        "files": "; ".join(files[p.k] for p in chain), "gap_not_covered_s": gap,
        "open_when_recording_began": open_began, "still_present_at_end": bool(still), "n_events": len(chain),
        "worst_current_a": _nanmax([_first(p.figures, _CURRENT_A) for p in chain]),
        "worst_current_x_fla": _nanmax([_first(p.figures, _CURRENT_FLA) for p in chain]),
        "worst_unbalance_pct": _nanmax([_first(p.figures, _UNBAL) for p in chain]),
        "resolution_s": max(p.resolution_s for p in chain), "note": "; ".join(note),
    }


def _start_series(site: str, pieces: list[_Piece], spans: pd.DataFrame, series_s: float) -> list[dict[str, Any]]:
    failed = [p for p in pieces if p.kind == "start" and p.figures.get("success") is False]
    failed.sort(key=lambda p: p.start.timestamp())
    groups: list[list[_Piece]] = []
    for p in failed:
        if groups and (p.start - groups[-1][-1].end).total_seconds() <= series_s:
            groups[-1].append(p)
        else:
            groups.append([p])
    files = list(spans["file"])
    starts, ends = list(spans["start"]), list(spans["end"])
    rows = []
    for g in groups:
        first, last = g[0], g[-1]
        ks = sorted({p.k for p in g})
        gap = sum(max(0.0, (starts[b] - ends[b - 1]).total_seconds()) for b in range(ks[0] + 1, ks[-1] + 1))
        rows.append({
            "site": site, "kind": "failed_starts", "line": "",
            "first_onset": first.start.isoformat(timespec="microseconds"), "first_file": first.file,
            "first_onset_s": first.start_s, "last_seen": last.end.isoformat(timespec="microseconds"), "last_file": last.file,
            "duration_s": (last.end - first.start).total_seconds(), "files_spanned": ks[-1] - ks[0] + 1,
            "files": "; ".join(dict.fromkeys(files[p.k] for p in g)), "gap_not_covered_s": gap,
            "open_when_recording_began": False, "still_present_at_end": False, "n_events": len(g),
            "worst_current_a": _nanmax([_first(p.figures, _CURRENT_A) for p in g]),
            "worst_current_x_fla": _nanmax([_first(p.figures, _CURRENT_FLA) for p in g]),
            "worst_unbalance_pct": math.nan, "resolution_s": max(p.resolution_s for p in g),
            "note": f"{len(g)} failed start attempt{'s' if len(g) != 1 else ''}",
        })
    return rows


def build_incidents(summary: pd.DataFrame, events: pd.DataFrame, *, site_from: str | None = None,
                    gap_tolerance_s: float = DEFAULT_GAP_TOLERANCE_S, edge_tolerance_s: float = DEFAULT_EDGE_TOLERANCE_S,
                    start_series_s: float = DEFAULT_START_SERIES_S) -> pd.DataFrame:
    """The incidents of an archive (`INCIDENT_COLUMNS`), from the batch summary and events tables.

    Parameters
    ----------
    summary : DataFrame
        The batch summary (``file``, ``site``, ``status``, ``start``, ``duration_s``).
    events : DataFrame
        The batch events table (``file``, ``kind``, ``phase``, ``start_s``, ``end_s``, ``figures_json``).
    site_from : str, optional
        Regular expression on the file name giving the site (group ``site``, else group 1, else the match).
    gap_tolerance_s, edge_tolerance_s, start_series_s : float
        See the module docstring [s].

    Returns
    -------
    DataFrame
        One row per incident, ordered by site and first onset.
    """
    for name, v in (("gap_tolerance_s", gap_tolerance_s), ("edge_tolerance_s", edge_tolerance_s),
                    ("start_series_s", start_series_s)):
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
            raise InvalidParameterError(f"{name}={v!r} must be a number of seconds, 0 or more")
    spans = capture_spans(summary, site_from)
    per_site = _pieces(spans, events, float(edge_tolerance_s))
    rows: list[dict[str, Any]] = []
    for site, sp in spans.groupby("site", sort=True):
        sp = sp.reset_index(drop=True)
        pieces = per_site.get(site, [])
        for chain in _chains(pieces, sp, float(gap_tolerance_s)):
            rows.append(_lasting_row(site, chain, sp, float(gap_tolerance_s)))
        rows.extend(_start_series(site, pieces, sp, float(start_series_s)))
    frame = pd.DataFrame.from_records(rows, columns=list(INCIDENT_COLUMNS))
    if len(frame):
        key = [_dt.datetime.fromisoformat(t).timestamp() for t in frame["first_onset"]]
        frame = frame.assign(_k=key).sort_values(["site", "_k", "kind"], kind="stable").drop(columns="_k").reset_index(drop=True)
    for c in ("first_onset_s", "duration_s", "gap_not_covered_s", "worst_current_a", "worst_current_x_fla",
              "worst_unbalance_pct", "resolution_s"):
        frame[c] = pd.to_numeric(frame[c], errors="coerce").astype("float64")
    for c in ("files_spanned", "n_events"):
        frame[c] = pd.to_numeric(frame[c], errors="coerce").astype("Int64")
    for c in ("open_when_recording_began", "still_present_at_end"):
        frame[c] = frame[c].astype(bool)
    return frame
