"""RMS trend logs: one row per interval of per-phase RMS values, analysed at the log's resolution.

One concept per module: `detect` (the events, with
`LIMITS`: what a trend log cannot show), `analysis` (`analyze_trend`: events,
motor states, verdict), `result` (result.json), `report` (the page and the
files), `stages` (the trend recipe's stages).  The importer is
`waveforms.io.trend`; docs/trends.md describes the whole.
"""

from typing import Any

__all__ = ["TrendLog", "analyze_trend"]


def __getattr__(name: str) -> Any:  # lazy: the recipe registry imports this package's stages at start-up
    if name == "TrendLog":
        from ..io.trend_log import TrendLog

        return TrendLog
    if name == "analyze_trend":
        from .analysis import analyze_trend

        return analyze_trend
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
