"""``motor-waveforms batch``: run a recipe over folders / globs of captures, in parallel, resumable."""

from __future__ import annotations

import signal
import sys

import click

from ..batch import plan, run
from ..terminal import terminal_text


@click.command("batch")
@click.argument("inputs", nargs=-1, required=True)
@click.option("--out", "-o", "out", required=True, type=click.Path(file_okay=False),
              help="Output folder: per-capture outputs, manifest, summary.csv/.parquet, index.html.")
@click.option("--recipe", "-r", default=None, help="Shipped recipe name or recipe TOML file [investigate].")
@click.option("--jobs", "-j", type=click.IntRange(min=0), default=None,
              help="Worker processes (0 = one per CPU core) [the recipe's batch.jobs].")
@click.option("--motor", type=click.Path(dir_okay=False), default=None, help="One nameplate TOML for every capture.")
@click.option("--motors", type=click.Path(dir_okay=False), default=None,
              help="TOML mapping sites / file patterns to nameplate files.")
@click.option("--scheduler", default=None, help="Dask distributed scheduler address (tcp://host:8786).")
@click.option("--force", is_flag=True, help="Rerun captures already finished in this output folder.")
@click.option("--retry-errors", is_flag=True, help="Rerun captures that failed last time.")
@click.option("--reuse-workers", is_flag=True,
              help="Reuse each worker process for many captures (faster; by default every capture gets a fresh process).")
@click.option("--site-from", "site_from", default=None, metavar="REGEX",
              help="Regular expression on the file name giving the site for incidents across files "
                   "(group 'site', else group 1) [the capture's folder].")
@click.option("--gap-tolerance", "gap_tolerance_s", type=click.FloatRange(min=0), default=None, metavar="SECONDS",
              help="Longest gap between consecutive files across which an incident continues [60].")
@click.option("--dry-run", is_flag=True, help="List what would be run or skipped, and stop (nothing is written).")
@click.option("--quiet", "-q", is_flag=True, help="No progress bar.")
def command(inputs: tuple[str, ...], out: str, recipe: str | None, jobs: int | None, motor: str | None,
            motors: str | None, scheduler: str | None, force: bool, retry_errors: bool, reuse_workers: bool,
            site_from: str | None, gap_tolerance_s: float | None, dry_run: bool, quiet: bool) -> None:
    """Analyse every capture in INPUTS (files, folders, globs, fsspec URLs) with one recipe.

    Each capture runs in its own worker process (or on a Dask cluster with
    --scheduler; captures and OUT must then be reachable by the workers under
    the same path or URL).  A capture that cannot be read becomes an error row;
    the others go on.  Rerunning the same command skips captures already done
    (same file content, recipe and nameplate); Ctrl-C keeps everything finished.

    Exit code: 0 all analysed, 1 some captures failed, 2 a bad option or an
    output that cannot be written (the run stops), 130 interrupted by Ctrl-C
    (SIGINT), 143 stopped by SIGTERM; see docs/batch.md.

    The results inform an investigation; they do not replace protective
    devices.  Work on energized equipment only by qualified people.
    """
    if dry_run:
        p = plan(list(inputs), recipe=recipe, out=out, motor=motor, motors=motors, force=force, retry_errors=retry_errors)
        for state, n in p["plan"].value_counts().items():
            click.echo(f"{n:6d}  {state}")
        for rec in p.head(50).to_dict("records"):
            click.echo(f"  {rec['file']}  [{rec['site']}]  {rec['plan']}" + (f"  nameplate {rec['nameplate']}" if rec["nameplate"] else ""))
        if len(p) > 50:
            click.echo(f"  ... and {len(p) - 50} more")
        return
    try:
        res = run(list(inputs), recipe=recipe, out=out, jobs=jobs, motor=motor, motors=motors, force=force,
                  retry_errors=retry_errors, scheduler=scheduler, progress=not quiet, fresh_workers=not reuse_workers,
                  site_from=site_from, gap_tolerance_s=gap_tolerance_s)
    except KeyboardInterrupt as e:  # before any capture was dispatched (while hashing the inputs)
        click.echo("interrupted before any capture started; nothing was lost", err=True)
        sys.exit(128 + getattr(e, "signum", signal.SIGINT))
    total = len(res.summary)
    click.echo(f"{total} captures: {res.n_done} analysed now, {res.n_skipped} already done, "
               f"{res.n_failed} failed" + (f", {res.n_pending} not analysed yet (run stopped)" if res.interrupted else ""))
    if len(res.summary):
        counts = res.summary["verdict"].replace("", "(not assessed)").value_counts()
        click.echo("verdicts: " + ", ".join(f"{v} {n}" for v, n in counts.items()))
    bad = res.summary[res.summary["status"] == "error"]
    for rec in bad.head(20).to_dict("records"):
        click.echo(terminal_text(f"  failed: {rec['file']}: {rec['error']}"))
    if len(bad) > 20:
        click.echo(f"  ... and {len(bad) - 20} more (see summary.csv)")
    if res.files:
        click.echo(f"summary: {res.files['csv']}  {res.files['parquet']}  {res.files['html']}")
    if res.incidents is not None and len(res.incidents):
        click.echo(f"incidents across files: {len(res.incidents)} ({res.files.get('incidents_csv', '')})")
    if res.interrupted:
        name = signal.Signals(res.signal or signal.SIGINT).name
        click.echo(f"interrupted ({name}): rerun the same command to resume", err=True)
        sys.exit(128 + (res.signal or signal.SIGINT))
    if res.n_failed:
        sys.exit(1)
