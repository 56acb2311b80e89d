"""Incidents: what happened at a site across consecutive captures, not file by file.

A logger writes consecutive files (10-minute or hourly blocks) with small gaps
between them.  An open phase still open at the end of one file and present at
the start of the next is one *incident*, not two events; so is a stall, a run
of sustained unbalance, and a series of failed start attempts.

One concept per module:

* `captures`: each analysed capture's span (start, end, site) and its events, from
  the batch's per-capture results (the manifest entries, which hold the same
  events as each capture's result.json); the site is the capture's site (the
  folder, as the motors map uses it) or a ``site_from`` pattern on the file name.
* `join`: `build_incidents`, the joining rule and the incidents table (`INCIDENT_COLUMNS`).
* `output`: ``incidents.csv`` and ``incidents.parquet``, written atomically.
* `thermal_carry`: `carry_thermal`, each capture's thermal model started from the previous
  file's end state (cooled over the gap), written as ``thermal_carry.csv`` / ``.parquet``.
* `timeline`: one SVG figure per site for ``index.html`` (files as bars, gaps as
  gaps, incidents on top).

Documented in docs/incidents.md.
"""

from .captures import capture_spans, site_of
from .join import DEFAULT_EDGE_TOLERANCE_S, DEFAULT_GAP_TOLERANCE_S, DEFAULT_START_SERIES_S, INCIDENT_COLUMNS, build_incidents
from .output import write_incidents, write_thermal_carry
from .thermal_carry import CARRY_COLUMNS, carry_thermal
from .timeline import site_timelines

__all__ = ["CARRY_COLUMNS", "carry_thermal", "write_thermal_carry", "DEFAULT_EDGE_TOLERANCE_S", "DEFAULT_GAP_TOLERANCE_S", "DEFAULT_START_SERIES_S", "INCIDENT_COLUMNS",
           "build_incidents", "capture_spans", "site_of", "site_timelines", "write_incidents"]
