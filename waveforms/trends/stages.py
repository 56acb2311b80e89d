"""The trend recipe's stages: ``trend_import``, ``trend_detect``, ``trend_report`` (run by `waveforms.recipe`).

``pipelines_data/trend.toml`` chains them.  `waveforms.recipe.run_recipe`
switches to that recipe when a waveform recipe is given an RMS trend log
(recognised by its columns, `waveforms.io.trend.is_trend_log`), so ``analyze``
and ``batch`` analyse a trend log without being told.
"""

from __future__ import annotations

import dataclasses
import time
from types import SimpleNamespace
from typing import Any

from ..settings import check_fields, setting

#: Name of the shipped trend recipe.
TREND_RECIPE = "trend"


@dataclasses.dataclass(frozen=True)
class TrendImportSettings:
    """The ``trend_import`` stage."""

    nominal_voltage_v: float | None = setting(None, "declared line-to-line voltage for dips and swells [V]; absent = the log's "
                                                    "median voltage", minimum=0.0, forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


@dataclasses.dataclass(frozen=True)
class TrendReportSettings:
    """The ``trend_report`` stage."""

    html: bool = setting(True, "write report.html (RMS plots and the event list)", forward=False)
    rows: bool = setting(True, "write the log's rows as cycles.parquet (the trend counterpart of the cycle table)", forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


def _stage_trend_import(state: Any, params: dict[str, Any]) -> None:
    from ..io.trend import read_trend
    from ..recipe import get_stage

    (s,) = get_stage("trend_import").build(params)
    log = read_trend(state.source, SimpleNamespace(nominal_voltage_v=s.nominal_voltage_v, nominal_frequency_hz=None))
    if state.origin:
        log = log.replace(provenance=dataclasses.replace(log.provenance, source_path=state.origin))
    state.capture = log
    state.settings["trend_nominal_voltage_v"] = s.nominal_voltage_v
    # the log's rows stand in for the per-cycle table (summary: largest line current, x FLA)
    state.measurements = SimpleNamespace(cycles=log.table)


def _stage_trend_detect(state: Any, params: dict[str, Any]) -> None:
    from ..recipe import get_stage
    from .analysis import analyze_trend

    settings, dparams = get_stage("trend_detect").build(params)
    res = analyze_trend(state.capture, state.nameplate, dparams, settings, state.settings.get("trend_nominal_voltage_v"))
    state.events = list(res.events)
    state.timeline = res.timeline
    state.notes.extend(res.notes)
    state.analysis = res
    state.settings["detect"] = dparams


def _stage_trend_report(state: Any, params: dict[str, Any]) -> None:
    if state.out_dir is None:
        state.notes.append("report: nothing written (no output folder)")
        return
    from ..atomic import atomic_path
    from ..recipe import get_stage
    from .report import write_trend_report

    (s,) = get_stage("trend_report").build(params)
    state.out_dir.mkdir(parents=True, exist_ok=True)
    if state.analysis is not None:
        state.analysis.timings_s.update(state.timings_s)
        written = write_trend_report(state.analysis, state.out_dir, html_page=s.html)
        for name, path in written.items():
            state.outputs[{"report.html": "html", "result.json": "json", "events.csv": "events_csv"}[name]] = str(path)
    if s.rows:
        target = state.out_dir / "cycles.parquet"
        t0 = time.perf_counter()
        with atomic_path(target) as tmp:
            state.capture.table.to_parquet(tmp, index=False)
        state.outputs["cycles"] = str(target)
        state.timings_s["trend_rows"] = time.perf_counter() - t0


def register_trend_stages() -> None:
    """Register the three trend stages (called once by `waveforms.recipe`)."""
    from ..detect import DetectParams
    from ..recipe import Stage, register_stage
    from .detect import TrendSettings

    register_stage(Stage(name="trend_import", description="read an RMS trend log (CSV or Parquet) and attach the nameplate",
                         run=_stage_trend_import, settings=(TrendImportSettings,), library="waveforms.io.trend:read_trend"))
    register_stage(Stage(name="trend_detect", description="trend-log events at the log's resolution: open phase, stall, start, "
                                                          "dip, swell, interruption, unbalance",
                         run=_stage_trend_detect, settings=(TrendSettings,), library_settings=DetectParams,
                         needs=("trend_import",), library="waveforms.trends.analysis:analyze_trend"))
    register_stage(Stage(name="trend_report", description="result.json, events.csv, report.html of a trend log",
                         run=_stage_trend_report, settings=(TrendReportSettings,), needs=("trend_import",),
                         library="waveforms.trends.report:write_trend_report"))


def trend_recipe_for(rec: Any) -> Any:
    """The trend recipe, with what the waveform recipe ``rec`` set that also applies to a trend log.

    Carried over: the detect stage's thresholds (the same `DetectParams`), the import
    stage's declared voltage and the report stage's ``html``.  A recipe that is already
    a trend recipe is returned as it is.
    """
    from ..detect import DetectParams
    from ..recipe import load_recipe

    if "trend_import" in rec.stage_names:
        return rec
    out = load_recipe(TREND_RECIPE)
    names = rec.stage_names
    if "detect" in names:
        keep = {f.name for f in dataclasses.fields(DetectParams)}
        vals = {k: v for k, v in rec.params("detect").items() if k in keep and v is not None}
        out = out.with_params("trend_detect", vals)
    if "import" in names and rec.params("import").get("nominal_voltage_v") is not None:
        out = out.with_params("trend_import", {"nominal_voltage_v": rec.params("import")["nominal_voltage_v"]})
    if "report" in names:
        out = out.with_params("trend_report", {"html": bool(rec.params("report").get("html", True))})
    else:
        out = out.without("trend_report")
    return dataclasses.replace(out, plugins=rec.plugins)
