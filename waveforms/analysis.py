"""One capture, start to finish: measure -> speed -> detectors -> thermal -> verdict.

Each step is a small public function taking and returning plain objects
(`measure_capture`, `estimate_speed`, `detect_events`, `assess_motor_thermal`,
`build_result`, with `analysis_parameters` for the parameter record).  The
chain itself is run in one place, `waveforms.recipe.run_recipe`, whose stages
call these functions; `analyze`, the library's main entry point, is a thin
call of the default recipe.  The result is an `AnalysisResult` holding every
table and a plain-language verdict; writing files is left to `waveforms.report`.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import math
import platform
from typing import Any

import numpy as np
import pandas as pd

from .capture import Capture
from .detect import DetectionInput, DetectParams, Event, detect
from .detect.event import iso_at
from .errors import InvalidParameterError, WaveformsError
from .motor.nameplate import Nameplate
from .motor.thermal import TRIP_CLASS_TARGET_S, ThermalParams, ThermalResult, assess_thermal

#: Motor states shaded on the report's timeline, in order of precedence.
STATES: tuple[str, ...] = ("de-energised", "single-phased, stalled", "stalled", "single-phased", "three-phase", "no data")

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
    hookup : HookupResult or None
        What the hook-up check found and corrected (`waveforms.hookup`); None when it did not run.
    voltage : dict or None
        The declared supply voltage and its source, and the motor's terminal
        voltage against its own rating (`supply_voltage_record`).
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
    hookup: Any = None
    voltage: dict | None = None

    @property
    def cycles(self) -> pd.DataFrame:
        return self.measurements.cycles

    def time_at(self, t_s: float | None) -> str | None:
        """ISO 8601 time (with the capture's UTC offset) of an instant given in seconds from the start."""
        return iso_at(self.capture.start_time, t_s)

    def events_of(self, kind: str) -> list[Event]:
        return [e for e in self.events if e.kind == kind]


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
    from importlib.metadata import PackageNotFoundError, version

    from . import __version__

    def of(dist: str) -> str:  # the installed distribution's version, without importing it (matplotlib: ~0.5 s)
        try:
            return version(dist)
        except PackageNotFoundError:
            return ""

    return {
        "motor-waveforms": __version__, "python": platform.python_version(), "numpy": np.__version__,
        "scipy": of("scipy"), "pandas": pd.__version__, "h5py": of("h5py"), "matplotlib": of("matplotlib"),
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
    for e in events:
        # an open line found from the change at its onset leaves no dead channel (other equipment keeps current on
        # it): the event's span is the motor's single-phased stretch; an open transformer primary leaves three live
        # lines (2:1:1), not single phasing at the motor
        if e.kind == "open_phase" and e.figures.get("detection") == "change at onset" \
                and e.figures.get("location") != "transformer_primary":
            end = math.inf if e.end_s is None else e.end_s
            single |= (inp.t_start_s >= e.start_s - 0.5 * inp.cycle_s) & (inp.t_start_s < end)
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
                 "downstream": "downstream of the logger (between the logger and the motor)",
                 "transformer_primary": "on the primary of the transformer feeding the motor (upstream of the logger; no dead line, "
                                        "the currents split 2:1:1)"}.get(f.get("location"), "at a point the voltages do not reveal")
        if f.get("present_at_capture_start"):
            when = "was already open when the capture began"
        elif f.get("present_at_energisation"):
            when = f"was open when the motor was energised at {_t(start, e.start_s)}"
        else:
            when = f"was lost at {_t(start, e.start_s)}"
        state = f.get("motor_state", "")
        lr = "at locked-rotor current" if "live_line_current_pu_fla" in f else "with its current held at the inrush level"
        if state == "stalled" and f.get("present_at_energisation"):
            what = f"the motor could not start (no starting torque single-phased) and sat {lr}"
        elif state == "stalled":
            what = f"the motor stalled {lr}"
        elif state == "ran single-phased, then stalled":
            what = f"the motor kept running single-phased, then stalled at {_t(start, f.get('stalled_at_s'))}"
        elif f.get("location") == "transformer_primary" and "live_line_current_pu_fla" in f:
            # 2:1:1: the named line carries about twice the current of the other two (not single phasing proper)
            what = (f"the motor kept running on the unbalanced secondary voltages, drawing {f['live_line_current_pu_fla']:.1f} x FLA "
                    f"on the other two lines and about twice that on line {e.phase}")
        elif "live_line_current_pu_fla" in f:
            what = f"the motor kept running single-phased, drawing {f['live_line_current_pu_fla']:.1f} x FLA on the other two lines"
        else:
            what = (f"the motor kept running single-phased, drawing {f.get('live_line_current_a', float('nan')):.0f} A on the "
                    "other two lines (no nameplate: not judged against FLA)")
        if f.get("rotation") == "reverse":
            what += ", running in reverse (against the supply's phase sequence, from the regenerated voltage's sequence)" \
                if f.get("rotation_basis") == "regenerated_voltage" else ", running in reverse (against the supply's phase sequence)"
        end = f.get("ended_by")
        tail = {"phase returned": f"; the line returned at {_t(start, e.end_s)}",
                "de-energised": f"; the motor was de-energised at {_t(start, e.end_s)}"}.get(end, "; it was still open at the end of the capture")
        alt = f.get("line_if_voltage_leads_moved")  # hook-up: clamps or voltage leads moved, which cannot be told
        line = f"{e.phase} (line {alt} if it is the voltage leads, not the clamps, that were moved)" if alt else e.phase
        lost = (f"A primary line of the supply transformer (line {line} carries the double current)"
                if f.get("location") == "transformer_primary" else f"Line {line}")
        parts.append(f"{lost} {when}, {where}: {what}{tail}.")
        if f.get("detection") == "steady currents at the start" and f.get("alternative"):
            # no dead line and no onset: the call rests on the currents' split alone (waveforms.detect.open_phase_steady)
            parts.append(f"This rests on the steady currents alone (no dead line, no onset in the capture): {f['alternative']}; "
                         "check the open point on site.")
    if "direction" in timeline:
        told = [o for o in ops if o.figures.get("rotation") == "reverse"]
        for r in timeline[timeline["direction"] == "reverse"].itertuples(index=False):
            if not any(o.overlaps(float(r.start_s), float(r.end_s)) for o in told):
                parts.append(f"The motor was running in reverse (against the supply's phase sequence) from "
                             f"{_t(start, float(r.start_s))} to {_t(start, float(r.end_s))}.")
    for e in stalls:
        if any(e.overlaps(o.start_s, o.end_s) for o in ops):
            continue  # told with the open phase
        f = e.figures
        rated = "i_max_median_pu_fla" in f
        cause = (("failed to start and stayed at locked-rotor current" if rated else "failed to start: its current stayed at the inrush level")
                 if f.get("from_energisation") else "stalled (locked rotor) on a healthy three-phase supply")
        until = {"de-energised": " when it was de-energised", "current fell, motor still energised": " when the current fell back (the rotor turned again)"}.get(f.get("ended_by", ""), "")
        if rated:
            drawing = f"drawing {f['i_max_median_pu_fla']:.1f} x FLA"
        elif f.get("i_over_running"):
            drawing = (f"drawing {f.get('i_max_median_a', float('nan')):.0f} A, {f['i_over_running']:.1f} x its running current "
                       "before (no nameplate)")
        elif f.get("i_over_inrush"):
            drawing = f"drawing {f.get('i_max_median_a', float('nan')):.0f} A, {100 * f['i_over_inrush']:.0f} % of its inrush (no nameplate)"
        else:
            drawing = f"drawing {f.get('i_max_median_a', float('nan')):.0f} A (no nameplate)"
        if f.get("present_at_capture_start"):  # no onset in the file: its first cycle is not when the motor stalled
            held = ("and was still stalled at the end of the capture" if e.end_s is None
                    else f"until {_t(start, e.end_s)}{until}")
            how = " (judged without a nameplate)" if f.get("judged_without_nameplate") else ""
            parts.append(f"The motor was already stalled (locked rotor) when the capture began{how} {held}, {drawing}.")
            continue
        parts.append(f"The motor {cause} from {_t(start, e.start_s)} to {_t(start, e.end_s)}{until}, {drawing}.")
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
        init = s.get("initial_state") or {"mode": "hot" if s.get("hot_start") else "cold"}
        pre = init.get("pre_event_heating_pu")
        cold = {"hot": "hot", "cold": "cold"}.get(init.get("mode"), "cold")
        if pre is not None:
            cold = f"from the capture's pre-event load ({pre:.2f} x FLA, steady state)"
        elif init.get("mode") == "capture":
            cold = "cold (no steady pre-event load in the capture)"
        if tripped:
            txt += f" A model overload relay set at {s['relay_setting_a']:.1f} A, starting {cold}, would have tripped: {', '.join(tripped)}"
            txt += f"; {', '.join(held)} would not have tripped within the capture." if held else "."
        elif held:
            txt += (f" No model overload relay of class {', '.join(c for c, _ in trips)} set at {s['relay_setting_a']:.1f} A, "
                    f"starting {cold}, would have tripped within the capture.")
        pj = s.get("projection") or {}
        if pj.get("heating_pu") is not None:
            later = [f"class {c} trips at about {t:.0f} s" for c, t in pj["relays"].items() if t is not None]
            if pj.get("motor_100pct_s") is not None:
                later.append(f"the motor model reaches 100 % after about {pj['motor_100pct_s']:.0f} s")
            if later:
                txt += (f" Held at the last steady current ({pj['relay_current_pu'] or pj['heating_pu']:.2f} x the relay setting) "
                        f"past the end of the capture: {', '.join(later)} (from the capture start).")
            else:
                txt += f" Held at the last steady current past the end of the capture, no model relay trips and the motor model stays below 100 %."
        parts.append(txt)
    elif nameplate is None:
        parts.append("No nameplate was given, so currents are not judged against FLA and thermal stress is not assessed.")
    if n_quality_warnings:
        parts.append(f"Read the {n_quality_warnings} data-quality warning{'s' if n_quality_warnings > 1 else ''} before relying on these findings.")
    return " ".join(p for p in parts if p)


# -- the steps of the chain ------------------------------------------------------
# Each step takes and returns plain objects (no file I/O).  The recipe stages
# (`waveforms.recipe`) call them, in the one runner `run_recipe`.

NO_NAMEPLATE_NOTE = "no nameplate: thresholds scaled to the capture's own running current; thermal stress not assessed"
SPEED_NO_NAMEPLATE_NOTE = "speed: not estimated, no nameplate (pole count unknown)"
THERMAL_TAU_ASSUMED_NOTE = "thermal: motor heating time constant 600 s assumed (no maker's figure given)"


def nameplate_notes(plate: Nameplate | None) -> list[str]:
    """Notes on the nameplate: that there is none, or its own warnings."""
    if plate is None:
        return [NO_NAMEPLATE_NOTE]
    return [f"nameplate: {w}" for w in plate.warnings]


def measure_capture(capture: Capture, options: dict[str, Any] | None = None) -> Any:
    """`waveforms.measure.measure` with ``options``; raises when not one full cycle could be measured.

    Raises
    ------
    InvalidParameterError
        Naming the capture's source file.
    """
    from .measure import measure

    m = measure(capture, **(options or {}))
    if len(m.cycles) == 0:
        raise InvalidParameterError(f"{capture.provenance.source_path or 'capture'}: no complete fundamental cycle could be measured")
    return m


def gate_measurements(capture: Capture, measurements: Any, nameplate: Nameplate | None) -> list[str]:
    """Blank the ratio and unbalance columns of ``measurements.cycles`` below the level gates (in place); its notes.

    The declared voltage is the supply's by the one rule (`declared_supply_voltage`, default parameters);
    see `waveforms.measure.gate` for the gates and their sources.
    """
    from .measure.gate import gate_cycles

    declared = declared_supply_voltage(capture, measurements).ll_v  # never the motor's rating (issue 18 item 3)
    measurements.cycles, notes = gate_cycles(measurements.cycles, declared, None if nameplate is None else float(nameplate.fla_a))
    return notes


#: Measured fundamental this far from the nominal is a data-quality warning [Hz] (the +/-5 Hz off-nominal range of
#: IEC/IEEE 60255-118-1 M class, from memory)
FREQUENCY_OFF_NOMINAL_HZ = 5.0


def frequency_checks(capture: Capture, measurements: Any, nameplate: Nameplate | None) -> tuple[Capture, list[dict], list[str]]:
    """One nominal frequency for every stage, and the warnings about it: (capture, data-quality entries, notes).

    The nominal frequency is the declared one, else the one the measurement
    inferred (`waveforms.measure.frequency.nominal_from_measured`); it is
    written into the capture so that the speed stage uses the same value.
    Warnings: most cycles without a tracked frequency (the fundamental outside
    the tracked band); the measured frequency more than
    `FREQUENCY_OFF_NOMINAL_HZ` from the nominal; the nameplate's rated
    frequency differing from the capture's.
    """
    from .measure.frequency import tracked_band_hz

    info = getattr(measurements, "info", {}) or {}
    f_nom = float(info.get("nominal_frequency_hz") or capture.nominal_frequency_hz or 0.0)
    quality: list[dict] = []
    notes: list[str] = []
    if not f_nom:
        return capture, quality, notes
    if capture.nominal_frequency_hz is None:
        capture = capture.replace(nominal_frequency_hz=f_nom)
        notes.append(f"nominal frequency {f_nom:g} Hz inferred from the capture (nearest of 50/60 Hz) and used by every stage")
    cyc = measurements.cycles
    f = cyc["frequency_hz"].to_numpy(float) if "frequency_hz" in cyc else np.full(len(cyc), np.nan)
    # cycles with a live voltage (above the level gate) but no tracked frequency
    gate = cyc["level_gate"].astype(str).str.contains("V1 below").to_numpy() if "level_gate" in cyc else np.zeros(len(cyc), bool)
    live = ~gate
    untracked = live & ~np.isfinite(f)
    lo, hi = tracked_band_hz(f_nom)
    f_zc = info.get("zero_crossing_frequency_hz")
    if live.sum() >= 5 and untracked.sum() > 0.5 * live.sum():
        zc = "" if f_zc is None else f"; the zero-crossing rate says {f_zc:.2f} Hz"
        quality.append({"check": "frequency_band", "channel": None, "severity": "warning",
                        "message": (f"the fundamental is outside the tracked band ({lo:.1f}-{hi:.1f} Hz for a {f_nom:g} Hz "
                                    f"system) in {int(untracked.sum())} of {int(live.sum())} live cycles{zc}: their "
                                    "per-cycle values are not valid (ratio columns absent); check the declared nominal frequency"),
                        "untracked_cycles": int(untracked.sum()), "live_cycles": int(live.sum()),
                        "band_hz": [lo, hi], "zero_crossing_frequency_hz": f_zc})
    measured = float(np.nanmedian(f)) if np.isfinite(f).any() else (None if f_zc is None else float(f_zc))
    if measured is not None and abs(measured - f_nom) > FREQUENCY_OFF_NOMINAL_HZ:
        quality.append({"check": "frequency_off_nominal", "channel": None, "severity": "warning",
                        "message": f"measured fundamental {measured:.2f} Hz is more than {FREQUENCY_OFF_NOMINAL_HZ:g} Hz "
                                   f"from the nominal {f_nom:g} Hz: check the declared nominal frequency",
                        "measured_frequency_hz": measured, "nominal_frequency_hz": f_nom})
    if nameplate is not None and measured is not None:
        rated = float(nameplate.rated_frequency_hz)
        if abs(rated - measured) > FREQUENCY_OFF_NOMINAL_HZ:
            quality.append({"check": "nameplate_frequency", "channel": None, "severity": "warning",
                            "message": (f"the nameplate is for a {rated:g} Hz motor but the capture's supply is "
                                        f"{measured:.1f} Hz: wrong nameplate? FLA, slip and thermal figures use it"),
                            "rated_frequency_hz": rated, "measured_frequency_hz": measured})
    return capture, quality, notes


def default_speed_window_s(duration_s: float) -> float:
    """Speed-track window for a capture of ``duration_s`` [s]: about a sixth of it, 0.5 s to 10 s [s].

    Short captures then still give about six windows; 10 s is the speed
    engine's own default (our choice, no source).
    """
    return float(min(10.0, max(0.5, round(float(duration_s) / 6.0, 2))))


def resolve_speed_options(capture: Capture, options: dict[str, Any] | None = None) -> dict[str, Any]:
    """Keyword arguments for `waveforms.speed.track_speed`: ``options`` with the default window filled in.

    The window is `default_speed_window_s` of the capture's duration unless
    ``options`` gives ``window_s`` or a ``settings`` object.
    """
    opts = dict(options or {})
    if "window_s" not in opts and "settings" not in opts:
        opts["window_s"] = default_speed_window_s(capture.duration_s)
    return opts


def speed_record(options: dict[str, Any]) -> dict[str, Any]:
    """The speed options as recorded in `AnalysisResult.parameters`: the window and what differs from the default.

    A `SpeedSettings` field given at its default value is left out, so the
    record (and its digest) depend on the settings in effect, not on how they
    were spelled.
    """
    from .speed import SpeedSettings

    defaults = {f.name: f.default for f in dataclasses.fields(SpeedSettings)}
    out = {}
    for k, v in options.items():
        vv = tuple(v) if isinstance(v, list) else v
        if k == "window_s" or k not in defaults or vv != defaults[k]:
            out[k] = v
    return out


def estimate_speed(
    capture: Capture, cycles: pd.DataFrame | None, nameplate: Nameplate | None, options: dict[str, Any] | None = None,
) -> tuple[pd.DataFrame | None, list[str]]:
    """The speed track and its notes.

    Parameters
    ----------
    capture : Capture
    cycles : DataFrame or None
        Per-cycle table; its ``frequency_hz`` is the supply frequency the track uses.
    nameplate : Nameplate or None
        Pole count; without it (and without ``pole_pairs`` in ``options``) no track.
    options : dict, optional
        Keyword arguments for `waveforms.speed.track_speed`; `resolve_speed_options` fills the window.

    Returns
    -------
    (DataFrame or None, list of str)
        None when not estimated (no nameplate, no current channel, or the
        speed engine's error, told in the notes).
    """
    opts = resolve_speed_options(capture, options)
    if nameplate is None and opts.get("pole_pairs") is None:
        return None, [SPEED_NO_NAMEPLATE_NOTE]
    if not capture.phase_channels("current"):
        return None, []
    from .speed import track_speed

    supply = cycles[["t_s", "frequency_hz"]] if cycles is not None and "frequency_hz" in cycles else None
    try:
        return track_speed(capture, nameplate=nameplate, supply_hz=supply, **opts), []
    except WaveformsError as e:
        return None, [f"speed: not estimated ({e})"]


def _measured_voltage_ll_v(capture: Capture, measurements: Any) -> float | None:
    """Median line-to-line Urms(1/2) of the energised stretch [V] (`waveforms.measure.declared.measured_ll_v`)."""
    from .measure.declared import measured_ll_v

    volts = capture.phase_channels("voltage")
    half = getattr(measurements, "half_cycles", None)
    if not volts or half is None or len(half) == 0:
        return None
    refs = {ch.reference for ch in volts.values()}
    ref = "LL" if refs == {"LL"} else "LN"
    cols = [f"{ch.label}_rms_half" for ch in volts.values() if f"{ch.label}_rms_half" in half]
    return measured_ll_v([half[c].to_numpy(float) for c in cols], ref) if cols else None  # the columns as they are


def declared_supply_voltage(capture: Capture, measurements: Any, params: DetectParams | None = None) -> Any:
    """The declared supply voltage by the one rule of `waveforms.measure.declared` (never the motor's rating)."""
    from .measure.declared import resolve_declared_voltage

    p = params or DetectParams()
    return resolve_declared_voltage(p.declared_voltage_v, capture.nominal_voltage_v,
                                    _measured_voltage_ll_v(capture, measurements), capture.nominal_frequency_hz)


def supply_voltage_record(
    capture: Capture, measurements: Any, nameplate: Nameplate | None, params: DetectParams | None = None,
) -> dict:
    """``declared`` (``ll_v``, ``source``, ``basis``) and ``motor_terminal`` (`waveforms.motor.terminal`, None without a rating)."""
    from .motor.terminal import terminal_voltage_check

    d = declared_supply_voltage(capture, measurements, params)
    meas = _measured_voltage_ll_v(capture, measurements)
    term = None
    cab = _cable_terminal(capture, measurements, params, meas)  # a cable between logger and motor (issue 19 item 6)
    at_motor = meas if cab is None or cab.get("terminal_ll_v") is None else cab["terminal_ll_v"]
    if nameplate is not None and at_motor is not None and at_motor > 0:
        term = terminal_voltage_check(at_motor, float(nameplate.rated_voltage_v))
        if cab is not None:
            term["cable"] = cab
            term["sentence"] = "estimated " + term["sentence"].replace(
                "line-to-line,", f"line-to-line at the motor (logger median {meas:.0f} V less the drop in {cab['cable']['basis']}),", 1)
    return {"declared": {"ll_v": d.ll_v, "source": d.source, "basis": d.basis}, "measured_ll_v": meas, "motor_terminal": term}


def _terminal_phasors(capture: Capture, cycles: pd.DataFrame, params: DetectParams | None) -> tuple[Any, Any, Any] | None:
    """(cable, logger LL phasors, terminal LL phasors) per cycle, or None without a cable (`waveforms.motor.terminal`)."""
    from .motor.terminal import cable_from_params, terminal_ll_phasors

    cable = cable_from_params(params) if params is not None else None
    if cable is None or cycles is None:
        return None
    volts, curs = capture.phase_channels("voltage"), capture.phase_channels("current")
    if len(volts) != 3 or len(curs) != 3:
        return None

    def ph(ch: Any) -> np.ndarray:
        return cycles[f"{ch.label}_mag"].to_numpy(float) * np.exp(1j * np.deg2rad(cycles[f"{ch.label}_ang_deg"].to_numpy(float)))

    ref = volts["A"].reference
    v = np.vstack([ph(volts[c]) for c in "ABC"])
    i = np.vstack([ph(curs[c]) for c in "ABC"])
    v_ll = v if ref == "LL" else np.vstack([v[0] - v[1], v[1] - v[2], v[2] - v[0]])
    return cable, v_ll, terminal_ll_phasors(v, i, ref, cable)


def _cable_terminal(capture: Capture, measurements: Any, params: DetectParams | None, meas: float | None) -> dict | None:
    from .motor.terminal import terminal_record

    got = _terminal_phasors(capture, getattr(measurements, "cycles", None), params)
    if got is None or meas is None:
        return None
    cable, v_ll, v_t = got
    i1 = measurements.cycles["I1"].to_numpy(float) if "I1" in measurements.cycles else np.ones(v_ll.shape[1])
    return terminal_record(v_ll, v_t, i1, meas, cable)


def detection_input(
    capture: Capture, measurements: Any, speed: pd.DataFrame | None, nameplate: Nameplate | None, params: DetectParams,
) -> DetectionInput:
    """The detectors' shared input: tables, nameplate figures (FLA, locked-rotor current) and declared voltage.

    The declared voltage is the supply's (`declared_supply_voltage`): the
    user's, the capture's, or the nearest standard system voltage, never the
    motor's rating (a 460 V motor on a 480 V system).
    """
    plate = nameplate
    decl = declared_supply_voltage(capture, measurements, params)
    got = _terminal_phasors(capture, measurements.cycles, params)  # stall threshold at the motor's voltage
    return DetectionInput(
        terminal_ll_v=None if got is None else np.abs(got[2]),
        cycles=measurements.cycles, half_cycles=getattr(measurements, "half_cycles", None), speed=speed,
        fla_a=None if plate is None else float(plate.fla_a), locked_rotor_a=locked_rotor_a(plate),
        declared_voltage_ll_v=decl.ll_v, declared_voltage_source=decl.source,
        capture=capture, params=params,
        current_channels={c: ch.label for c, ch in capture.phase_channels("current").items()},
    )


def detect_events(
    capture: Capture, measurements: Any, speed: pd.DataFrame | None, nameplate: Nameplate | None,
    params: DetectParams | None = None, only: tuple[str, ...] | None = None,
) -> tuple[list[Event], pd.DataFrame, pd.DataFrame, list[str]]:
    """Run the detectors; the per-cycle motor states and their merged timeline.

    Returns
    -------
    (events, states, timeline, notes)
        ``states`` as `motor_states`, ``timeline`` as `merge_periods`.
    """
    inp = detection_input(capture, measurements, speed, nameplate, params or DetectParams())
    found = detect(inp, only=only)
    events = found.events
    notes = [f"detect: {n}" for n in found.notes]
    if inp.declared_voltage_source != "capture" and len(inp.voltage_channels):
        vrec = supply_voltage_record(capture, measurements, nameplate, params)
        notes.append(f"voltage: {vrec['declared']['basis']}")
    from .segments import clip_events, gap_spans_s, mark_no_data

    spans = gap_spans_s(capture)  # a time-stamp gap splits the analysis: no event spans it (waveforms.segments)
    events, gap_notes = clip_events(events, spans)
    notes += gap_notes
    states = mark_no_data(motor_states(inp, events), spans)
    return events, states, merge_periods(states), notes


#: A period of the timeline gets a direction when the cycles that show one agree and are at least this share
#: of its cycles carrying current (a start or a slow single-phased rotor shows none at first; our choice).
PERIOD_DIRECTION_SHARE = 0.2


def open_points_per_cycle(t_s: np.ndarray, events: list[Event], cycle_s: float = 0.0) -> np.ndarray:
    """Per cycle: the location (``"upstream"``, ``"downstream"``, ``""``) of the open phase active there.

    From the open_phase events' ``start_s``/``end_s`` and their ``location`` figure.
    """
    out = np.full(np.size(t_s), "", dtype=object)
    t = np.asarray(t_s, dtype=float)
    for e in events:
        if e.kind != "open_phase":
            continue
        loc = e.figures.get("location")
        end = math.inf if e.end_s is None else e.end_s
        out[(t >= e.start_s - 0.5 * cycle_s) & (t < end) & (out == "")] = loc if loc in ("upstream", "downstream") else "unknown"
    return out


def window_states(speed: pd.DataFrame, timeline: pd.DataFrame) -> pd.DataFrame:
    """The speed track with a ``state`` column: the timeline state the window lies wholly inside, else "".

    A window that straddles a change of state (running, then stalled) mixes two
    speeds; it belongs to neither state and is not used for either (issue 18).
    """
    out = speed.copy()
    st = np.full(len(out), "", dtype=object)
    if len(out) and len(timeline) and "t_start_s" in out and "t_end_s" in out:
        a, b = out["t_start_s"].to_numpy(float), out["t_end_s"].to_numpy(float)
        tol = 1.0 / 120.0  # the timeline's periods start and end on cycle boundaries: half a 60 Hz cycle of slack
        n = len(timeline)
        for k, r in enumerate(timeline.itertuples(index=False)):
            lo = -np.inf if k == 0 else float(r.start_s) - tol  # the first and last periods reach the capture's ends
            hi = np.inf if k == n - 1 else float(r.end_s) + tol
            inside = (a >= lo) & (b <= hi)
            st[inside & (st == "")] = r.state
    out["state"] = st
    return out


def orient_rotation(
    cycles: pd.DataFrame, speed: pd.DataFrame | None, events: list[Event], timeline: pd.DataFrame,
) -> tuple[pd.DataFrame | None, pd.DataFrame, list[str]]:
    """Direction of rotation for every speed window and every period of the timeline (issue 12).

    Per cycle from `waveforms.speed.direction.cycle_direction` (the open
    phases' locations say where the logged voltages are the motor terminals);
    the speed track gets ``direction``, ``direction_basis`` and signed ``rpm``
    (`waveforms.speed.direction.orient_track`), the timeline a ``direction``
    column.

    Returns
    -------
    (speed track or None, timeline, notes)
    """
    from .speed.direction import DIRECTION_BASES, cycle_direction, interval_direction, orient_track

    notes: list[str] = []
    tl = timeline.copy()
    needed = {"t_s", "I1", "I2"} | ({"V1", "V2"} if "V1" in cycles else set())
    if len(cycles) == 0 or not needed <= set(cycles.columns):
        tl["direction"] = "unknown"
        return speed, tl, ["direction: not assessed (no sequence components in the cycle table)"]
    d = np.diff(cycles["t_s"].to_numpy(float))
    cyc_s = float(np.median(d)) if d.size else 0.0
    per, sup, how = cycle_direction(cycles, open_point=open_points_per_cycle(cycles["t_s"].to_numpy(float), events, cyc_s))
    if how == "assumed":
        notes.append("direction: no three-phase-fed stretch shows the supply's phase sequence; "
                     "A-B-C as labelled is taken as the supply's (forward)")
    else:
        notes.append(f"direction: supply phase sequence {'-'.join(sup)} (measured on the three-phase-fed cycles); "
                     "forward = with it")
    if len(tl):
        dd, bb = interval_direction(per, tl["start_s"].to_numpy(float), tl["end_s"].to_numpy(float), min_share=PERIOD_DIRECTION_SHARE)
        off = tl["state"].to_numpy(object) == "de-energised"
        tl["direction"] = np.where(off, "unknown", dd).astype(object)
        tl["direction_basis"] = np.where(off, "no_current", bb).astype(object)
    else:
        tl["direction"] = pd.Series(dtype=object)
        tl["direction_basis"] = pd.Series(dtype=object)
    if speed is not None:
        speed = orient_track(speed, per, sup)
        speed = window_states(speed, tl)
        rev = speed[(speed["direction"] == "reverse")]
        if len(rev):
            notes.append(f"direction: {len(rev)} speed window(s) running in reverse ({DIRECTION_BASES[str(rev['direction_basis'].iloc[0])]})")
    return speed, tl, notes


def assess_motor_thermal(
    cycles: pd.DataFrame | None, nameplate: Nameplate | None, params: ThermalParams | None = None,
    states: pd.DataFrame | None = None, gap_spans_s: list[tuple[float, float]] | None = None,
) -> tuple[ThermalResult | None, list[str]]:
    """Thermal stress from the per-cycle line currents and the nameplate, with its notes.

    ``states`` (`motor_states`, one row per cycle) tells where the rotor was
    stalled: there the negative-sequence weight is 1, not the running K.

    Returns
    -------
    (ThermalResult or None, list of str)
        None without a nameplate or without a line-current column.
    """
    tparams = params or ThermalParams()
    if nameplate is None or cycles is None or not any(f"I{c}_rms" in cycles for c in "abc"):
        return None, []
    still = None
    if states is not None and len(states) == len(cycles) and "state" in states:
        still = states["state"].astype(str).str.contains("stalled").to_numpy(bool)
    thermal = assess_thermal(
        cycles, fla_a=float(nameplate.fla_a), service_factor=float(nameplate.service_factor),
        locked_rotor_a=locked_rotor_a(nameplate), connection=nameplate.connection, params=tparams,
        standstill=still, locked_rotor_range_a=nameplate.locked_rotor_current_range_a(),
        rated_voltage_v=float(nameplate.rated_voltage_v), gap_spans_s=gap_spans_s,
    )
    notes = [f"thermal: {n}" for n in thermal.summary["notes"]]
    if tparams.motor_tau_s == ThermalParams().motor_tau_s:
        notes.append(THERMAL_TAU_ASSUMED_NOTE)
    return thermal, notes


def analysis_parameters(
    capture: Capture, *, detect_params: DetectParams | None = None, thermal_params: ThermalParams | None = None,
    speed_options: dict[str, Any] | None = None, speed_enabled: bool = True,
    detectors: tuple[str, ...] | None = None, measure_options: dict[str, Any] | None = None,
) -> dict[str, Any]:
    """Every parameter used, as recorded in `AnalysisResult.parameters` (and result.json)."""
    return {
        "detect": (detect_params or DetectParams()).to_dict(),
        "thermal": dataclasses.asdict(thermal_params or ThermalParams()),
        "speed": speed_record(resolve_speed_options(capture, speed_options)),
        "speed_enabled": bool(speed_enabled), "detectors": list(detectors) if detectors else None,
        "measure": dict(measure_options or {}),
    }


def build_result(
    capture: Capture, nameplate: Nameplate | None, measurements: Any, *, speed: pd.DataFrame | None,
    events: list[Event], thermal: ThermalResult | None, states: pd.DataFrame, timeline: pd.DataFrame,
    notes: list[str], quality: list[dict], parameters: dict, timings_s: dict, hookup: Any = None,
) -> AnalysisResult:
    """The `AnalysisResult`, with the verdict written from the events, thermal result and quality warnings."""
    n_warn = sum(1 for q in quality if q.get("severity") == "warning")
    dparams = DetectParams(**{k: v for k, v in (parameters.get("detect") or {}).items()
                              if k == "declared_voltage_v" or k.startswith("cable_")})
    voltage = supply_voltage_record(capture, measurements, nameplate, dparams) if measurements is not None else None
    verdict = verdict_text(events, thermal, timeline, capture.start_time, nameplate, n_warn)
    term = None if voltage is None else voltage.get("motor_terminal")
    if term is not None and not term["within_nema_mg1"]:
        verdict += " The " + term["sentence"] + "."
    lead = "" if hookup is None else hookup.sentence()  # hook-up errors open the verdict (waveforms.hookup)
    verdict = f"{lead} {verdict}" if lead else verdict
    return AnalysisResult(
        capture=capture, nameplate=nameplate, measurements=measurements, speed=speed, events=list(events),
        thermal=thermal, states=states, timeline=timeline, verdict=verdict, notes=list(notes), quality=list(quality),
        parameters=dict(parameters), versions=versions(), timings_s=dict(timings_s), hookup=hookup, voltage=voltage,
    )


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
    as_recorded: bool = False,
) -> AnalysisResult:
    """Analyse one capture: events, speed, thermal stress and a verdict.

    A thin call of the default recipe without its report stage
    (`waveforms.recipe.run_recipe`, the one path of the chain), with the
    arguments below set as the stages' parameters.

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
        Keys of the speed stage (``window_s``, ``pole_pairs`` and the other
        `SpeedSettings` fields); the window defaults to `default_speed_window_s`.
    detectors : tuple of str, optional
        Report only these detectors (see `waveforms.detect.detector_names`).
    quality : bool
        Gather data-quality notes (from the measurement pass; no extra read).
    measure_options : dict, optional
        Keys of the measure stage (``chunk_samples``, ``overlap_cycles``).
    as_recorded : bool
        Analyse the capture exactly as recorded: hook-up findings are reported,
        nothing is corrected (`waveforms.hookup`).

    Returns
    -------
    AnalysisResult
    """
    from .recipe import RecipeError, default_recipe, run_recipe

    det: dict[str, Any] = {} if detect_params is None else dataclasses.asdict(detect_params)
    if detectors is not None:
        det["detectors"] = list(detectors)
    tables = {"import": {"quality": bool(quality)}, "measure": dict(measure_options or {}),
              "speed": {**(speed_options or {}), "enabled": bool(speed)}, "detect": det,
              "thermal": {} if thermal_params is None else dataclasses.asdict(thermal_params)}
    if as_recorded:
        tables["hookup"] = {"as_recorded": True}
    rec = default_recipe().without("report")
    try:
        for stage, values in tables.items():
            rec = rec.with_params(stage, values)
    except RecipeError as e:  # a bad argument, not a bad file: name the argument's key
        raise InvalidParameterError(f"analyze: {e.where}: {e.problem}") from None
    return run_recipe(rec, capture, nameplate=nameplate).analysis


__all__ = [
    "SAFETY_CAUTIONS",
    "STATES",
    "AnalysisResult",
    "analysis_parameters",
    "analyze",
    "assess_motor_thermal",
    "build_result",
    "declared_supply_voltage",
    "default_speed_window_s",
    "detect_events",
    "detection_input",
    "estimate_speed",
    "iso_at",
    "locked_rotor_a",
    "measure_capture",
    "merge_periods",
    "motor_states",
    "nameplate_notes",
    "open_points_per_cycle",
    "orient_rotation",
    "resolve_speed_options",
    "speed_record",
    "supply_voltage_record",
    "verdict_text",
]
