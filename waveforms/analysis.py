"""One capture, start to finish: measure -> speed -> detectors -> thermal -> verdict.

`analyze` is the library's main entry point (the ``waveforms analyze`` command
and the report are thin layers over it).  It returns an `AnalysisResult`
holding every table and a plain-language verdict; writing files is left to
`waveforms.report`.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import math
import platform
import time
from typing import Any

import numpy as np
import pandas as pd

from .capture import Capture
from .detect import DetectionInput, DetectParams, Event, run_detectors
from .errors import InvalidParameterError, WaveformsError
from .motor.nameplate import Nameplate
from .motor.thermal import ThermalParams, ThermalResult, assess_thermal

#: Motor states shaded on the report's timeline, in order of precedence.
STATES: tuple[str, ...] = ("de-energised", "single-phased, stalled", "stalled", "single-phased", "three-phase")

SAFETY_CAUTIONS: tuple[str, ...] = (
    "Work on or near energized equipment only by qualified people, with the protective equipment and "
    "procedures that local electrical codes and licensed practice require.",
    "This analysis informs; it does not replace protective devices (overload relays, phase-loss relays, fuses, "
    "breakers) and must not be used to set or bypass them.",
    "Conclusions are to be confirmed by qualified people under local electrical codes and licensed practice "
    "before any equipment is returned to service or any responsibility is assigned.",
)


@dataclasses.dataclass(eq=False)
class AnalysisResult:
    """Everything `analyze` found about one capture.

    Attributes
    ----------
    capture : Capture
    nameplate : Nameplate or None
    measurements : object
        The measurement engine's `Measurements` (``.cycles``, ``.half_cycles``, ``.harmonics``).
    speed : DataFrame or None
        The speed track (docs/speed.md), None when not estimated.
    events : list of Event
    thermal : ThermalResult or None
    states : DataFrame
        Per cycle: ``t_start_s``, ``t_end_s``, ``state`` (one of `STATES`).
    timeline : DataFrame
        The same merged into periods: ``state``, ``start_s``, ``end_s``.
    verdict : str
        One paragraph in plain words.
    notes : list of str
        Assumptions, defaults taken and what could not be assessed.
    quality : list of dict
        Data-quality notes (`waveforms.quality.quality_notes`).
    parameters : dict
        Every parameter used (detectors, thermal, speed).
    versions : dict
        Package and library versions.
    timings_s : dict
        Wall time per step [s].
    """

    capture: Capture
    nameplate: Nameplate | None
    measurements: Any
    speed: pd.DataFrame | None
    events: list[Event]
    thermal: ThermalResult | None
    states: pd.DataFrame
    timeline: pd.DataFrame
    verdict: str
    notes: list[str]
    quality: list[dict]
    parameters: dict
    versions: dict
    timings_s: dict

    @property
    def cycles(self) -> pd.DataFrame:
        return self.measurements.cycles

    def time_at(self, t_s: float | None) -> str | None:
        """ISO 8601 time (with the capture's UTC offset) of an instant given in seconds from the start."""
        return iso_at(self.capture.start_time, t_s)

    def events_of(self, kind: str) -> list[Event]:
        return [e for e in self.events if e.kind == kind]


def iso_at(start: _dt.datetime, t_s: float | None) -> str | None:
    """``start + t_s`` as ISO 8601 with microseconds and UTC offset (None for None)."""
    if t_s is None or not math.isfinite(t_s):
        return None
    return (start + _dt.timedelta(seconds=float(t_s))).isoformat(timespec="microseconds")


def locked_rotor_a(plate: Nameplate | None) -> float | None:
    """Locked-rotor current [A]: the plate's figure, or the middle of its NEMA code-letter range.

    The code-letter range comes from NEMA MG-1 10.37.2 via `Nameplate.locked_rotor_current_range_a`;
    for letter V (open-ended) its lower bound.
    """
    if plate is None:
        return None
    lr = plate.locked_rotor_current_range_a()
    if lr is None:
        return None
    lo, hi = lr
    return float(lo) if not math.isfinite(hi) else 0.5 * (float(lo) + float(hi))


def versions() -> dict[str, str]:
    import h5py
    import matplotlib
    import scipy

    from . import __version__

    return {
        "motor-waveforms": __version__, "python": platform.python_version(), "numpy": np.__version__,
        "scipy": scipy.__version__, "pandas": pd.__version__, "h5py": h5py.__version__,
        "matplotlib": matplotlib.__version__,
    }


def motor_states(inp: DetectionInput, events: list[Event]) -> pd.DataFrame:
    """Per-cycle motor state (see `STATES`) from the shared detector arrays and the stall events."""
    n = inp.n
    stalled = np.zeros(n, dtype=bool)
    for e in events:
        if e.kind == "stall":
            end = math.inf if e.end_s is None else e.end_s
            stalled |= (inp.t_start_s >= e.start_s - 0.5 * inp.cycle_s) & (inp.t_start_s < end)
    single = inp.dead_line.any(axis=1)
    if np.isfinite(inp.i_max).any():
        off = ~inp.energised
    else:
        off = np.zeros(n, dtype=bool)
        for e in events:
            if e.kind == "interruption":
                end = math.inf if e.end_s is None else e.end_s
                off |= (inp.t_end_s >= e.start_s) & (inp.t_start_s <= end)
    state = np.full(n, "three-phase", dtype=object)
    state[single] = "single-phased"
    state[stalled] = "stalled"
    state[stalled & single] = "single-phased, stalled"
    state[off] = "de-energised"
    return pd.DataFrame({"t_start_s": inp.t_start_s, "t_end_s": inp.t_end_s, "state": state})


def merge_periods(states: pd.DataFrame) -> pd.DataFrame:
    """Consecutive cycles of the same state as periods ``state, start_s, end_s``."""
    if len(states) == 0:
        return pd.DataFrame({"state": pd.Series(dtype=object), "start_s": pd.Series(dtype=float), "end_s": pd.Series(dtype=float)})
    s = states["state"].to_numpy()
    change = np.r_[True, s[1:] != s[:-1]]
    first = np.flatnonzero(change)
    last = np.r_[first[1:] - 1, s.size - 1]
    return pd.DataFrame({
        "state": s[first], "start_s": states["t_start_s"].to_numpy(float)[first],
        "end_s": states["t_end_s"].to_numpy(float)[last],
    })


def _t(result_start: _dt.datetime, t: float | None) -> str:
    if t is None:
        return "the end of the capture"
    t = round(float(t), 3)  # the same rounding for the offset and the clock time
    clock = (result_start + _dt.timedelta(seconds=t)).strftime("%H:%M:%S.%f")[:-3]
    return f"{t:.3f} s ({clock})"


def verdict_text(
    events: list[Event], thermal: ThermalResult | None, timeline: pd.DataFrame, start: _dt.datetime,
    nameplate: Nameplate | None, n_quality_warnings: int = 0,
) -> str:
    """The plain-language verdict paragraph, built from the events in time order."""
    parts: list[str] = []
    ops = [e for e in events if e.kind == "open_phase"]
    stalls = [e for e in events if e.kind == "stall"]
    starts = [e for e in events if e.kind == "start"]
    volt = [e for e in events if e.kind in ("dip", "swell", "interruption")]
    unb = [e for e in events if e.kind == "unbalance"]
    for e in ops:
        f = e.figures
        where = {"upstream": "upstream of the logger (on the supply side)",
                 "downstream": "downstream of the logger (between the logger and the motor)"}.get(f.get("location"), "at a point the voltages do not reveal")
        if f.get("present_at_capture_start"):
            when = "was already open when the capture began"
        elif f.get("present_at_energisation"):
            when = f"was open when the motor was energised at {_t(start, e.start_s)}"
        else:
            when = f"was lost at {_t(start, e.start_s)}"
        state = f.get("motor_state", "")
        if state == "stalled" and f.get("present_at_energisation"):
            what = "the motor could not start (no starting torque single-phased) and sat at locked-rotor current"
        elif state == "stalled":
            what = "the motor stalled at locked-rotor current"
        elif state == "ran single-phased, then stalled":
            what = f"the motor kept running single-phased, then stalled at {_t(start, f.get('stalled_at_s'))}"
        else:
            what = f"the motor kept running single-phased, drawing {f.get('live_line_current_pu_fla', float('nan')):.1f} x FLA on the other two lines"
        end = f.get("ended_by")
        tail = {"phase returned": f"; the line returned at {_t(start, e.end_s)}",
                "de-energised": f"; the motor was de-energised at {_t(start, e.end_s)}"}.get(end, "; it was still open at the end of the capture")
        parts.append(f"Line {e.phase} {when}, {where}: {what}{tail}.")
    for e in stalls:
        if any(e.overlaps(o.start_s, o.end_s) for o in ops):
            continue  # told with the open phase
        f = e.figures
        cause = "failed to start and stayed at locked-rotor current" if f.get("from_energisation") else "stalled (locked rotor) on a healthy three-phase supply"
        until = {"de-energised": " when it was de-energised", "current fell, motor still energised": " when the current fell back (the rotor turned again)"}.get(f.get("ended_by", ""), "")
        parts.append(f"The motor {cause} from {_t(start, e.start_s)} to {_t(start, e.end_s)}{until}, "
                     f"drawing {f.get('i_max_median_pu_fla', float('nan')):.1f} x FLA.")
    ok_starts = [e for e in starts if e.figures.get("success")]
    if ok_starts:
        times = "; ".join(f"at {_t(start, e.start_s)}, acceleration time {e.figures.get('acceleration_time_s', float('nan')):.2f} s"
                          for e in ok_starts)
        parts.append(f"{len(ok_starts)} successful start{'s' if len(ok_starts) > 1 else ''} ({times}).")
    for e in volt:
        parts.append(e.summary[0].upper() + e.summary[1:] + f", at {_t(start, e.start_s)}.")
    for e in unb:
        parts.append("Sustained " + e.summary + ".")
    if not (ops or stalls or volt or unb):
        parts.insert(0, "No open phase, stall, voltage dip, swell, interruption or sustained unbalance was found.")
    if thermal is not None:
        s = thermal.summary
        trips = [(c, r["trip_s"]) for c, r in s["relays"].items()]
        tripped = [f"class {c} at {_t(start, t)}" for c, t in trips if t is not None]
        held = [f"class {c}" for c, t in trips if t is None]
        txt = (f"Thermal stress: the largest line current reached {s['max_current_pu']:.1f} x FLA, "
               f"{s['time_above_fla_s']:.1f} s above FLA, thermal capacity used up to {s['thermal_capacity_used_pct']:.0f} % "
               f"(single time-constant model, tau {s['motor_tau_s']:.0f} s).") if s.get("max_current_pu") is not None else ""
        cold = "hot" if s.get("hot_start") else "cold"
        if tripped:
            txt += f" A model overload relay set at {s['relay_setting_a']:.1f} A, starting {cold}, would have tripped: {', '.join(tripped)}"
            txt += f"; {', '.join(held)} would not have tripped within the capture." if held else "."
        elif held:
            txt += (f" No model overload relay of class {', '.join(c for c, _ in trips)} set at {s['relay_setting_a']:.1f} A, "
                    f"starting {cold}, would have tripped within the capture.")
        parts.append(txt)
    elif nameplate is None:
        parts.append("No nameplate was given, so currents are not judged against FLA and thermal stress is not assessed.")
    if n_quality_warnings:
        parts.append(f"Read the {n_quality_warnings} data-quality warning{'s' if n_quality_warnings > 1 else ''} before relying on these findings.")
    return " ".join(p for p in parts if p)


def analyze(
    capture: Capture,
    nameplate: Nameplate | None = None,
    *,
    detect_params: DetectParams | None = None,
    thermal_params: ThermalParams | None = None,
    speed: bool = True,
    speed_options: dict[str, Any] | None = None,
    detectors: tuple[str, ...] | None = None,
    quality: bool = True,
    measure_options: dict[str, Any] | None = None,
) -> AnalysisResult:
    """Analyse one capture: events, speed, thermal stress and a verdict.

    Parameters
    ----------
    capture : Capture
    nameplate : Nameplate, optional
        Defaults to ``capture.nameplate``; without one, currents are judged
        relative to the capture's own running current and thermal stress is
        not assessed.
    detect_params : DetectParams, optional
    thermal_params : ThermalParams, optional
    speed : bool
        Estimate the speed track (needs a nameplate for the pole count).
    speed_options : dict, optional
        Keyword arguments for `waveforms.speed.track_speed` (``window_s`` ...).
    detectors : tuple of str, optional
        Run only these detectors (see `waveforms.detect.detector_names`).
    quality : bool
        Gather data-quality notes (one more pass over the samples).
    measure_options : dict, optional
        Keyword arguments for `waveforms.measure.measure`.

    Returns
    -------
    AnalysisResult
    """
    from .measure import measure

    timings: dict[str, float] = {}
    notes: list[str] = []
    plate = nameplate if nameplate is not None else capture.nameplate
    if plate is None:
        notes.append("no nameplate: thresholds scaled to the capture's own running current; thermal stress not assessed")
    else:
        notes.extend(f"nameplate: {w}" for w in plate.warnings)
    t0 = time.perf_counter()
    m = measure(capture, **(measure_options or {}))
    timings["measure"] = time.perf_counter() - t0
    cycles = m.cycles
    if len(cycles) == 0:
        raise InvalidParameterError(f"{capture.provenance.source_path or 'capture'}: no complete fundamental cycle could be measured")

    track = None
    speed_opts = dict(speed_options or {})
    if "window_s" not in speed_opts and "settings" not in speed_opts:
        # short captures: about six windows, 0.5 s to 10 s long (our choice; 10 s is the speed engine's default)
        speed_opts["window_s"] = float(min(10.0, max(0.5, round(capture.duration_s / 6.0, 2))))
    if speed and plate is not None and capture.phase_channels("current"):
        t0 = time.perf_counter()
        from .speed import track_speed

        supply = cycles[["t_s", "frequency_hz"]] if "frequency_hz" in cycles else None
        try:
            track = track_speed(capture, nameplate=plate, supply_hz=supply, **speed_opts)
        except WaveformsError as e:
            notes.append(f"speed: not estimated ({e})")
        timings["speed"] = time.perf_counter() - t0
    elif speed and plate is None:
        notes.append("speed: not estimated, no nameplate (pole count unknown)")

    t0 = time.perf_counter()
    dparams = detect_params or DetectParams()
    inp = DetectionInput(
        cycles=cycles, half_cycles=getattr(m, "half_cycles", None), speed=track,
        fla_a=None if plate is None else float(plate.fla_a), locked_rotor_a=locked_rotor_a(plate),
        declared_voltage_ll_v=capture.nominal_voltage_v or (None if plate is None else float(plate.rated_voltage_v)),
        capture=capture, params=dparams,
        current_channels={c: ch.label for c, ch in capture.phase_channels("current").items()},
    )
    events = run_detectors(inp, only=detectors)
    notes.extend(f"detect: {n}" for n in dict.fromkeys(inp.notes))
    states = motor_states(inp, events)
    timeline = merge_periods(states)
    timings["detect"] = time.perf_counter() - t0

    thermal = None
    tparams = thermal_params or ThermalParams()
    if plate is not None and any(f"I{c}_rms" in cycles for c in "abc"):
        t0 = time.perf_counter()
        thermal = assess_thermal(
            cycles, fla_a=float(plate.fla_a), service_factor=float(plate.service_factor),
            locked_rotor_a=locked_rotor_a(plate), connection=plate.connection, params=tparams,
        )
        notes.extend(f"thermal: {n}" for n in thermal.summary["notes"])
        if thermal_params is None or thermal_params.motor_tau_s == ThermalParams().motor_tau_s:
            notes.append("thermal: motor heating time constant 600 s assumed (no maker's figure given)")
        timings["thermal"] = time.perf_counter() - t0

    qnotes: list[dict] = []
    if quality:
        t0 = time.perf_counter()
        from .quality import quality_notes

        qnotes = quality_notes(capture)
        timings["quality"] = time.perf_counter() - t0
    n_warn = sum(1 for q in qnotes if q.get("severity") == "warning")
    verdict = verdict_text(events, thermal, timeline, capture.start_time, plate, n_warn)
    params = {
        "detect": dparams.to_dict(), "thermal": dataclasses.asdict(tparams), "speed": speed_opts,
        "speed_enabled": bool(speed), "detectors": list(detectors) if detectors else None,
        "measure": dict(measure_options or {}),
    }
    return AnalysisResult(
        capture=capture, nameplate=plate, measurements=m, speed=track, events=events, thermal=thermal,
        states=states, timeline=timeline, verdict=verdict, notes=notes, quality=qnotes,
        parameters=params, versions=versions(), timings_s=timings,
    )


__all__ = ["AnalysisResult", "SAFETY_CAUTIONS", "STATES", "analyze", "iso_at", "locked_rotor_a", "verdict_text"]
