"""Scenario files: one TOML file describes a simulated capture end to end.

Layout (all tables optional except ``[scenario]``, ``[supply]`` and a machine)::

    [scenario]
    name = "healthy-run"
    description = "..."
    duration_s = 6.0
    seed = 1
    machine = "pump2.machine.toml"      # or an inline [machine] table, or
                                        # [machine_from_nameplate] (see below)
    nameplate = "pump2.nameplate.toml"  # optional, attached to the capture

    [machine_from_nameplate]  # instead of a machine: estimate it from the nameplate
    inertia_kg_m2 = 2.0       # required (not on a nameplate)
    rs_per_rr = 1.0           # assumptions, see waveforms.motor.estimate
    x1_share = 0.4

    [initial]
    state = "steady"      # "steady" (running at the load's operating point),
                          # "rest", or "coasting" (turning at speed_rpm, no flux)
    speed_rpm = 0.0       # coasting only; negative = reverse

    [load]
    kind = "quadratic"    # or "constant"
    torque_n_m = 180.0
    reference_speed_rpm = 1740
    breakaway_n_m = 15.0
    steps = [{time_s = 3.0, torque_n_m = 120.0}]
    jam = {time_s = 4.0, torque_n_m = 1500.0}

    [supply]
    voltage_ll_v = 460
    frequency_hz = 60
    frequency_offset_hz = 0.0
    magnitude_pu = [1, 1, 1]
    angle_offset_deg = [0, 0, 0]
    sequence = "ABC"
    source_r_ohm = 0.01
    source_x_ohm = 0.05
    harmonics = [{order = 5, percent = 2.0, angle_deg = 0}]
    dips = [{start_s = 2.0, end_s = 2.2, phases = "ABC", residual_pu = 0.6}]

    [switches]
    closed_at_start = "ABC"
    open_point = "upstream"   # the switch is upstream of the logger (logger at
                              # the motor sees the regenerated voltage) or
                              # "downstream" (logger sees the supply voltage)
    ops = [{line = "C", time_s = 3.0, action = "open"}]

    [logger]
    sample_rate_hz = 5000
    voltages = "LN"            # or "LL"
    currents = "line"          # or "winding": a six-lead hook-up on a delta motor (Ia, Ib, Ic = windings AB, BC, CA)
    start_time = 2026-03-02T08:00:00+01:00
    adc_bits = 16
    voltage_range_v = 1024
    current_range_a = 1024
    noise_v = 0.2
    noise_a = 0.05
    storage = "float32"
    [logger.channels.Ia]
    gain = 1.002
    offset = 0.0
    phase_deg = 0.3

    [signatures]
    eccentricity_db = -50
    slot_db = -55
    rotor_bars = 28            # default: the nameplate's rotor_bars

    [site]                     # optional: the site around the motor (waveforms.sim.site)
    logger_at = "feeder"       # feeder | branch | motor | second_motor
    cable_r_ohm = 0.01         # motor cable, between its switch and its terminals
    cable_x_ohm = 0.01
    [[site.capacitor]]
    at = "bus"                 # bus (upstream of the motor switch) | motor (at its terminals)
    connection = "delta"       # delta | star (floating neutral)
    fla_pu = 0.3               # line current in pu of the nameplate FLA, or kvar = 12.0
    [site.second_motor]
    machine = "sludge4.machine.toml"   # or an inline [site.second_motor.machine] table
    load = {kind = "constant", torque_n_m = 120.0}
    [site.transformer]         # [supply] is then the primary source
    kva = 300
    secondary_voltage_ll_v = 460    # primary_voltage_ll_v defaults to supply.voltage_ll_v
    vector_group = "Dyn11"          # or "Dyn1"
    impedance_pct = 5.0
    x_over_r = 5.0
    magnetising_pct = 1.0
    closed_at_start = "ABC"
    ops = [{line = "A", time_s = 2.0, action = "open"}]
    [site.grounding]           # the source neutral: solid (default) | resistance | ungrounded
    kind = "ungrounded"
    charging_uf_per_phase = 1.0
    faults = [{line = "A", start_s = 1.0, end_s = 2.0, resistance_ohm = 0.0}]   # on another feeder

    [[truth.windows]]
    name = "running"
    start_s = 1.0
    end_s = 2.0

Relative paths are resolved against the scenario file's folder.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import hashlib
import math
from os import PathLike
from pathlib import Path
from typing import Any

from ..errors import CaptureReadError, InvalidParameterError
from ..tomlfile import read_toml
from .dynamics import SwitchOp
from .loads import Jam, Load, LoadStep
from .logger import ChannelError, Logger
from .machine import MachineParameters, load_machine
from ..motor.nameplate import Nameplate, load_nameplate
from .signatures import Signatures
from .grounding import GroundFault, Grounding
from .site import CapacitorBank, SecondMotor, Site, Transformer, bank_capacitance_f
from .supply import Dip, Harmonic, Supply


@dataclasses.dataclass(frozen=True)
class Window:
    """A named stretch where the truth file gives steady phasors and sequence values [s]."""

    name: str
    start_s: float
    end_s: float


@dataclasses.dataclass(frozen=True)
class Scenario:
    """Everything `waveforms.sim.simulate` needs; see the module docstring for the file form."""

    name: str
    machine: MachineParameters
    supply: Supply
    duration_s: float
    load: Load = dataclasses.field(default_factory=Load)
    description: str = ""
    seed: int = 0
    nameplate: Nameplate | None = None
    initial_state: str = "steady"
    initial_speed_rpm: float = 0.0
    closed_at_start: tuple[bool, bool, bool] = (True, True, True)
    switch_ops: tuple[SwitchOp, ...] = ()
    open_point: str = "upstream"
    logger: Logger = dataclasses.field(default_factory=Logger)
    signatures: Signatures = dataclasses.field(default_factory=Signatures)
    windows: tuple[Window, ...] = ()
    locked_rotor: bool = False
    source_path: str = ""
    source_sha256: str = ""
    notes: tuple[str, ...] = ()
    site: Site | None = None

    def __post_init__(self) -> None:
        if not (math.isfinite(self.duration_s) and 0.05 <= self.duration_s <= 3600.0):
            raise InvalidParameterError(f"scenario duration_s={self.duration_s!r} must be 0.05..3600")
        if self.initial_state not in ("steady", "rest", "coasting"):
            raise InvalidParameterError(f"initial state={self.initial_state!r} must be 'steady', 'rest' or 'coasting'")
        if self.site is not None and self.open_point != self.site.open_point:
            raise InvalidParameterError(f"switches open_point={self.open_point!r} contradicts site logger_at={self.site.logger_at!r} "
                                        f"(the motor switch is {self.site.open_point} of the logger); leave open_point out")
        if self.logger.currents == "winding" and self.machine.connection != "delta":
            raise InvalidParameterError("logger currents='winding' (a six-lead hook-up) needs a delta-connected machine")
        if self.logger.currents == "winding" and self.site is not None and self.site.logger_at != "motor":
            raise InvalidParameterError("logger currents='winding' needs site logger_at='motor' (the winding currents are the motor's)")
        if self.open_point not in ("upstream", "downstream") and self.site is None:
            raise InvalidParameterError(f"switches open_point={self.open_point!r} must be 'upstream' or 'downstream'")
        for w in self.windows:
            if not (0 <= w.start_s < w.end_s <= self.duration_s):
                raise InvalidParameterError(f"truth window {w.name!r}: need 0 <= start_s < end_s <= duration_s")


def _table(d: Any, where: str, path: str, known: set[str]) -> dict[str, Any]:
    if d is None:
        return {}
    if not isinstance(d, dict):
        raise CaptureReadError(path, f"key {where}", "must be a table")
    unknown = sorted(set(d) - known)
    if unknown:
        raise CaptureReadError(path, f"key {where}.{unknown[0]}", f"unknown key; known keys: {sorted(known)}")
    return d


def _list(d: Any, where: str, path: str) -> list[Any]:
    if d is None:
        return []
    if not isinstance(d, list):
        raise CaptureReadError(path, f"key {where}", "must be an array")
    return d


def _lines(s: Any, where: str, path: str) -> tuple[bool, bool, bool]:
    if not isinstance(s, str) or any(c not in "ABC" for c in s):
        raise CaptureReadError(path, f"key {where}", f"{s!r} must be letters from 'ABC' (or '')")
    return ("A" in s, "B" in s, "C" in s)


def scenario_from_dict(data: dict[str, Any], path: str = "<scenario>", base: Path | None = None) -> Scenario:
    """Build a `Scenario` from a parsed TOML mapping (see the module docstring)."""
    base = base or Path(".")
    top = _table(data, "", path, {"scenario", "initial", "machine", "machine_from_nameplate", "load", "supply", "switches", "logger",
                                  "signatures", "truth", "site"})
    sc = _table(top.get("scenario"), "scenario", path, {"name", "description", "duration_s", "seed", "machine", "nameplate", "locked_rotor"})
    where = "scenario"
    try:
        given = [k for k, present in (("scenario.machine", "machine" in sc), ("[machine]", "machine" in top),
                                      ("[machine_from_nameplate]", "machine_from_nameplate" in top)) if present]
        if len(given) != 1:
            raise CaptureReadError(path, "key scenario.machine", "give exactly one of a machine file (scenario.machine), an inline "
                                   f"[machine] table or [machine_from_nameplate]; found {given or 'none'}")
        notes: tuple[str, ...] = ()
        if "machine" in sc:
            machine = load_machine(base / sc["machine"])
        elif "machine" in top:
            machine = MachineParameters.from_dict(dict(top["machine"]), f"{path} [machine]")
        nameplate = load_nameplate(base / sc["nameplate"]) if "nameplate" in sc else None
        if "machine_from_nameplate" in top:
            where = "machine_from_nameplate"
            est = _table(top["machine_from_nameplate"], "machine_from_nameplate", path, {"inertia_kg_m2", "rs_per_rr", "x1_share", "friction_n_m_s"})
            if nameplate is None:
                raise CaptureReadError(path, "key scenario.nameplate", "missing; [machine_from_nameplate] needs a nameplate file")
            if "inertia_kg_m2" not in est:
                raise CaptureReadError(path, "key machine_from_nameplate.inertia_kg_m2", "missing; inertia is not on a nameplate")
            from ..motor.estimate import machine_from_nameplate

            fit = machine_from_nameplate(nameplate, float(est["inertia_kg_m2"]), rs_per_rr=float(est.get("rs_per_rr", 1.0)),
                                         x1_share=float(est.get("x1_share", 0.4)), friction_n_m_s=float(est.get("friction_n_m_s", 0.0)))
            machine, notes = fit.machine, fit.warnings

        where = "initial"
        ini = _table(top.get("initial"), "initial", path, {"state", "speed_rpm"})
        where = "load"
        ld = _table(top.get("load"), "load", path, {"kind", "torque_n_m", "reference_speed_rpm", "breakaway_n_m", "steps", "jam"})
        steps = tuple(LoadStep(float(s["time_s"]), float(s["torque_n_m"])) for s in _list(ld.get("steps"), "load.steps", path))
        jam = Jam(float(ld["jam"]["time_s"]), float(ld["jam"]["torque_n_m"])) if "jam" in ld else None
        ref_rpm = float(ld.get("reference_speed_rpm", 120.0 * 60.0 / machine.poles))
        load = Load(kind=str(ld.get("kind", "constant")), torque_n_m=float(ld.get("torque_n_m", 0.0)),
                    reference_speed_rad_s=ref_rpm * 2.0 * math.pi / 60.0, breakaway_n_m=float(ld.get("breakaway_n_m", 0.0)),
                    steps=steps, jam=jam)

        where = "supply"
        sp = _table(top.get("supply"), "supply", path, {"voltage_ll_v", "frequency_hz", "frequency_offset_hz", "magnitude_pu",
                                                         "angle_offset_deg", "sequence", "source_r_ohm", "source_x_ohm", "harmonics", "dips"})
        if "voltage_ll_v" not in sp:
            raise CaptureReadError(path, "key supply.voltage_ll_v", "missing")
        harmonics = tuple(Harmonic(int(h["order"]), float(h["percent"]), float(h.get("angle_deg", 0.0))) for h in _list(sp.get("harmonics"), "supply.harmonics", path))
        dips = tuple(Dip(float(d["start_s"]), float(d["end_s"]), str(d["phases"]), float(d["residual_pu"])) for d in _list(sp.get("dips"), "supply.dips", path))
        supply = Supply(voltage_ll_v=float(sp["voltage_ll_v"]), frequency_hz=float(sp.get("frequency_hz", 60.0)),
                        frequency_offset_hz=float(sp.get("frequency_offset_hz", 0.0)),
                        magnitude_pu=tuple(float(x) for x in sp.get("magnitude_pu", (1.0, 1.0, 1.0))),  # type: ignore[arg-type]
                        angle_offset_deg=tuple(float(x) for x in sp.get("angle_offset_deg", (0.0, 0.0, 0.0))),  # type: ignore[arg-type]
                        sequence=str(sp.get("sequence", "ABC")), harmonics=harmonics, dips=dips,
                        source_r_ohm=float(sp.get("source_r_ohm", 0.0)), source_x_ohm=float(sp.get("source_x_ohm", 0.0)))

        where = "switches"
        sw = _table(top.get("switches"), "switches", path, {"closed_at_start", "open_point", "ops"})
        closed0 = _lines(sw.get("closed_at_start", "ABC"), "switches.closed_at_start", path)
        ops = tuple(SwitchOp(str(o["line"]), float(o["time_s"]), str(o["action"])) for o in _list(sw.get("ops"), "switches.ops", path))
        for i, o in enumerate(ops):
            if o.line not in ("A", "B", "C") or o.action not in ("open", "close"):
                raise CaptureReadError(path, f"key switches.ops[{i}]", f"line={o.line!r} must be A/B/C and action={o.action!r} open/close")
            if "duration_s" in sc and not (0.0 < o.time_s < float(sc["duration_s"])):
                raise CaptureReadError(path, f"key switches.ops[{i}].time_s",
                                       f"{o.time_s} s is outside the capture (0, {float(sc['duration_s']):g}) s; give the state at t = 0 with closed_at_start")

        where = "logger"
        lg = _table(top.get("logger"), "logger", path, {"sample_rate_hz", "voltages", "currents", "start_time", "adc_bits", "voltage_range_v",
                                                         "current_range_a", "noise_v", "noise_a", "channels", "storage"})
        start = lg.get("start_time", Logger.start_time)
        if isinstance(start, str):
            start = _dt.datetime.fromisoformat(start)
        if not isinstance(start, _dt.datetime):
            raise CaptureReadError(path, "key logger.start_time", f"{start!r} must be a date-time with a UTC offset")
        chans = {}
        for name, ce in _table(lg.get("channels"), "logger.channels", path, {"Va", "Vb", "Vc", "Vab", "Vbc", "Vca", "Ia", "Ib", "Ic"}).items():
            ce = _table(ce, f"logger.channels.{name}", path, {"gain", "offset", "phase_deg"})
            chans[name] = ChannelError(float(ce.get("gain", 1.0)), float(ce.get("offset", 0.0)), float(ce.get("phase_deg", 0.0)))
        bits = lg.get("adc_bits", 16)
        logger = Logger(sample_rate_hz=float(lg.get("sample_rate_hz", 5000.0)), voltages=str(lg.get("voltages", "LN")),
                        currents=str(lg.get("currents", "line")),
                        start_time=start, adc_bits=None if bits in (0, None) else int(bits),
                        voltage_range_v=float(lg.get("voltage_range_v", 1024.0)), current_range_a=float(lg.get("current_range_a", 1024.0)),
                        noise_v=float(lg.get("noise_v", 0.0)), noise_a=float(lg.get("noise_a", 0.0)),
                        channel_errors=chans, storage=str(lg.get("storage", "float32")))

        where = "signatures"
        sg = _table(top.get("signatures"), "signatures", path, {"eccentricity_db", "eccentricity_order", "slot_db", "rotor_bars",
                                                                 "eccentricity_phase_deg", "slot_phase_deg"})
        bars = sg.get("rotor_bars", nameplate.rotor_bars if nameplate is not None else None)
        signatures = Signatures(eccentricity_db=sg.get("eccentricity_db"), eccentricity_order=int(sg.get("eccentricity_order", 1)),
                                slot_db=sg.get("slot_db"), rotor_bars=bars,
                                eccentricity_phase_deg=float(sg.get("eccentricity_phase_deg", 0.0)),
                                slot_phase_deg=float(sg.get("slot_phase_deg", 0.0)))

        where = "site"
        site = _site(top.get("site"), path, base, sp, supply, machine, nameplate) if "site" in top else None
        if site is not None and "open_point" not in sw:
            sw = {**sw, "open_point": site.open_point}

        where = "truth"
        tr = _table(top.get("truth"), "truth", path, {"windows"})
        windows = tuple(Window(str(w["name"]), float(w["start_s"]), float(w["end_s"])) for w in _list(tr.get("windows"), "truth.windows", path))

        where = "scenario"
        if "duration_s" not in sc:
            raise CaptureReadError(path, "key scenario.duration_s", "missing")
        return Scenario(
            name=str(sc.get("name", Path(path).stem)), description=str(sc.get("description", "")),
            duration_s=float(sc["duration_s"]), seed=int(sc.get("seed", 0)), machine=machine, nameplate=nameplate,
            initial_state=str(ini.get("state", "steady")), initial_speed_rpm=float(ini.get("speed_rpm", 0.0)),
            load=load, supply=supply, closed_at_start=closed0,
            switch_ops=ops, open_point=str(sw.get("open_point", "upstream")), logger=logger, signatures=signatures,
            windows=windows, locked_rotor=bool(sc.get("locked_rotor", False)), source_path=str(path), notes=notes,
            site=site,
        )
    except InvalidParameterError as e:
        raise CaptureReadError(path, f"table [{where}]", str(e)) from None
    except (KeyError, TypeError, ValueError) as e:
        raise CaptureReadError(path, f"table [{where}]", f"missing or malformed value ({e!s})") from None


def _load_from(d: dict[str, Any], where: str, path: str, default_rpm: float) -> Load:
    ld = _table(d, where, path, {"kind", "torque_n_m", "reference_speed_rpm", "breakaway_n_m", "steps", "jam"})
    steps = tuple(LoadStep(float(s["time_s"]), float(s["torque_n_m"])) for s in _list(ld.get("steps"), f"{where}.steps", path))
    jam = Jam(float(ld["jam"]["time_s"]), float(ld["jam"]["torque_n_m"])) if "jam" in ld else None
    ref_rpm = float(ld.get("reference_speed_rpm", default_rpm))
    return Load(kind=str(ld.get("kind", "constant")), torque_n_m=float(ld.get("torque_n_m", 0.0)),
                reference_speed_rad_s=ref_rpm * 2.0 * math.pi / 60.0, breakaway_n_m=float(ld.get("breakaway_n_m", 0.0)),
                steps=steps, jam=jam)


def _site(d: Any, path: str, base: Path, sp: dict[str, Any], supply: Supply, machine: MachineParameters,
          nameplate: Nameplate | None) -> Site:
    """The ``[site]`` table (see `waveforms.sim.site`)."""
    st = _table(d, "site", path, {"logger_at", "cable_r_ohm", "cable_x_ohm", "capacitor", "second_motor", "transformer", "grounding"})
    grounding = None
    if "grounding" in st:
        gt = _table(st["grounding"], "site.grounding", path, {"kind", "resistance_ohm", "charging_uf_per_phase", "faults"})
        faults = []
        for i, f in enumerate(_list(gt.get("faults"), "site.grounding.faults", path)):
            ft = _table(f, f"site.grounding.faults[{i}]", path, {"line", "start_s", "end_s", "resistance_ohm"})
            faults.append(GroundFault(str(ft["line"]), float(ft["start_s"]), float(ft["end_s"]), float(ft.get("resistance_ohm", 0.0))))
        try:
            grounding = Grounding(kind=str(gt.get("kind", "solid")), resistance_ohm=float(gt.get("resistance_ohm", 0.0)),
                                  charging_uf_per_phase=float(gt.get("charging_uf_per_phase", 1.0)), faults=tuple(faults))
        except InvalidParameterError as e:
            raise CaptureReadError(path, "key site.grounding", str(e)) from None
    transformer = None
    if "transformer" in st:
        tt = _table(st["transformer"], "site.transformer", path, {"kva", "primary_voltage_ll_v", "secondary_voltage_ll_v", "vector_group",
                                                                   "impedance_pct", "x_over_r", "magnetising_pct", "closed_at_start", "ops"})
        for key in ("kva", "secondary_voltage_ll_v"):
            if key not in tt:
                raise CaptureReadError(path, f"key site.transformer.{key}", "missing")
        ops = []
        for i, o in enumerate(_list(tt.get("ops"), "site.transformer.ops", path)):
            op = SwitchOp(str(o["line"]), float(o["time_s"]), str(o["action"]))
            if op.line not in ("A", "B", "C") or op.action not in ("open", "close") or not op.time_s > 0:
                raise CaptureReadError(path, f"key site.transformer.ops[{i}]",
                                       f"line={op.line!r} must be A/B/C, action={op.action!r} open/close and time_s > 0")
            ops.append(op)
        transformer = Transformer(kva=float(tt["kva"]), primary_voltage_ll_v=float(tt.get("primary_voltage_ll_v", supply.voltage_ll_v)),
                                  secondary_voltage_ll_v=float(tt["secondary_voltage_ll_v"]), vector_group=str(tt.get("vector_group", "Dyn11")),
                                  impedance_pct=float(tt.get("impedance_pct", 5.0)), x_over_r=float(tt.get("x_over_r", 5.0)),
                                  magnetising_pct=float(tt.get("magnetising_pct", 1.0)),
                                  closed_at_start=_lines(tt.get("closed_at_start", "ABC"), "site.transformer.closed_at_start", path),
                                  ops=tuple(ops))
    v_bus = transformer.secondary_voltage_ll_v if transformer is not None else supply.voltage_ll_v
    banks = []
    for i, b in enumerate(_list(st.get("capacitor"), "site.capacitor", path)):
        where = f"site.capacitor[{i}]"
        bt = _table(b, where, path, {"at", "connection", "kvar", "fla_pu", "rated_voltage_ll_v"})
        if ("kvar" in bt) == ("fla_pu" in bt):
            raise CaptureReadError(path, f"key {where}", "give exactly one of kvar and fla_pu")
        if "fla_pu" in bt and nameplate is None:
            raise CaptureReadError(path, f"key {where}.fla_pu", "needs scenario.nameplate (its fla_a); give kvar instead")
        conn = str(bt.get("connection", "delta"))
        if conn not in ("delta", "star"):
            raise CaptureReadError(path, f"key {where}.connection", f"{conn!r} must be 'delta' or 'star'")
        try:
            c = bank_capacitance_f(conn, float(bt.get("rated_voltage_ll_v", v_bus)), supply.frequency_hz,
                                   kvar=float(bt["kvar"]) if "kvar" in bt else None,
                                   line_current_a=float(bt["fla_pu"]) * nameplate.fla_a if "fla_pu" in bt and nameplate is not None else None)
            banks.append(CapacitorBank(str(bt.get("at", "bus")), conn, c))
        except InvalidParameterError as e:
            raise CaptureReadError(path, f"key {where}", str(e)) from None
    second = None
    if "second_motor" in st:
        sm = _table(st["second_motor"], "site.second_motor", path, {"machine", "load", "name"})
        if "machine" not in sm:
            raise CaptureReadError(path, "key site.second_motor.machine", "missing: a machine file or an inline table")
        m2 = (MachineParameters.from_dict(dict(sm["machine"]), f"{path} [site.second_motor.machine]") if isinstance(sm["machine"], dict)
              else load_machine(base / str(sm["machine"])))
        second = SecondMotor(m2, _load_from(sm.get("load"), "site.second_motor.load", path, 120.0 * 60.0 / m2.poles),
                             str(sm.get("name", "second motor")))
    return Site(logger_at=str(st.get("logger_at", "motor")), banks=tuple(banks), second_motor=second, transformer=transformer,
                cable_r_ohm=float(st.get("cable_r_ohm", 0.0)), cable_x_ohm=float(st.get("cable_x_ohm", 0.0)), grounding=grounding)


def load_scenario(path: str | PathLike[str]) -> Scenario:
    """Read a scenario TOML file."""
    p = Path(path)
    data, raw = read_toml(p, "scenario file")
    sc = scenario_from_dict(data, str(p), p.parent)
    return dataclasses.replace(sc, source_sha256=hashlib.sha256(raw).hexdigest())
