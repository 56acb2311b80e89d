"""``motor-waveforms synth SCENARIO.toml --out FILE``: simulate a motor-and-supply scenario.

Writes the capture (native HDF5 for ``.h5``, CSV for ``.csv``) and the ground
truth ``<stem>.truth.json`` beside it.  The data are invented: a model, not a
measurement.
"""

from __future__ import annotations

import dataclasses

import click

from ..sim.output import write_simulation
from ..sim.scenario import load_scenario


@click.command("synth")
@click.argument("scenario", type=click.Path(dir_okay=False))
@click.option("--out", "out", required=True, type=click.Path(dir_okay=False), help="Capture to write: .h5 (native HDF5) or .csv.")
@click.option("--seed", type=int, default=None, help="Override the scenario's noise seed.")
def command(scenario: str, out: str, seed: int | None) -> None:
    """Simulate SCENARIO (a TOML file) and write a capture plus <stem>.truth.json."""
    sc = load_scenario(scenario)
    if seed is not None:
        sc = dataclasses.replace(sc, seed=seed)
    cap_path, truth_path = write_simulation(sc, out)
    click.echo(f"wrote {cap_path} and {truth_path} (scenario {sc.name!r}, {sc.duration_s:g} s at {sc.logger.sample_rate_hz:g} Hz)")
