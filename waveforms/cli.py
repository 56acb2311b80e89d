"""The ``motor-waveforms`` command (alias ``mwf``): a thin click layer over the library.

Each subcommand lives in its own module under `waveforms.commands` and is
listed once in `COMMAND_MODULES`; the module exposes a click command named
``command``.  Errors of the package's own hierarchy end in one line on stderr
and a non-zero exit, never a traceback.
"""

from __future__ import annotations

import importlib
import sys

import click

from . import PROGRAM_NAME, __version__
from .errors import WaveformsError

#: One entry per subcommand module (``waveforms/commands/<name>.py``).
COMMAND_MODULES: tuple[str, ...] = (
    "inspect", "convert",
    "analyze",
    "measure",
    "batch", "recipes",
    "synth",
)


class _Group(click.Group):
    def invoke(self, ctx: click.Context) -> object:
        try:
            return super().invoke(ctx)
        except WaveformsError as err:
            click.echo(f"error: {err}", err=True)
            sys.exit(2)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name=PROGRAM_NAME)
def cli() -> None:
    """Analyse three-phase motor waveform captures: open phase, stall, slip, thermal stress.

    Work on energized equipment only by qualified people, following local
    electrical codes; this tool informs, it does not replace protective devices.
    """


for _name in COMMAND_MODULES:
    _mod = importlib.import_module(f"waveforms.commands.{_name}")
    cli.add_command(_mod.command)


def main() -> None:
    # The help text and usage lines say the tool's own name whichever alias
    # (motor-waveforms, mwf, python -m waveforms) started it.
    cli(prog_name=PROGRAM_NAME)


if __name__ == "__main__":
    main()
