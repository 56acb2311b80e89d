"""``waveforms analyze CAPTURE [--motor NAMEPLATE] --out DIR``: the tool's main job.

Reads one capture, runs `waveforms.analysis.analyze` (measure, speed,
detectors, thermal, verdict) and writes result.json, events.csv and
report.html into DIR, each atomically.  Prints the verdict and the files
written.
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Any

import click

from ..analysis import SAFETY_CAUTIONS, analyze
from ..errors import InvalidParameterError
from ..io.registry import read_capture
from ..motor.nameplate import load_nameplate
from ..motor.thermal import ThermalParams
from ..report import write_report
from .readopts import options_from, read_options


@click.command("analyze")
@click.argument("capture", type=click.Path(dir_okay=False))
@click.option("--motor", "motor", type=click.Path(dir_okay=False), help="Motor nameplate TOML file (default: the one stored in the capture, if any).")
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False), help="Folder for result.json, events.csv and report.html.")
@click.option("--no-html", is_flag=True, help="Write result.json and events.csv only.")
@click.option("--no-speed", is_flag=True, help="Skip the speed track (faster).")
@click.option("--speed-window", "speed_window_s", type=float, help="Speed-track window [s] (default: about a sixth of the capture, 0.5-10 s).")
@click.option("--motor-tau", "motor_tau_s", type=float, help="Motor heating time constant [s] (default 600, an assumption).")
@click.option("--k-neg", "k_neg", type=float, help="Negative-sequence heating weight K (default 175 / I_LR^2, IEEE C37.96).")
@click.option("--relay-setting", "relay_setting_a", type=float, help="Overload relay current setting [A] (default: nameplate FLA).")
@click.option("--hot-start", is_flag=True, help="Start the thermal models from rated-current steady state instead of cold.")
@read_options
def command(capture: str, motor: str | None, out_dir: str, no_html: bool, no_speed: bool, speed_window_s: float | None,
            motor_tau_s: float | None, k_neg: float | None, relay_setting_a: float | None, hot_start: bool, **kw: Any) -> None:
    """Find open phase, stall, starts, dips and unbalance in CAPTURE; judge thermal stress; write a report.

    The report informs; it does not replace protective devices. Work on
    energized equipment only by qualified people under local electrical codes.
    """
    fmt, options = options_from(kw)
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise InvalidParameterError(f"--out {out}: is a file, not a folder")
    cap = read_capture(capture, fmt, options)
    plate = load_nameplate(motor) if motor else None
    tp = ThermalParams()
    changes = {k: v for k, v in {"motor_tau_s": motor_tau_s, "k_neg": k_neg, "relay_setting_a": relay_setting_a}.items() if v is not None}
    if hot_start:
        changes["hot_start"] = True
    for key, opt in (("motor_tau_s", "--motor-tau"), ("relay_setting_a", "--relay-setting"), ("k_neg", "--k-neg")):
        if key in changes and not changes[key] >= (0 if key == "k_neg" else 1e-9):
            raise InvalidParameterError(f"{opt} {changes[key]!r} must be {'non-negative' if key == 'k_neg' else 'positive'}")
    tp = dataclasses.replace(tp, **changes)
    speed_opts = {"window_s": speed_window_s} if speed_window_s is not None else None
    res = analyze(cap, plate, thermal_params=tp if changes else None, speed=not no_speed, speed_options=speed_opts)
    written = write_report(res, out, html=not no_html)
    click.echo(res.verdict)
    click.echo("")
    for name, p in written.items():
        click.echo(f"wrote {p}")
    click.echo("")
    click.echo(SAFETY_CAUTIONS[-1])
