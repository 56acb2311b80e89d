"""Recipes: a named chain of stages and their parameters, read from TOML.

A recipe says which stages run on each capture, in which order, and with
which parameters::

    [recipe]
    name = "investigate"
    description = "Every stage, with the HTML report."
    stages = ["import", "measure", "speed", "detect", "thermal", "report"]

    [measure]            # one table per stage, keys = that stage's parameters
    ...

    [batch]              # how a batch run is carried out (not part of the result)
    jobs = 0             # 0 = one worker per CPU core
    scheduler = ""       # Dask scheduler address; "" = local worker processes

The *stage registry* in this module is the one place that lists the stage
names, their settings dataclasses (whose fields give each key's type, default,
meaning and bounds, checked in ``__post_init__``; `waveforms.settings`) and
which earlier stages each needs; validation, ``motor-waveforms recipes`` and
docs/batch.md read it.  Each stage turns its recipe table into arguments and
calls the public library function that owns the work (`waveforms.io.read_capture`;
the step functions of `waveforms.analysis`: `measure_capture`, `estimate_speed`,
`detect_events`, `assess_motor_thermal`, `build_result`;
`waveforms.report.write_report`).  `run_recipe` is the one runner of the
chain: `waveforms.analysis.analyze` is a thin call of the default recipe.

The recipes shipped with the package live in ``waveforms/pipelines_data/``
(``pipelines/`` at the top of the repository holds the same files).

Running a recipe on one capture (`run_recipe`) returns a `RunState` whose
pandas views (`RunState.cycles`, `RunState.events_frame`) suit a notebook.
"""

from __future__ import annotations

import dataclasses
import hashlib
import importlib
import json
import os
import time
import tomllib
from collections.abc import Callable, Mapping, Sequence
from importlib import resources
from pathlib import Path
from typing import Any

from .errors import CaptureReadError, InvalidParameterError
from .settings import check_fields, setting

#: Name of the recipe `analyze` and `motor-waveforms batch` use when none is given.
DEFAULT_RECIPE = "investigate"

#: Package folder holding the shipped recipe files.
PIPELINES_PACKAGE = "waveforms.pipelines_data"


class RecipeError(CaptureReadError):
    """A recipe file is wrong: unknown stage, unknown key, bad value (names file and key)."""


# -- parameters and stages --------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class Param:
    """One key of a stage's recipe table: a field of one of the stage's settings dataclasses.

    Parameters
    ----------
    name : str
        Key in the stage's recipe table (the field's name).
    kind : {"bool", "int", "float", "str", "str_list", "int_list"}
    default : object
        Value recorded when the recipe does not give the key; ``None`` for a
        field of the wrapped library's settings ("its own default").
    doc : str
        Meaning, with the unit in brackets.
    kwarg : str, optional
        Keyword this value is passed on as (the name); ``""`` when the stage uses it itself.
    """

    name: str
    kind: str
    default: Any
    doc: str
    kwarg: str | None = None

    @property
    def target(self) -> str:
        return self.name if self.kwarg is None else self.kwarg


@dataclasses.dataclass
class RunState:
    """What travels from stage to stage for one capture.

    Stages fill the fields they own; the pandas views below are the
    notebook-facing results.
    """

    source: str
    out_dir: Path | None = None
    origin: str = ""
    capture: Any = None
    nameplate: Any = None
    nameplate_source: str = ""
    measurements: Any = None
    speed: Any = None
    events: list[Any] = dataclasses.field(default_factory=list)
    states: Any = None
    timeline: Any = None
    thermal: Any = None
    #: what the ``hookup`` stage found and did (`waveforms.hookup.HookupResult`), None when it did not run
    hookup: Any = None
    quality: list[dict[str, Any]] = dataclasses.field(default_factory=list)
    parameters: dict[str, Any] = dataclasses.field(default_factory=dict)
    #: the settings objects the stages used (DetectParams, ThermalParams, speed options ...), from which
    #: `waveforms.analysis.analysis_parameters` writes ``parameters`` when the result is assembled
    settings: dict[str, Any] = dataclasses.field(default_factory=dict)
    analysis: Any = None
    outputs: dict[str, str] = dataclasses.field(default_factory=dict)
    notes: list[str] = dataclasses.field(default_factory=list)
    timings_s: dict[str, float] = dataclasses.field(default_factory=dict)
    #: threads a stage may use for independent work (blocks, windows); results do not depend on it
    threads: int = 1
    #: the recipe's steps, so that the measure stage's pass can serve the stages after it
    steps: tuple[tuple[str, dict[str, Any]], ...] = ()
    #: the data-quality survey the import stage left to the measure stage's pass (see `_stage_import`)
    pending_quality: Any = None
    #: the broken-sample scan the import stage left to the measure stage's pass (`waveforms.io.masking.BrokenScan`)
    pending_mask: Any = None

    @property
    def verdict(self) -> str:
        """The plain-language verdict paragraph (`waveforms.analysis`), "" before the detect stage."""
        return "" if self.analysis is None else str(self.analysis.verdict)

    @property
    def cycles(self) -> Any:
        """Per-cycle table (`Measurements.cycles`), or None before the measure stage."""
        return None if self.measurements is None else self.measurements.cycles

    def events_frame(self) -> Any:
        """The events table (`waveforms.detect.event.EVENT_COLUMNS`, as events.csv)."""
        from .detect.event import events_frame

        return events_frame(self.events, None if self.capture is None else self.capture.start_time)


StageFunc = Callable[[RunState, dict[str, Any]], None]


@dataclasses.dataclass(frozen=True)
class Stage:
    """A registered stage: a name, its settings and the callable that runs it.

    Parameters
    ----------
    name : str
    description : str
    run : callable ``(state, params) -> None``
        Updates `RunState` in place.  ``params`` holds every key of the stage's
        table (`Stage.params`); `Stage.build` turns it into the settings objects.
    settings : tuple of dataclass types
        The stage's own settings, validated in their ``__post_init__``
        (`waveforms.settings.check_fields`); defaults are recorded in the recipe.
    library_settings : dataclass type, optional
        The wrapped library's settings (`DetectParams`, `SpeedSettings`, ...);
        a key the recipe leaves out is recorded as None, the library's own default.
    needs : tuple of str
        Stages that must come earlier in the recipe.
    library : str
        ``module:name`` the stage wraps (for the listing and the signature check).
    """

    name: str
    description: str
    run: StageFunc
    settings: tuple[type, ...] = ()
    library_settings: type | None = None
    needs: tuple[str, ...] = ()
    library: str = ""

    def _classes(self) -> tuple[type, ...]:
        return self.settings + (() if self.library_settings is None else (self.library_settings,))

    @property
    def params(self) -> tuple[Param, ...]:
        from .settings import field_table

        out = []
        for cls in self._classes():
            lib = cls is self.library_settings
            for f, kind, rule in field_table(cls):
                out.append(Param(f.name, kind, None if lib else f.default, rule.doc or f"see {cls.__module__}.{cls.__name__}",
                                 kwarg=None if rule.forward else ""))
        return tuple(out)

    def param(self, name: str) -> Param:
        for p in self.params:
            if p.name == name:
                return p
        raise KeyError(name)

    def defaults(self) -> dict[str, Any]:
        return {p.name: p.default for p in self.params}

    def build(self, params: Mapping[str, Any]) -> tuple[Any, ...]:
        """The settings objects (`settings`, then `library_settings`) from a table; None = the field's default.

        Raises
        ------
        SettingError
            A field's value is wrong (names the field).
        InvalidParameterError
            A combination the settings class refuses.
        """
        out = []
        for cls in self._classes():
            kw = {f.name: params[f.name] for f in dataclasses.fields(cls) if params.get(f.name) is not None}
            kw = {k: tuple(v) if isinstance(v, list) else v for k, v in kw.items()}
            out.append(cls(**kw))  # each settings class checks its fields in __post_init__
        return tuple(out)


_STAGES: dict[str, Stage] = {}


def register_stage(stage: Stage) -> Stage:
    """Add a stage to the registry (names are unique)."""
    if stage.name in _STAGES:
        raise InvalidParameterError(f"stage {stage.name!r} is registered twice")
    names = [p.name for p in stage.params]
    if len(set(names)) != len(names):
        raise InvalidParameterError(f"stage {stage.name!r} lists a parameter twice")
    _STAGES[stage.name] = stage
    return stage


def stages() -> tuple[Stage, ...]:
    """Registered stages, in registration order (the natural order of a chain)."""
    return tuple(_STAGES.values())


def stage_names() -> tuple[str, ...]:
    return tuple(_STAGES)


def get_stage(name: str) -> Stage:
    if name not in _STAGES:
        raise InvalidParameterError(f"stage {name!r} is not one of {list(_STAGES)}")
    return _STAGES[name]


def library_kwargs(params: Mapping[str, Any], stage: Stage) -> dict[str, Any]:
    """Parameters to pass on to the wrapped library function (None = its own default)."""
    out = {}
    for p in stage.params:
        if p.target and params.get(p.name) is not None:
            out[p.target] = params[p.name]
    return out


# -- recipes ----------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class Recipe:
    """A validated recipe.

    Parameters
    ----------
    name, description : str
    steps : tuple of (stage name, parameters)
        Parameters are complete (defaults filled in) and plain data, so a recipe
        pickles to worker processes and hashes reproducibly.
    batch : dict
        ``jobs`` (int) and ``scheduler`` (str): how a batch run is carried out.
    plugins : tuple of str
        Modules imported before the stages are looked up (they may register
        extra stages with `register_stage`).
    source : str
        File the recipe came from.
    """

    name: str
    description: str
    steps: tuple[tuple[str, dict[str, Any]], ...]
    batch: dict[str, Any]
    plugins: tuple[str, ...] = ()
    source: str = ""

    @property
    def stage_names(self) -> tuple[str, ...]:
        return tuple(n for n, _ in self.steps)

    def params(self, stage: str) -> dict[str, Any]:
        for n, p in self.steps:
            if n == stage:
                return dict(p)
        raise KeyError(stage)

    def fingerprint(self) -> str:
        """Hex SHA-256 of what decides the result: the stages, their parameters, the package version.

        The ``[batch]`` table (jobs, scheduler) and the description do not enter:
        they change how a run is carried out, not what it finds.
        """
        from . import __version__

        doc = {"version": __version__, "plugins": list(self.plugins),
               "steps": [[n, {k: p[k] for k in sorted(p)}] for n, p in self.steps]}
        return hashlib.sha256(json.dumps(doc, sort_keys=True, default=str).encode()).hexdigest()

    def without(self, *names: str) -> Recipe:
        """The same recipe with some stages left out (e.g. ``"report"`` for a notebook)."""
        return dataclasses.replace(self, steps=tuple(s for s in self.steps if s[0] not in names))

    def with_params(self, stage: str, values: Mapping[str, Any]) -> Recipe:
        """The same recipe with some of one stage's parameters changed (checked as in a recipe file).

        Raises
        ------
        RecipeError
            The stage is not in the recipe, or a key or value is wrong.
        """
        if stage not in self.stage_names:
            raise RecipeError(self.source or self.name, f"table [{stage}]",
                              f"stage {stage!r} is not in recipe.stages {list(self.stage_names)}")
        spec = get_stage(stage)
        _known_keys(values, spec.params, stage, self.source or self.name)
        full = _check_table({**self.params(stage), **values}, spec, stage, self.source or self.name)
        steps = tuple((n, full if n == stage else p) for n, p in self.steps)
        return dataclasses.replace(self, steps=steps)


@dataclasses.dataclass(frozen=True)
class BatchSettings:
    """How a batch run is carried out (the recipe's ``[batch]`` table; not part of the result)."""

    jobs: int = setting(0, "worker processes; 0 = one per CPU core", minimum=0)
    scheduler: str = setting("", "Dask distributed scheduler address (tcp://host:8786); empty = local processes")

    def __post_init__(self) -> None:
        check_fields(self)


_BATCH = Stage(name="batch", description="how a batch run is carried out", run=lambda state, params: None,
               settings=(BatchSettings,))
_RECIPE_KEYS = ("name", "description", "stages", "plugins")


def parse_recipe(data: Mapping[str, Any], source: str = "<recipe>") -> Recipe:
    """Validate a recipe mapping (as read from TOML) and fill in every default.

    Raises
    ------
    RecipeError
        Naming ``source`` and the offending key: unknown stage, stage out of
        order, unknown parameter, wrong type or out-of-range value.
    """
    if "recipe" not in data or not isinstance(data["recipe"], dict):
        raise RecipeError(source, "table [recipe]", "missing; a recipe starts with [recipe] holding name and stages")
    head = data["recipe"]
    for key in head:
        if key not in _RECIPE_KEYS:
            raise RecipeError(source, f"key recipe.{key}", f"unknown key; known keys: {list(_RECIPE_KEYS)}")
    name = head.get("name")
    if not isinstance(name, str) or not name.strip():
        raise RecipeError(source, "key recipe.name", "missing or empty; give the recipe a name")
    description = head.get("description", "")
    if not isinstance(description, str):
        raise RecipeError(source, "key recipe.description", f"{description!r} must be a string")
    plugins = head.get("plugins", [])
    if not isinstance(plugins, list) or not all(isinstance(p, str) for p in plugins):
        raise RecipeError(source, "key recipe.plugins", f"{plugins!r} must be a list of module names")
    for i, mod in enumerate(plugins):
        try:
            importlib.import_module(mod)
        except ImportError as e:
            raise RecipeError(source, f"key recipe.plugins[{i}]", f"module {mod!r} cannot be imported ({e})") from None
    names = head.get("stages")
    if not isinstance(names, list) or not names or not all(isinstance(n, str) for n in names):
        raise RecipeError(source, "key recipe.stages", "must be a non-empty list of stage names, "
                          f"from {list(stage_names())}")
    seen: list[str] = []
    for i, n in enumerate(names):
        if n not in _STAGES:
            raise RecipeError(source, f"key recipe.stages[{i}]", f"unknown stage {n!r}; known stages: {list(stage_names())}")
        if n in seen:
            raise RecipeError(source, f"key recipe.stages[{i}]", f"stage {n!r} is listed twice")
        missing = [m for m in _STAGES[n].needs if m not in seen]
        if missing:
            raise RecipeError(source, f"key recipe.stages[{i}]", f"stage {n!r} needs {missing} earlier in the chain")
        seen.append(n)
    for key in data:
        if key in ("recipe", "batch"):
            continue
        if key not in _STAGES:
            raise RecipeError(source, f"table [{key}]", f"unknown stage {key!r}; known stages: {list(stage_names())}")
        if key not in seen:
            raise RecipeError(source, f"table [{key}]", f"parameters for stage {key!r}, which is not in recipe.stages")
    steps = []
    for n in seen:
        stage = _STAGES[n]
        table = data.get(n, {})
        if not isinstance(table, dict):
            raise RecipeError(source, f"key {n}", "must be a table of parameters")
        _known_keys(table, stage.params, n, source)
        steps.append((n, _check_table(table, stage, n, source)))
    batch_table = data.get("batch", {})
    if not isinstance(batch_table, dict):
        raise RecipeError(source, "key batch", "must be a table")
    _known_keys(batch_table, _BATCH.params, "batch", source)
    batch = _check_table(batch_table, _BATCH, "batch", source)
    return Recipe(name=name.strip(), description=description.strip(), steps=tuple(steps), batch=batch,
                  plugins=tuple(plugins), source=source)


def _known_keys(table: Mapping[str, Any], params: Sequence[Param], prefix: str, source: str) -> None:
    known = {p.name for p in params}
    for key in table:
        if key not in known:
            hint = f"known keys: {sorted(known)}" if known else "this stage takes no parameters"
            raise RecipeError(source, f"key {prefix}.{key}", f"unknown parameter; {hint}")


def _check_table(table: Mapping[str, Any], stage: Stage, prefix: str, source: str) -> dict[str, Any]:
    """Every key of the stage's table, defaults filled in, checked by building the stage's settings objects."""
    from .settings import SettingError

    full = {p.name: table.get(p.name, p.default) for p in stage.params}
    try:
        stage.build(full)
    except SettingError as e:
        raise RecipeError(source, f"key {prefix}.{e.field}", e.problem) from None
    except InvalidParameterError as e:
        raise RecipeError(source, f"table [{prefix}]", str(e)) from None
    return full


def load_recipe(name_or_path: str | os.PathLike[str] | Recipe | None = None) -> Recipe:
    """A recipe by shipped name (``"investigate"``, ``"triage"``) or by file path.

    ``None`` gives the default recipe; a `Recipe` is returned as it is.
    """
    if isinstance(name_or_path, Recipe):
        return name_or_path
    if name_or_path is None:
        name_or_path = DEFAULT_RECIPE
    text = os.fspath(name_or_path)
    path = Path(text)
    if path.suffix.lower() == ".toml" or path.exists() or os.sep in text:
        return _load_file(path)
    shipped = shipped_recipes()
    if text not in shipped:
        raise RecipeError(text, "", f"no such recipe file, and not a shipped recipe name ({sorted(shipped)})")
    return _load_file(shipped[text])


def _load_file(path: Path) -> Recipe:
    try:
        with open(path, "rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise RecipeError(path, "", "recipe file not found") from None
    except IsADirectoryError:
        raise RecipeError(path, "", "is a folder, not a recipe file") from None
    except tomllib.TOMLDecodeError as e:
        raise RecipeError(path, "", f"not valid TOML ({e})") from None
    return parse_recipe(data, str(path))


def shipped_recipes() -> dict[str, Path]:
    """Recipe name -> file, for the recipes installed with the package."""
    folder = resources.files(PIPELINES_PACKAGE)
    out = {}
    for entry in folder.iterdir():
        if entry.name.endswith(".toml"):
            out[entry.name[: -len(".toml")]] = Path(str(entry))
    return dict(sorted(out.items()))


def default_recipe() -> Recipe:
    return load_recipe(DEFAULT_RECIPE)


# -- running --------------------------------------------------------------------
def run_recipe(
    recipe: Recipe | str | os.PathLike[str] | None,
    capture: Any,
    nameplate: Any = None,
    out_dir: str | os.PathLike[str] | None = None,
    nameplate_source: str = "",
    origin: str = "",
    threads: int = 1,
    pending_mask: Any = None,
) -> RunState:
    """Run a recipe's chain on one capture.

    Parameters
    ----------
    recipe : Recipe, shipped name, path or None (default recipe)
    capture : path-like or Capture
        A file (read by the ``import`` stage) or an already built `Capture`
        (the ``import`` stage then only attaches the nameplate).
    nameplate : Nameplate, path-like or None
        Overrides a nameplate stored in the capture.
    out_dir : path-like, optional
        Folder for the per-capture outputs (the ``report`` stage writes nothing
        without one).
    nameplate_source : str
        Where the nameplate came from (for the summary).
    origin : str
        The capture's name as the user gave it (an fsspec URL read through a
        local copy); recorded as the capture's source path.
    threads : int
        Threads for independent work inside the stages (measurement blocks,
        speed windows); the results are the same for any value.
    pending_mask : BrokenScan, optional
        When ``capture`` was opened unmasked and wrapped by
        `waveforms.io.masking.defer_masking`: its scan, carried by the measure
        stage's pass (one pass over the samples).

    Returns
    -------
    RunState
        ``state.cycles`` (DataFrame), ``state.speed`` (DataFrame),
        ``state.events_frame()``, ``state.analysis`` and ``state.outputs``.

    Raises
    ------
    WaveformsError
        The first stage error, as raised (file, place and problem).
    """
    rec = load_recipe(recipe)
    for mod in rec.plugins:
        importlib.import_module(mod)
    from .capture import Capture

    if not isinstance(capture, Capture) and "import" in rec.stage_names:
        from .io.trend import is_trend_log

        if is_trend_log(os.fspath(capture)):  # an RMS trend log, recognised by its columns (docs/trends.md)
            from .trends.stages import trend_recipe_for

            rec = trend_recipe_for(rec)

    if isinstance(capture, Capture):
        state = RunState(source=capture.provenance.source_path or "<capture>", capture=capture)
    else:
        state = RunState(source=os.fspath(capture))
    if nameplate is not None:
        if not hasattr(nameplate, "fla_a"):
            from .motor.nameplate import load_nameplate

            nameplate_source = nameplate_source or os.fspath(nameplate)
            nameplate = load_nameplate(nameplate)
        state.nameplate = nameplate
        state.nameplate_source = nameplate_source or "given"
    state.out_dir = None if out_dir is None else Path(out_dir)
    state.origin = origin
    state.pending_mask = pending_mask
    state.threads = max(1, int(threads))
    state.steps = rec.steps
    for name, params in rec.steps:
        stage = get_stage(name)
        if name == "report" and state.states is not None:
            _assemble_analysis(state)  # the report is written from the assembled result
        t0 = time.perf_counter()
        stage.run(state, dict(params))
        state.timings_s[name] = time.perf_counter() - t0
        from .heap import trim

        trim()  # what the stage freed goes back to the system: the resident peak follows what is kept (issue 10)
    if state.states is not None:  # the detect stage has run
        _assemble_analysis(state)
    return state


def _assemble_analysis(state: RunState) -> None:
    """Build the `AnalysisResult` (verdict included) from the stages run so far, as `analyze` does."""
    from .analysis import analysis_parameters, build_result

    st = state.settings
    state.parameters = analysis_parameters(
        state.capture, detect_params=st.get("detect"), thermal_params=st.get("thermal"),
        speed_options=st.get("speed"), speed_enabled=st.get("speed_enabled", False),
        detectors=st.get("detectors"), measure_options=st.get("measure"),
    )
    state.analysis = build_result(
        state.capture, state.nameplate, state.measurements, speed=state.speed, events=state.events,
        thermal=state.thermal, states=state.states, timeline=state.timeline, notes=state.notes,
        quality=state.quality, parameters=state.parameters, timings_s=state.timings_s, hookup=state.hookup,
    )


# -- the built-in stages -------------------------------------------------------------
# Each stage turns its table into arguments for the library function that owns the work and
# stores the outputs on `RunState`; it holds no rule of its own.
def _known_format(value: str) -> str | None:
    from .io import importer_names

    names = importer_names()
    return None if value == "" or value in names else f"{value!r} is not an importer; known: {list(names)}"


@dataclasses.dataclass(frozen=True)
class ImportSettings:
    """The ``import`` stage: how the capture file is read."""

    format: str = setting("", "importer name; empty = recognise the file by its content", check=_known_format, forward=False)
    nominal_frequency_hz: float | None = setting(
        None, "declared system frequency, 50 or 60 [Hz]; absent = from the file or inferred", choices=(50.0, 60.0, 50, 60),
        forward=False)
    nominal_voltage_v: float | None = setting(None, "declared line-to-line voltage [V]; absent = from the file",
                                              minimum=0.0, forward=False)
    wiring: str = setting("", "'3-wire' or '4-wire'; empty = from the file", choices=("", "3-wire", "4-wire"), forward=False)
    currents: str = setting("", "what the current channels Ia, Ib, Ic measure: 'winding' = the windings A-B, B-C, C-A of a delta "
                                "motor (six-lead hook-up, waveforms.winding); empty = as the file says", choices=("", "line", "winding"),
                            forward=False)
    quality: bool = setting(True, "gather data-quality notes (clipping, flat or dead channels, gaps; from the measure stage's pass when one follows)",
                            forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


def _stage_import(state: RunState, params: dict[str, Any]) -> None:
    from .io import ReadOptions

    (s,) = get_stage("import").build(params)
    if state.capture is None:
        opts = ReadOptions(nominal_frequency_hz=s.nominal_frequency_hz, nominal_voltage_v=s.nominal_voltage_v,
                           wiring=s.wiring or None)
        from .io.csv_stream import open_capture

        # a large CSV is streamed; the broken-sample scan rides on the measure stage's pass when one follows
        defer = "measure" in _later_stages(state, "import")
        state.capture = open_capture(state.source, s.format or None, opts, mask=not defer)
        if defer:
            from .io.masking import defer_masking

            state.capture, state.pending_mask = defer_masking(state.capture, str(Path(state.source)))
        if state.origin:  # read through a local copy: the provenance names the original
            prov = dataclasses.replace(state.capture.provenance, source_path=state.origin)
            state.capture = state.capture.replace(provenance=prov)
    if state.nameplate is not None:
        state.capture = state.capture.replace(nameplate=state.nameplate)
    elif state.capture.nameplate is not None:
        state.nameplate = state.capture.nameplate
        state.nameplate_source = "stored in the capture"
    from .analysis import nameplate_notes

    state.notes.extend(nameplate_notes(state.nameplate))
    from .winding import declare_windings, line_currents_from_windings  # six-lead hook-up: windings -> line currents

    if s.currents == "winding":
        state.capture = declare_windings(state.capture)
    plate = state.nameplate
    conn = None if plate is None or any(w.startswith("connection not given") for w in plate.warnings) else plate.connection
    state.capture, wnotes = line_currents_from_windings(state.capture, conn)
    state.notes.extend(wnotes)
    if s.quality:
        from .quality import StatsAccumulator, quality_notes

        if "measure" in _later_stages(state, "import"):
            # one pass over the samples: the measure stage feeds the survey the blocks it measures
            state.pending_quality = StatsAccumulator(state.capture)
            return
        t0 = time.perf_counter()
        state.quality = quality_notes(state.capture)
        state.timings_s["quality"] = time.perf_counter() - t0  # part of the import stage's time


def _later_stages(state: RunState, name: str) -> dict[str, dict[str, Any]]:
    """The steps after stage ``name`` in the running recipe (stage name -> its parameters)."""
    names = [n for n, _ in state.steps]
    if name not in names:
        return {}
    return {n: p for n, p in state.steps[names.index(name) + 1:]}


def _speed_options(params: dict[str, Any]) -> tuple[Any, dict[str, Any]]:
    """The speed stage's own settings and the speed-track keyword arguments its recipe table gives."""
    own, _ = get_stage("speed").build(params)
    # absent window_s: `analysis.default_speed_window_s`
    return own, {k: (tuple(v) if isinstance(v, list) else v) for k, v in library_kwargs(params, get_stage("speed")).items()}


@dataclasses.dataclass(frozen=True)
class MeasureSettings:
    """The ``measure`` stage: keyword arguments of `waveforms.measure.measure` (absent = its default)."""

    chunk_samples: int | None = setting(None, "samples per processing block (bounds memory; results do not depend on it) [samples]",
                                        minimum=4096)
    overlap_cycles: int | None = setting(None, "nominal cycles of overlap between blocks (at least 20) [cycles]", minimum=20)
    harmonics: bool | None = setting(None, "keep the 10/12-cycle harmonic table (no finding uses it; false saves time and memory); "
                                           "absent = kept")

    def __post_init__(self) -> None:
        check_fields(self)


def _stage_measure(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import measure_capture

    kw = library_kwargs(params, get_stage("measure"))
    # the record (result.json parameters) leaves out `harmonics`: it changes what is kept, never a finding
    state.settings["measure"] = {k: v for k, v in kw.items() if k != "harmonics"}
    run_kw: dict[str, Any] = {**kw, "threads": state.threads}
    acc = state.pending_quality
    if acc is not None and acc.capture.channels != state.capture.channels:
        # the hook-up check derived a channel (two-CT, open delta): survey the channels the pass reads
        from .quality import StatsAccumulator

        acc = state.pending_quality = StatsAccumulator(state.capture)
    scan = state.pending_mask
    if scan is not None and not scan.fits(state.capture):
        scan.run()  # the hook-up check transformed the channels: the scan reads the imported samples itself
    feeds = [f.feed for f in (scan if scan is not None and scan.fits(state.capture) else None, acc) if f is not None]
    if len(feeds) == 1:
        run_kw["feed"] = feeds[0]
    elif feeds:
        def feed(x: Any) -> None:
            for f in feeds:
                f(x)

        run_kw["feed"] = feed
    dec = _speed_decimator(state)
    if dec is not None:
        run_kw["decimator"] = dec
    state.measurements = measure_capture(state.capture, run_kw)
    if scan is not None:  # the broken stretches the pass found, listed as gaps with their note (as at import)
        state.capture = scan.apply(state.capture)
        state.pending_mask = None
    from .analysis import gate_measurements

    state.notes.extend(gate_measurements(state.capture, state.measurements, state.nameplate))  # issue 18: level gate
    from .analysis import frequency_checks

    state.capture, fq_quality, fq_notes = frequency_checks(state.capture, state.measurements, state.nameplate)
    state.notes.extend(fq_notes)
    if dec is not None and state.measurements.decimated is not None:
        from .speed.estimator import DecimatedCurrent

        names = tuple(state.capture.channels[r].name for r in dec.rows)
        state.measurements.decimated = DecimatedCurrent(state.measurements.decimated, dec.q, dec.use_sv, names)
    if acc is not None:
        from .quality import quality_notes

        t0 = time.perf_counter()
        # the survey's notes first; keep what stages between import and measure added (the hook-up check)
        state.quality = [*quality_notes(state.capture, acc.records()), *state.quality]
        state.pending_quality = None
        state.timings_s["quality"] = time.perf_counter() - t0  # the notes only: the survey rode on the measure pass
    state.quality = [*state.quality, *fq_quality]  # issue 18: frequency band, off-nominal, nameplate frequency


def _speed_decimator(state: RunState) -> Any:
    """The decimator of the speed stage that follows, for the measure stage's pass (None when none runs)."""
    later = _later_stages(state, "measure")
    if "speed" not in later:
        return None
    own, opts = _speed_options(dict(later["speed"]))
    if not own.enabled:
        return None
    from .analysis import resolve_speed_options
    from .speed.estimator import speed_decimator

    opts = resolve_speed_options(state.capture, opts)
    if state.nameplate is None and opts.get("pole_pairs") is None:
        return None
    return speed_decimator(state.capture, state.nameplate, **opts)


@dataclasses.dataclass(frozen=True)
class SpeedStageSettings:
    """The ``speed`` stage's own keys (beside every field of `SpeedSettings`)."""

    enabled: bool = setting(True, "estimate the speed; false = leave the speed track empty", forward=False)
    pole_pairs: int | None = setting(None, "override the nameplate's pole pairs [-]", minimum=1)
    rotor_bars: int | None = setting(None, "override the nameplate's rotor bar count [-]", minimum=4)

    def __post_init__(self) -> None:
        check_fields(self)


def _stage_speed(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import estimate_speed

    own, opts = _speed_options(params)
    state.settings["speed"] = opts
    state.settings["speed_enabled"] = bool(own.enabled)
    if not own.enabled:
        return
    run = dict(opts, threads=state.threads)
    dec = getattr(state.measurements, "decimated", None)
    if dec is not None:  # made by the measure stage's pass: the capture is not read again
        run["decimated"] = dec
    state.speed, notes = estimate_speed(state.capture, state.cycles, state.nameplate, run)
    state.notes.extend(notes)


def _known_detectors(value: tuple[str, ...]) -> str | None:
    from .detect import detector_names

    names = detector_names()
    bad = [v for v in value if v not in names]
    return f"{bad[0]!r} is not a detector; known: {list(names)}" if bad else None


@dataclasses.dataclass(frozen=True)
class DetectorChoice:
    """The ``detect`` stage's own key (beside every field of `DetectParams`)."""

    detectors: tuple[str, ...] | None = setting(
        None, "detectors to report; absent = all (what a named one needs runs for it)", check=_known_detectors, forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


def _stage_detect(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import detect_events

    choice, dparams = get_stage("detect").build(params)
    state.events, state.states, state.timeline, notes = detect_events(
        state.capture, state.measurements, state.speed, state.nameplate, dparams, choice.detectors)
    if state.hookup is not None:  # lines relabelled for the supply's rotation are named as labelled in the file
        from .hookup.stage import as_labelled, dead_lead_events

        state.events = as_labelled(state.events, state.hookup)
        state.events, dead_notes = dead_lead_events(state.events, state.hookup)  # as recorded: a dead lead is no dip
        state.notes.extend(dead_notes)
    state.notes.extend(notes)
    from .clipping import drop_clipped_events  # a clipped voltage is no dip (issue 20)

    state.events, clip_quality, clip_notes = drop_clipped_events(state.capture, state.cycles, state.events)
    state.quality = [*(state.quality or []), *clip_quality]
    state.notes.extend(clip_notes)
    from .analysis import orient_rotation  # direction of rotation per speed window and period (issue 12)

    state.speed, state.timeline, notes = orient_rotation(state.cycles, state.speed, state.events, state.timeline)
    state.notes.extend(notes)
    state.settings["detect"] = dparams
    state.settings["detectors"] = choice.detectors


def _motor_cycles(state: RunState) -> tuple[Any, list[str]]:
    """The per-cycle currents the thermal model judges: the motor's, not a feeder's (`waveforms.motor.branch`).

    When an open phase below the logger left other equipment's current on the open line (the logger sees a
    feeder), the motor's branch current is inferred by Kirchhoff; if that fails the thermal figures are not
    assessed for the motor, rather than the feeder's current judged against the motor's FLA.
    """
    feeder = [e for e in state.events if e.kind == "open_phase" and "branch_inferred" in e.figures
              and e.figures.get("location") == "downstream" and "winding_current_pattern" not in e.figures]
    if not feeder or state.cycles is None or state.nameplate is None:
        return state.cycles, []
    from .motor.branch import motor_branch_cycles

    e = feeder[0]
    got = motor_branch_cycles(state.cycles, e.phase or "", e.start_s, e.end_s,
                              float(e.figures.get("inferred_branch_current_a", float("nan"))))
    if got is None:
        return None, [f"thermal: not assessed for the motor: the logger sees a feeder (other equipment's "
                      f"{e.figures.get('remaining_current_a', float('nan')):.1f} A on line {e.phase} after the onset) and "
                      "the motor's own current could not be inferred; the logged current is not the motor's"]
    cycles, figs = got
    return cycles, [f"thermal: on the motor's branch current inferred by Kirchhoff's current law (logged current less the "
                    f"other equipment's current: {figs['other_load_a']:.1f} A on line {e.phase} after the onset, its "
                    f"main sequence component held from before, the other read on line {e.phase}; the motor drew "
                    f"{figs['motor_before_a']:.1f} A before it): the logger sees "
                    "a feeder, not the motor alone" + (
                        "; another motor on the feeder answers the new voltage unbalance with its own negative-sequence "
                        "current, which this inference partly takes out of the motor's: the motor's figures may read "
                        "about 10 % low (simulated check, tests/test_motor_branch.py)"
                        if str(e.figures.get("remaining_load", "")).startswith("inductive") else "")]


def _stage_thermal(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import assess_motor_thermal

    (tparams,) = get_stage("thermal").build(params)
    state.settings["thermal"] = tparams
    from .segments import gap_spans_s

    cycles, notes = _motor_cycles(state)
    state.thermal, tnotes = assess_motor_thermal(cycles, state.nameplate, tparams, state.states,
                                                 gap_spans_s=gap_spans_s(state.capture))
    notes = notes + tnotes
    if state.thermal is not None and state.hookup is not None and state.hookup.relabelled:
        # per-line figures named as labelled in the file, as the events are (waveforms.hookup.stage.as_labelled)
        lines = state.thermal.summary["lines"]
        state.thermal.summary["lines"] = {state.hookup.labelled(k): v for k, v in lines.items()}
    state.notes.extend(notes)


@dataclasses.dataclass(frozen=True)
class ReportSettings:
    """The ``report`` stage: which per-capture files are written."""

    html: bool = setting(True, "write report.html (plots and the event list)")
    cycles: str = setting("parquet", "per-cycle table file: 'parquet', 'csv' or 'none'", choices=("parquet", "csv", "none"),
                          forward=False)

    def __post_init__(self) -> None:
        check_fields(self)


def _stage_report(state: RunState, params: dict[str, Any]) -> None:
    """result.json, events.csv and (optionally) report.html via `waveforms.report`, plus the cycle table."""
    if state.out_dir is None:
        state.notes.append("report: nothing written (no output folder)")
        return
    from .atomic import atomic_path

    (s,) = get_stage("report").build(params)
    out = state.out_dir
    out.mkdir(parents=True, exist_ok=True)
    if state.analysis is not None:
        from .report import write_report

        written = write_report(state.analysis, out, html=s.html)
        for name, path in written.items():
            state.outputs[{"report.html": "html", "result.json": "json", "events.csv": "events_csv"}.get(name, name)] = str(path)
    cyc = state.cycles
    if s.cycles != "none" and cyc is not None:
        target = out / f"cycles.{s.cycles}"
        with atomic_path(target) as tmp:
            if s.cycles == "csv":
                cyc.to_csv(tmp, index=False)
            else:
                cyc.to_parquet(tmp, index=False)
        state.outputs["cycles"] = str(target)


def _register_builtin() -> None:
    from .detect import DetectParams
    from .motor.thermal import ThermalParams
    from .speed.estimator import SpeedSettings

    register_stage(Stage(
        name="import", description="read the capture file (format recognised unless given) and attach the nameplate",
        run=_stage_import, settings=(ImportSettings,), library="waveforms.io:read_capture",
    ))
    from .hookup.stage import register_hookup_stage

    register_hookup_stage()
    register_stage(Stage(
        name="measure", description="per-cycle phasors, RMS, sequence components, unbalance, power; Urms(1/2); harmonics",
        run=_stage_measure, settings=(MeasureSettings,), needs=("import",), library="waveforms.measure:measure",
    ))
    register_stage(Stage(
        name="speed", description="rotor speed and slip from the current spectrum (needs the nameplate's poles)",
        run=_stage_speed, settings=(SpeedStageSettings,), library_settings=SpeedSettings,
        needs=("import",), library="waveforms.speed:track_speed",
    ))
    register_stage(Stage(
        name="detect", description="events: open phase, stall, start, dip, swell, interruption, unbalance",
        run=_stage_detect, settings=(DetectorChoice,), library_settings=DetectParams,
        needs=("import", "measure"), library="waveforms.detect:run_detectors",
    ))
    register_stage(Stage(
        name="thermal",
        description="thermal capacity used and overload-relay trips, from the per-cycle currents and the nameplate",
        run=_stage_thermal, library_settings=ThermalParams,
        needs=("import", "measure"), library="waveforms.motor.thermal:assess_thermal",
    ))
    register_stage(Stage(
        name="report", description="per-capture outputs: result.json, events.csv, report.html (after detect), the cycle table",
        run=_stage_report, settings=(ReportSettings,), needs=("import",), library="waveforms.report:write_report",
    ))
    from .trends.stages import register_trend_stages

    register_trend_stages()  # the trend recipe's stages (docs/trends.md)


_register_builtin()
