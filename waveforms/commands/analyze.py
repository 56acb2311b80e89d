"""``motor-waveforms analyze CAPTURE [--motor NAMEPLATE] [--recipe NAME|FILE] --out DIR``: the tool's main job.

Reads one capture and runs a recipe on it through `waveforms.recipe.run_recipe`
(the default recipe, ``investigate``: measure, speed, detectors, thermal,
report), which writes result.json, events.csv and report.html into DIR, each
atomically.  Prints the verdict and the files written.

The command-line options change the chosen recipe's parameters
(`waveforms.recipe.Recipe.with_params`); the reading options say how the file
is read, and fill in what the recipe's ``import`` table leaves open.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any

import click

from ..analysis import SAFETY_CAUTIONS
from ..errors import InvalidParameterError
from ..io.registry import ReadOptions
from ..motor.nameplate import load_nameplate
from ..recipe import DEFAULT_RECIPE, Recipe, RecipeError, load_recipe, run_recipe
from ..terminal import terminal_text
from .readopts import default_threads, options_from, positive_option, read_options, threads_option


def _set(rec: Recipe, stage: str, values: dict[str, Any], option: str) -> Recipe:
    """``rec`` with ``values`` in ``stage``; a stage missing from the recipe or a bad value names the option."""
    if stage not in rec.stage_names:
        raise InvalidParameterError(f"{option}: recipe {rec.name!r} has no {stage!r} stage (stages: {list(rec.stage_names)})")
    try:
        return rec.with_params(stage, values)
    except RecipeError as e:
        raise InvalidParameterError(f"{option}: {e.problem}") from None


def _reading(rec: Recipe, fmt: str | None, options: ReadOptions) -> tuple[str | None, ReadOptions]:
    """The command line's reading options, with what it leaves open taken from the recipe's ``import`` table."""
    if "import" not in rec.stage_names:
        return fmt, options
    p = rec.params("import")
    if fmt is None and p["format"]:
        fmt = p["format"]
    fill = {k: p[k] for k in ("nominal_frequency_hz", "nominal_voltage_v") if getattr(options, k) is None and p[k] is not None}
    if options.wiring is None and p["wiring"]:
        fill["wiring"] = p["wiring"]
    if "nominal_frequency_hz" in fill:
        fill["nominal_frequency_hz"] = float(fill["nominal_frequency_hz"])
    return fmt, dataclasses.replace(options, **fill) if fill else options


@click.command("analyze")
@click.argument("capture", type=click.Path())
@click.option("--motor", "motor", type=click.Path(dir_okay=False), help="Motor nameplate TOML file (default: the one stored in the capture, if any).")
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False), help="Folder for result.json, events.csv and report.html.")
@click.option("--recipe", "recipe_name", default=DEFAULT_RECIPE, show_default=True, metavar="NAME|FILE",
              help="Recipe to run: a shipped name (see `motor-waveforms recipes`) or a recipe TOML file. It needs the detect and report stages.")
@click.option("--no-html", is_flag=True, help="Write result.json and events.csv only.")
@click.option("--cycles", "cycles", type=click.Choice(["parquet", "csv", "none"]), default="none", show_default=True,
              help="Also write the per-cycle table as cycles.parquet or cycles.csv.")
@click.option("--no-speed", is_flag=True, help="Skip the speed track (faster).")
@click.option("--speed-window", "speed_window_s", type=float, help="Speed-track window [s] (default: about a sixth of the capture, 0.5-10 s).")
@click.option("--motor-tau", "motor_tau_s", type=float, help="Motor heating time constant [s] (default 600, an assumption).")
@click.option("--k-neg", "k_neg", type=float, help="Negative-sequence heating weight K (default 175 / I_LR^2, IEEE C37.96).")
@click.option("--relay-setting", "relay_setting_a", type=float, help="Overload relay current setting [A] (default: nameplate FLA).")
@click.option("--hot-start", is_flag=True, help="Start the thermal models from rated-current steady state (default: from the "
              "capture's pre-event running current when it begins with the motor running, else cold).")
@click.option("--declared-voltage", "declared_voltage_v", type=float,
              help="Declared line-to-line supply voltage [V] for dips and swells (default: the capture's nominal voltage, else "
                   "the standard system voltage nearest the measured one, an inference; never the motor's rating).")
@click.option("--cold-start", is_flag=True, help="Start the thermal models cold (motor at ambient) instead of from the capture.")
@click.option("--as-recorded", "as_recorded", is_flag=True,
              help="Analyse the file exactly as recorded: report hook-up errors (reversed or moved clamps, A-C-B labels, "
                   "dead sensors) but do not correct them.")
@click.option("--currents", "currents", type=click.Choice(["line", "winding"]),
              help="What the current channels Ia, Ib, Ic measure: 'winding' = the windings A-B, B-C, C-A of a delta motor "
                   "(six-lead hook-up, A->B); the line currents are then derived by Kirchhoff's law (default: as the file says).")
@click.option("--cable-ohm", "cable_ohm", metavar="R,X",
              help="Series impedance of each line between the logger and the motor [ohm] (R and X at the system frequency): "
                   "the motor's terminal voltage is estimated as V - Z I for its tolerance, derating and stall checks.")
@threads_option
@read_options
def command(capture: str, motor: str | None, out_dir: str, recipe_name: str, no_html: bool, cycles: str, no_speed: bool,
            speed_window_s: float | None, motor_tau_s: float | None, k_neg: float | None, relay_setting_a: float | None,
            hot_start: bool, threads: int | None, as_recorded: bool = False, cold_start: bool = False,
            declared_voltage_v: float | None = None, currents: str | None = None, cable_ohm: str | None = None,
            **kw: Any) -> None:
    """Find open phase, stall, starts, dips and unbalance in CAPTURE; judge thermal stress; write a report.

    The report informs; it does not replace protective devices. Work on
    energized equipment only by qualified people under local electrical codes.
    """
    if hot_start and cold_start:
        raise InvalidParameterError("--hot-start and --cold-start: give one of them, not both")
    fmt, options = options_from(kw)
    for value, opt, unit in ((speed_window_s, "--speed-window", "s"), (motor_tau_s, "--motor-tau", "s"),
                             (k_neg, "--k-neg", "1"), (relay_setting_a, "--relay-setting", "A")):
        positive_option(value, opt, unit)
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InvalidParameterError(f"--out {out}: is a file, not a folder")
    rec = load_recipe(recipe_name)
    missing = [s for s in ("detect", "report") if s not in rec.stage_names]
    if missing:
        raise InvalidParameterError(f"--recipe {recipe_name}: recipe {rec.name!r} has no {' and no '.join(missing)} stage; "
                                    f"analyze needs both (stages: {list(rec.stage_names)})")
    rec = _set(rec, "report", {"cycles": cycles, **({"html": False} if no_html else {})}, "--no-html" if no_html else "--cycles")
    if "measure" in rec.stage_names and rec.params("measure").get("harmonics") is None:
        # nothing analyze writes uses the harmonic table: not computed unless the recipe asks for it
        rec = _set(rec, "measure", {"harmonics": False}, "--recipe")
    if no_speed and "speed" in rec.stage_names:
        rec = _set(rec, "speed", {"enabled": False}, "--no-speed")
    if speed_window_s is not None:
        rec = _set(rec, "speed", {"window_s": speed_window_s}, "--speed-window")
    for value, key, opt in ((motor_tau_s, "motor_tau_s", "--motor-tau"), (k_neg, "k_neg", "--k-neg"),
                            (relay_setting_a, "relay_setting_a", "--relay-setting"), (True if hot_start else None, "hot_start", "--hot-start")):
        if value is not None:
            rec = _set(rec, "thermal", {key: value}, opt)
    if cold_start:
        rec = _set(rec, "thermal", {"initial_state": "cold"}, "--cold-start")
    if declared_voltage_v is not None:
        rec = _set(rec, "detect", {"declared_voltage_v": declared_voltage_v}, "--declared-voltage")
    if as_recorded:
        rec = _set(rec, "hookup", {"as_recorded": True}, "--as-recorded")
    if currents is not None:
        rec = _set(rec, "import", {"currents": currents}, "--currents")
    if cable_ohm is not None:
        try:
            r_ohm, x_ohm = (float(x) for x in cable_ohm.split(","))
        except ValueError:
            raise InvalidParameterError(f"--cable-ohm {cable_ohm!r}: expected R,X in ohm (e.g. 0.05,0.04)") from None
        rec = _set(rec, "detect", {"cable_r_ohm": r_ohm, "cable_x_ohm": x_ohm}, "--cable-ohm")
    fmt, options = _reading(rec, fmt, options)
    from ..io.csv_stream import open_capture
    from ..io.trend import is_trend_log

    scan = None
    if fmt is None and is_trend_log(capture):  # an RMS trend log: run_recipe switches to the trend recipe (docs/trends.md)
        if options.nominal_voltage_v is not None and "import" in rec.stage_names:
            rec = _set(rec, "import", {"nominal_voltage_v": options.nominal_voltage_v}, "--nominal-voltage")
        cap = capture
    elif "measure" in rec.stage_names:
        # a large CSV is streamed, not held in memory; the broken-sample scan rides on the measure stage's pass
        # (one pass over the samples; the "no usable sample" refusal stays here, at import)
        from ..io.masking import defer_masking

        cap, scan = defer_masking(open_capture(capture, fmt, options, mask=False), str(capture))
    else:
        cap = open_capture(capture, fmt, options)  # a large CSV is streamed, not held in memory
    plate = load_nameplate(motor) if motor else None
    state = run_recipe(rec, cap, nameplate=plate, out_dir=out, nameplate_source=motor or "",
                       threads=threads or default_threads(), pending_mask=scan)
    click.echo(terminal_text(state.verdict, keep_newlines=True))
    click.echo("")
    for p in state.outputs.values():
        click.echo(terminal_text(f"wrote {p}"))
    click.echo("")
    click.echo(SAFETY_CAUTIONS[-1])
