"""``motor-waveforms measure FILE --out DIR``: per-cycle measurement tables as Parquet and CSV."""

from __future__ import annotations

from typing import Any

import click

from ..measure.output import write_measurements
from ..terminal import terminal_text
from .readopts import default_threads, options_from, read_options, safe_stem, threads_option


@click.command("measure")
@click.argument("source", type=click.Path())
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False), help="Folder for the tables.")
@click.option("--stem", help="File-name stem of the outputs (default: the capture's file name).")
@click.option("--csv/--no-csv", "csv", default=True, show_default=True, help="Also write CSV beside Parquet.")
@click.option("--intervals", "intervals", multiple=True, type=click.Choice(["basic", "3s", "10min"]),
              help="Also write aggregated intervals (10/12-cycle, 3 s, 10 min) with dip/interruption flags. Repeatable.")
@click.option("--chunk", "chunk_samples", type=click.IntRange(min=1000), default=1 << 18, show_default=True,
              help="Samples per processing block (memory bound; results do not depend on it).")
@threads_option
@read_options
def command(source: str, out_dir: str, stem: str | None, csv: bool, intervals: tuple[str, ...],
            chunk_samples: int, threads: int | None, **kw: Any) -> None:
    """Measure every fundamental cycle of capture SOURCE: frequency, RMS, Urms(1/2), phasors,
    sequence components, unbalance, harmonics, power.  Columns: docs/columns.md.

    The figures inform; they do not replace protective devices or a qualified
    person's judgement on site.
    """
    stem = safe_stem(stem)
    format_name, options = options_from(kw)
    from ..io.csv_stream import open_capture

    cap = open_capture(source, format_name, options)  # a large CSV is streamed, not held in memory
    formats = ("parquet", "csv") if csv else ("parquet",)
    res = write_measurements(cap, out_dir, stem=stem, formats=formats, chunk_samples=chunk_samples,
                             intervals=tuple(intervals), threads=threads or default_threads())
    rows = ", ".join(f"{k} {v}" for k, v in res["rows"].items())
    click.echo(terminal_text(f"measured {source}: {rows} rows; reference {res['info']['reference']}"))
    for f in res["files"]:
        click.echo(terminal_text(f"wrote {f}"))
