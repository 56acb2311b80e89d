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
names, their parameters (type, default, meaning) and which earlier stages each
needs; validation, ``motor-waveforms recipes`` and docs/batch.md read it.  Each stage
turns its recipe table into arguments and calls the public library function
that owns the work (`waveforms.io.read_capture`; the step functions of
`waveforms.analysis`: `measure_capture`, `estimate_speed`, `detect_events`,
`assess_motor_thermal`, `build_result`; `waveforms.report.write_report`).  A
stage holds no rule of its own: the same functions make `waveforms.analysis.analyze`.

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
import re
import time
import tomllib
from collections.abc import Callable, Mapping, Sequence
from importlib import resources
from pathlib import Path
from typing import Any

from .errors import CaptureReadError, InvalidParameterError

#: Name of the recipe `analyze` and `motor-waveforms batch` use when none is given.
DEFAULT_RECIPE = "investigate"

#: Package folder holding the shipped recipe files.
PIPELINES_PACKAGE = "waveforms.pipelines_data"


class RecipeError(CaptureReadError):
    """A recipe file is wrong: unknown stage, unknown key, bad value (names file and key)."""


# -- parameters and stages --------------------------------------------------------
_KINDS = ("bool", "int", "float", "str", "str_list", "int_list")


@dataclasses.dataclass(frozen=True)
class Param:
    """One parameter of a stage.

    Parameters
    ----------
    name : str
        Key in the stage's recipe table.
    kind : {"bool", "int", "float", "str", "str_list", "int_list"}
    default : object
        Value when the recipe does not give the key.  ``None`` means "left to the
        library function's own default" (the key is then not passed on).
    doc : str
        Meaning, with the unit in brackets.
    choices : tuple, optional
        Allowed values.
    minimum, maximum : float, optional
        Inclusive bounds for numbers.
    kwarg : str, optional
        Keyword of the wrapped library function this value is passed as
        (default: ``name``); ``""`` when the stage uses the value itself.
    validate : callable, optional
        Extra check ``value -> problem or None`` (e.g. against a registry).
    """

    name: str
    kind: str
    default: Any
    doc: str
    choices: tuple[Any, ...] | None = None
    minimum: float | None = None
    maximum: float | None = None
    kwarg: str | None = None
    validate: Callable[[Any], str | None] | None = None

    def __post_init__(self) -> None:
        if self.kind not in _KINDS:
            raise InvalidParameterError(f"parameter {self.name!r}: kind={self.kind!r} must be one of {_KINDS}")

    @property
    def target(self) -> str:
        return self.name if self.kwarg is None else self.kwarg

    def check(self, value: Any) -> str | None:
        """Problem with ``value`` in plain words, or None when it is acceptable."""
        k = self.kind
        if k == "bool":
            ok = isinstance(value, bool)
        elif k == "int":
            ok = isinstance(value, int) and not isinstance(value, bool)
        elif k == "float":
            ok = isinstance(value, (int, float)) and not isinstance(value, bool)
        elif k == "str":
            ok = isinstance(value, str)
        elif k == "str_list":
            ok = isinstance(value, list) and all(isinstance(v, str) for v in value)
        else:
            ok = isinstance(value, list) and all(isinstance(v, int) and not isinstance(v, bool) for v in value)
        if not ok:
            want = {"bool": "true or false", "int": "a whole number", "float": "a number",
                    "str": "a string", "str_list": "a list of strings", "int_list": "a list of whole numbers"}[k]
            return f"{value!r} must be {want}"
        if self.choices is not None:
            items = value if k.endswith("_list") else [value]
            bad = [v for v in items if v not in self.choices]
            if bad:
                return f"{bad[0]!r} is not one of {list(self.choices)}"
        if k in ("int", "float"):
            if value != value:  # NaN
                return "NaN is not allowed"
            if self.minimum is not None and value < self.minimum:
                return f"{value!r} is below the minimum {self.minimum:g}"
            if self.maximum is not None and value > self.maximum:
                return f"{value!r} is above the maximum {self.maximum:g}"
        if self.validate is not None:
            return self.validate(value)
        return None


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
    quality: list[dict[str, Any]] = dataclasses.field(default_factory=list)
    parameters: dict[str, Any] = dataclasses.field(default_factory=dict)
    #: the settings objects the stages used (DetectParams, ThermalParams, speed options ...), from which
    #: `waveforms.analysis.analysis_parameters` writes ``parameters`` when the result is assembled
    settings: dict[str, Any] = dataclasses.field(default_factory=dict)
    analysis: Any = None
    outputs: dict[str, str] = dataclasses.field(default_factory=dict)
    notes: list[str] = dataclasses.field(default_factory=list)
    timings_s: dict[str, float] = dataclasses.field(default_factory=dict)

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
    """A registered stage: a name, its parameters and the callable that runs it.

    Parameters
    ----------
    name : str
    description : str
    run : callable ``(state, params) -> None``
        Updates `RunState` in place.  ``params`` holds every parameter, defaults
        filled in.
    params : tuple of Param
    needs : tuple of str
        Stages that must come earlier in the recipe.
    library : str
        ``module:name`` the stage wraps (for the listing and the signature check).
    check : callable, optional
        ``params -> None`` that raises `InvalidParameterError` for a combination
        the wrapped library rejects (run when the recipe is loaded).
    """

    name: str
    description: str
    run: StageFunc
    params: tuple[Param, ...] = ()
    needs: tuple[str, ...] = ()
    library: str = ""
    check: Callable[[dict[str, Any]], None] | None = None

    def param(self, name: str) -> Param:
        for p in self.params:
            if p.name == name:
                return p
        raise KeyError(name)

    def defaults(self) -> dict[str, Any]:
        return {p.name: p.default for p in self.params}


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
        _check_table(values, spec.params, stage, self.source or self.name)  # the new values only
        full = {**self.params(stage), **values}
        if spec.check is not None:
            try:
                spec.check(full)
            except InvalidParameterError as e:
                raise RecipeError(self.source or self.name, f"table [{stage}]", str(e)) from None
        steps = tuple((n, full if n == stage else p) for n, p in self.steps)
        return dataclasses.replace(self, steps=steps)


_BATCH_PARAMS = (
    Param("jobs", "int", 0, "worker processes; 0 = one per CPU core", minimum=0),
    Param("scheduler", "str", "", "Dask distributed scheduler address (tcp://host:8786); empty = local processes"),
)
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
        full = _check_table(table, stage.params, n, source)
        if stage.check is not None:
            try:
                stage.check(full)
            except InvalidParameterError as e:
                raise RecipeError(source, f"table [{n}]", str(e)) from None
        steps.append((n, full))
    batch_table = data.get("batch", {})
    if not isinstance(batch_table, dict):
        raise RecipeError(source, "key batch", "must be a table")
    batch = _check_table(batch_table, _BATCH_PARAMS, "batch", source)
    return Recipe(name=name.strip(), description=description.strip(), steps=tuple(steps), batch=batch,
                  plugins=tuple(plugins), source=source)


def _check_table(table: Mapping[str, Any], params: Sequence[Param], prefix: str, source: str) -> dict[str, Any]:
    known = {p.name: p for p in params}
    for key, value in table.items():
        if key not in known:
            hint = f"known keys: {sorted(known)}" if known else "this stage takes no parameters"
            raise RecipeError(source, f"key {prefix}.{key}", f"unknown parameter; {hint}")
        problem = known[key].check(value)
        if problem:
            raise RecipeError(source, f"key {prefix}.{key}", problem)
    return {p.name: table.get(p.name, p.default) for p in params}


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
    for name, params in rec.steps:
        stage = get_stage(name)
        if name == "report" and state.states is not None:
            _assemble_analysis(state)  # the report is written from the assembled result
        t0 = time.perf_counter()
        stage.run(state, dict(params))
        state.timings_s[name] = time.perf_counter() - t0
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
        quality=state.quality, parameters=state.parameters, timings_s=state.timings_s,
    )


# -- parameters taken from a library's settings dataclass ---------------------------
def _numpydoc_params(doc: str | None) -> dict[str, str]:
    """``name -> description`` from a numpydoc Parameters section (``a, b : float`` lines shared)."""
    out: dict[str, str] = {}
    if not doc:
        return out
    lines = doc.expandtabs().splitlines()
    try:
        start = next(i for i, ln in enumerate(lines) if ln.strip() == "Parameters") + 2
    except StopIteration:
        return out
    names: list[str] = []
    indent = None
    for ln in lines[start:]:
        if not ln.strip():
            continue
        ind = len(ln) - len(ln.lstrip())
        if indent is None:
            indent = ind
        if ind < indent or (ind == indent and set(ln.strip()) <= set("-")):
            break
        if ind == indent:
            if ln.strip().endswith("----"):
                break
            names = [n.strip() for n in ln.split(":")[0].split(",")]
            for n in names:
                out[n] = ""
        else:
            for n in names:
                out[n] = (out[n] + " " + ln.strip()).strip()
    return out


def _kind_of(annotation: Any, default: Any) -> str:
    text = annotation if isinstance(annotation, str) else getattr(annotation, "__name__", str(annotation))
    if "tuple[int" in text or "list[int" in text:
        return "int_list"
    if "tuple[str" in text or "list[str" in text:
        return "str_list"
    for k in ("bool", "int", "float", "str"):
        if re.search(rf"\b{k}\b", text):
            return k
    return {bool: "bool", int: "int", float: "float", str: "str"}.get(type(default), "str")


def params_from_dataclass(cls: type, exclude: Sequence[str] = (), prefix_doc: str = "",
                          overrides: Mapping[str, Mapping[str, Any]] | None = None) -> tuple[Param, ...]:
    """Stage parameters mirroring a library's frozen settings dataclass.

    Each field becomes a `Param` of the same name, kind from its annotation,
    description from the class's numpydoc Parameters section; the default is
    ``None`` (= the dataclass's own default, so the library stays the one place
    that fixes it).  ``overrides`` adds checks the dataclass does not make
    itself (``{"trip_classes": {"choices": (...)}}``).
    """
    docs = _numpydoc_params(cls.__doc__)
    out = []
    for f in dataclasses.fields(cls):
        if f.name in exclude:
            continue
        default = f.default if f.default is not dataclasses.MISSING else None
        extra = dict((overrides or {}).get(f.name, {}))
        out.append(Param(f.name, _kind_of(f.type, default), None,
                         (prefix_doc + docs.get(f.name, "")).strip() or f"see {cls.__module__}.{cls.__name__}", **extra))
    return tuple(out)


def _build_settings(cls: type, params: Mapping[str, Any], stage: Stage, exclude: Sequence[str] = ()) -> Any:
    names = {f.name for f in dataclasses.fields(cls)}
    kw = {k: (tuple(v) if isinstance(v, list) else v) for k, v in library_kwargs(params, stage).items()
          if k in names and k not in exclude}
    try:
        return cls(**kw)
    except TypeError as e:  # a field the dataclass does not accept
        raise InvalidParameterError(str(e)) from None


# -- the built-in stages -------------------------------------------------------------
def _stage_import(state: RunState, params: dict[str, Any]) -> None:
    from .io import ReadOptions, read_capture

    if state.capture is None:
        opts = ReadOptions(
            nominal_frequency_hz=params["nominal_frequency_hz"], nominal_voltage_v=params["nominal_voltage_v"],
            wiring=params["wiring"] or None,
        )
        state.capture = read_capture(state.source, format=params["format"] or None, options=opts)
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
    if params["quality"]:
        from .quality import quality_notes

        t0 = time.perf_counter()
        state.quality = quality_notes(state.capture)
        state.timings_s["quality"] = time.perf_counter() - t0  # part of the import stage's time


def _known_format(value: str) -> str | None:
    from .io import importer_names

    names = importer_names()
    return None if value == "" or value in names else f"{value!r} is not an importer; known: {list(names)}"


def _stage_measure(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import measure_capture

    kw = library_kwargs(params, _STAGES["measure"])
    state.settings["measure"] = kw
    state.measurements = measure_capture(state.capture, kw)


def _measure_params() -> tuple[Param, ...]:
    return (
        Param("chunk_samples", "int", None, "samples per processing block (bounds memory; results do not depend on it) [samples]",
              minimum=4096),
        Param("overlap_cycles", "int", None, "nominal cycles of overlap between blocks (at least 20) [cycles]", minimum=20),
    )


def _speed_settings_cls() -> type:
    from .speed.estimator import SpeedSettings

    return SpeedSettings


_SPEED_OWN = (
    Param("enabled", "bool", True, "estimate the speed; false = leave the speed track empty", kwarg=""),
    # window_s comes from SpeedSettings; absent = `waveforms.analysis.default_speed_window_s`
    Param("pole_pairs", "int", None, "override the nameplate's pole pairs [-]", minimum=1),
    Param("rotor_bars", "int", None, "override the nameplate's rotor bar count [-]", minimum=4),
)


def _stage_speed(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import estimate_speed

    # the speed-track keyword arguments the recipe gives (absent window_s: `analysis.default_speed_window_s`)
    opts = {k: (tuple(v) if isinstance(v, list) else v) for k, v in library_kwargs(params, _STAGES["speed"]).items()}
    state.settings["speed"] = opts
    state.settings["speed_enabled"] = bool(params["enabled"])
    if not params["enabled"]:
        return
    state.speed, notes = estimate_speed(state.capture, state.cycles, state.nameplate, opts)
    state.notes.extend(notes)


def _check_speed(params: dict[str, Any]) -> None:
    _build_settings(_speed_settings_cls(), params, _STAGES["speed"])


def _detect_params_cls() -> type:
    from .detect import DetectParams

    return DetectParams


def _known_detectors(value: list[str]) -> str | None:
    from .detect import detector_names

    names = detector_names()
    bad = [v for v in value if v not in names]
    return f"{bad[0]!r} is not a detector; known: {list(names)}" if bad else None


_DETECT_OWN = (
    Param("detectors", "str_list", None, "detectors to run; absent = all, in registry order", kwarg="",
          validate=_known_detectors),
)


def _stage_detect(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import detect_events

    dparams = _build_settings(_detect_params_cls(), params, _STAGES["detect"])
    only = None if params["detectors"] is None else tuple(params["detectors"])
    state.events, state.states, state.timeline, notes = detect_events(
        state.capture, state.measurements, state.speed, state.nameplate, dparams, only)
    state.notes.extend(notes)
    state.settings["detect"] = dparams
    state.settings["detectors"] = only


def _check_detect(params: dict[str, Any]) -> None:
    _build_settings(_detect_params_cls(), params, _STAGES["detect"])


def _thermal_params_cls() -> type:
    from .motor.thermal import ThermalParams

    return ThermalParams


def _thermal_overrides() -> dict[str, dict[str, Any]]:
    from .motor.thermal import TRIP_CLASS_TARGET_S

    return {"trip_classes": {"choices": tuple(TRIP_CLASS_TARGET_S)}, "motor_tau_s": {"minimum": 1.0},
            "k_neg": {"minimum": 0.0}, "relay_setting_a": {"minimum": 0.0}}


def _stage_thermal(state: RunState, params: dict[str, Any]) -> None:
    from .analysis import assess_motor_thermal

    tparams = _build_settings(_thermal_params_cls(), params, _STAGES["thermal"])
    state.settings["thermal"] = tparams
    state.thermal, notes = assess_motor_thermal(state.cycles, state.nameplate, tparams)
    state.notes.extend(notes)


def _check_thermal(params: dict[str, Any]) -> None:
    _build_settings(_thermal_params_cls(), params, _STAGES["thermal"])


def _stage_report(state: RunState, params: dict[str, Any]) -> None:
    """result.json, events.csv and (optionally) report.html via `waveforms.report`, plus the cycle table."""
    if state.out_dir is None:
        state.notes.append("report: nothing written (no output folder)")
        return
    from .atomic import atomic_path

    out = state.out_dir
    out.mkdir(parents=True, exist_ok=True)
    if state.analysis is not None:
        from .report import write_report

        written = write_report(state.analysis, out, html=params["html"])
        for name, path in written.items():
            state.outputs[{"report.html": "html", "result.json": "json", "events.csv": "events_csv"}.get(name, name)] = str(path)
    cyc = state.cycles
    if params["cycles"] != "none" and cyc is not None:
        target = out / f"cycles.{params['cycles']}"
        with atomic_path(target) as tmp:
            if params["cycles"] == "csv":
                cyc.to_csv(tmp, index=False)
            else:
                cyc.to_parquet(tmp, index=False)
        state.outputs["cycles"] = str(target)


def _register_builtin() -> None:
    register_stage(Stage(
        name="import",
        description="read the capture file (format recognised unless given) and attach the nameplate",
        run=_stage_import,
        params=(
            Param("format", "str", "", "importer name; empty = recognise the file by its content", kwarg="",
                  validate=_known_format),
            Param("nominal_frequency_hz", "float", None, "declared system frequency, 50 or 60 [Hz]; absent = from the file or inferred",
                  choices=(50.0, 60.0, 50, 60), kwarg=""),
            Param("nominal_voltage_v", "float", None, "declared line-to-line voltage [V]; absent = from the file",
                  minimum=0.0, kwarg=""),
            Param("wiring", "str", "", "'3-wire' or '4-wire'; empty = from the file", choices=("", "3-wire", "4-wire"), kwarg=""),
            Param("quality", "bool", True, "gather data-quality notes (clipping, flat or dead channels, gaps; one more pass)",
                  kwarg=""),
        ),
        library="waveforms.io:read_capture",
    ))
    register_stage(Stage(
        name="measure",
        description="per-cycle phasors, RMS, sequence components, unbalance, power; Urms(1/2); harmonics",
        run=_stage_measure, params=_measure_params(), needs=("import",), library="waveforms.measure:measure",
    ))
    register_stage(Stage(
        name="speed",
        description="rotor speed and slip from the current spectrum (needs the nameplate's poles)",
        run=_stage_speed, params=_SPEED_OWN + params_from_dataclass(_speed_settings_cls()),
        needs=("import",), library="waveforms.speed:track_speed", check=_check_speed,
    ))
    register_stage(Stage(
        name="detect",
        description="events: open phase, stall, start, dip, swell, interruption, unbalance",
        run=_stage_detect, params=_DETECT_OWN + params_from_dataclass(_detect_params_cls()),
        needs=("import", "measure"), library="waveforms.detect:run_detectors", check=_check_detect,
    ))
    register_stage(Stage(
        name="thermal",
        description="thermal capacity used and overload-relay trips, from the per-cycle currents and the nameplate",
        run=_stage_thermal, params=params_from_dataclass(_thermal_params_cls(), overrides=_thermal_overrides()),
        needs=("import", "measure"), library="waveforms.motor.thermal:assess_thermal", check=_check_thermal,
    ))
    register_stage(Stage(
        name="report",
        description="per-capture outputs: result.json, events.csv, report.html (after detect), the cycle table",
        run=_stage_report,
        params=(
            Param("html", "bool", True, "write report.html (plots and the event list)"),
            Param("cycles", "str", "parquet", "per-cycle table file: 'parquet', 'csv' or 'none'",
                  choices=("parquet", "csv", "none"), kwarg=""),
        ),
        needs=("import",), library="waveforms.report:write_report",
    ))


_register_builtin()
