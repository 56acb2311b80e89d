"""CLI subcommands, one module each; see `waveforms.cli.COMMAND_MODULES`."""
