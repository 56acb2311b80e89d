"""RMS trend logs: one row per interval of per-phase RMS values, analysed at the log's resolution.

One concept per module: `detect` (the events, with
`LIMITS`: what a trend log cannot show), `analysis` (`analyze_trend`: events,
motor states, verdict), `result` (result.json), `report` (the page and the
files), `stages` (the trend recipe's stages).  The importer is
`waveforms.io.trend`; docs/trends.md describes the whole.
"""

from ..io.trend_log import TrendLog

__all__ = ["TrendLog"]
