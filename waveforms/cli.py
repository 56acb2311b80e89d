"""The ``motor-waveforms`` command (alias ``mwf``): a thin click layer over the library.

Each subcommand lives in its own module under `waveforms.commands` and is
listed once in `COMMAND_MODULES` with its one-line help (modules are imported on
first use, to keep start-up fast); the module exposes a click command named
``command``.  Errors of the package's own hierarchy end in one line on stderr
and a non-zero exit, never a traceback.
"""

from __future__ import annotations

import importlib
import signal
import sys
import warnings

import click

from . import PROGRAM_NAME, __version__
from .errors import WaveformsError

#: One entry per subcommand module (``waveforms/commands/<name>.py``) and its one-line help.
#: A module is imported only when its command runs (or its own help is asked for), so that
#: start-up and ``--help`` do not load pandas, scipy, matplotlib, h5py...; the help text is
#: kept here for the listing and checked against each command by tests/test_cli_startup.py.
COMMAND_MODULES: dict[str, str] = {
    "inspect": "Show channels, time base, mapping and data-quality notes of capture FILES.",
    "convert": "Convert capture SOURCE to TARGET: native HDF5 when TARGET ends in .h5/.hdf5, CSV when .csv.",
    "analyze": "Find open phase, stall, starts, dips and unbalance in CAPTURE; judge thermal stress; write a report.",
    "measure": ("Measure every fundamental cycle of capture SOURCE: frequency, RMS, Urms(1/2), phasors, "
                "sequence components, unbalance, harmonics, power."),
    "batch": "Analyse every capture in INPUTS (files, folders, globs, fsspec URLs) with one recipe.",
    "recipes": "List the shipped recipes and the stages they can chain, or check RECIPE.",
    "synth": "Simulate SCENARIO (a TOML file) and write a capture plus <stem>.truth.json.",
}


class _Group(click.Group):
    """Subcommands imported on first use; the listing uses the help kept in `COMMAND_MODULES`."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(COMMAND_MODULES)

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        if cmd_name not in COMMAND_MODULES:
            return None
        if cmd_name not in self.commands:
            mod = importlib.import_module(f"waveforms.commands.{cmd_name}")
            self.add_command(mod.command, cmd_name)
        return self.commands[cmd_name]

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        names = self.list_commands(ctx)
        if not names:
            return
        limit = formatter.width - 6 - max(len(n) for n in names)
        # a bare Command shortens the text exactly as click shortens a real command's help
        rows = [(n, click.Command(n, help=COMMAND_MODULES[n]).get_short_help_str(limit)) for n in names]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def invoke(self, ctx: click.Context) -> object:
        from .terminal import terminal_text

        try:
            with warnings.catch_warnings():
                # numpy's arithmetic warnings (all-NaN slice, overflow) on masked or broken stretches are not
                # news to the user: the data-quality notes say what was masked
                warnings.simplefilter("ignore", RuntimeWarning)
                return super().invoke(ctx)
        except WaveformsError as err:
            click.echo(terminal_text(f"error: {err}"), err=True)
            sys.exit(2)
        except KeyboardInterrupt as err:
            click.echo("interrupted", err=True)
            sys.exit(128 + int(getattr(err, "signum", signal.SIGINT)))
        except OSError as err:  # an output that cannot be written, a path that cannot be opened
            where = err.filename if err.filename is not None else "(no file named)"
            click.echo(terminal_text(f"error: {where}: {err.strerror or type(err).__name__}"), err=True)
            sys.exit(2)
        except (click.exceptions.Exit, click.ClickException, click.exceptions.Abort, SystemExit):
            raise
        except Exception as err:  # a bug: still one line, with where it happened, and a distinct exit code
            import traceback

            tb = traceback.extract_tb(err.__traceback__)
            at = f" (at {tb[-1].filename.rsplit('/', 1)[-1]}:{tb[-1].lineno})" if tb else ""
            click.echo(terminal_text(f"error: internal error, please report it: {type(err).__name__}: {err}{at}"), err=True)
            sys.exit(3)


@click.group(cls=_Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name=PROGRAM_NAME)
def cli() -> None:
    """Analyse three-phase motor waveform captures: open phase, stall, slip, thermal stress.

    Work on energized equipment only by qualified people, following local
    electrical codes; this tool informs, it does not replace protective devices.
    """


def main() -> None:
    # The help text and usage lines say the tool's own name whichever alias
    # (motor-waveforms, mwf, python -m waveforms) started it.
    cli(prog_name=PROGRAM_NAME)


if __name__ == "__main__":
    main()
