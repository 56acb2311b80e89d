"""``motor-waveforms convert IN OUT``: write a capture as native HDF5 (``.h5``) or CSV (``.csv``)."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import click

from ..errors import InvalidParameterError
from ..io.csv_stream import convert_csv_to_native
from ..io.csv_writer import write_csv
from ..io.hdf5_native import write_native
from ..io.registry import detect_format, read_capture
from .readopts import options_from, read_options


@click.command("convert")
@click.argument("source", type=click.Path())
@click.argument("target", type=click.Path(dir_okay=False))
@click.option("--float32", is_flag=True, help="Store samples as float32 in HDF5 (half the size, ~7 significant digits).")
@click.option("--compression", type=click.Choice(["gzip", "lzf", "none"]), default="gzip", show_default=True, help="HDF5 compression.")
@click.option("--delimiter", type=click.Choice([",", ";", "tab"]), default=",", show_default=True, help="CSV separator.")
@read_options
def command(source: str, target: str, float32: bool, compression: str, delimiter: str, **kw: Any) -> None:
    """Convert capture SOURCE to TARGET: native HDF5 when TARGET ends in .h5/.hdf5, CSV when .csv.

    Delimited text to HDF5 is streamed block by block (bounded memory) unless
    --resample is given, which needs the whole capture in memory.
    """
    format_name, options = options_from(kw)
    suffix = Path(target).suffix.lower()
    if suffix not in (".h5", ".hdf5", ".csv"):
        raise InvalidParameterError(f"{target}: the output must end in .h5, .hdf5 or .csv")
    src = Path(source)
    step = f"converted to {Path(target).name}"
    dtype = "float32" if float32 else "float64"
    comp = None if compression == "none" else compression
    if suffix != ".csv" and not options.resample and src.is_file() and src.stat().st_size > 0:
        if (format_name or detect_format(src).name) == "csv":
            # delimited text to HDF5: streamed block by block, memory does not grow with the file
            s = convert_csv_to_native(src, target, options, dtype, comp, history=(step,))
            click.echo(f"wrote {target} (native HDF5, {s['n_channels']} channels, {s['n_samples']} samples at {s['sample_rate_hz']:g} Hz, streamed)")
            return
    cap = read_capture(source, format_name, options).with_history(step)
    if suffix == ".csv":
        write_csv(cap, target, delimiter="\t" if delimiter == "tab" else delimiter)
        kind = "CSV"
    else:
        write_native(cap, target, dtype=dtype, compression=comp)
        kind = "native HDF5"
    click.echo(f"wrote {target} ({kind}, {len(cap.channels)} channels, {cap.n_samples} samples at {cap.sample_rate_hz:g} Hz)")
