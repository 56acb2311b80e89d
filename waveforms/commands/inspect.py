"""``motor-waveforms inspect FILE...``: what is in a capture, and what is wrong with it.

Channels, rate, duration, start/end, the mapping used, the importer's notes,
per-channel statistics and data-quality notes; human-readable by default,
``--json`` for machines.  Samples are read chunk by chunk (bounded memory).
"""

from __future__ import annotations

import json
import math
from typing import Any

import click

from ..errors import WaveformsError
from ..io.registry import read_capture
from ..quality import StatsAccumulator, quality_notes
from ..terminal import terminal_text
from .readopts import options_from, read_options


def inspect_one(path: str, format_name: str | None, options: Any) -> dict[str, Any]:
    """Plain-data inspection of one file (used by the command and its tests)."""
    from pathlib import Path

    from ..io.masking import defer_masking

    # one pass over the samples: the broken-sample scan rides on the statistics' pass
    cap, scan = defer_masking(read_capture(path, format_name, options, mask=False), str(Path(path)))
    acc = StatsAccumulator(cap)
    for chunk in cap.iter_chunks(1 << 18):
        scan.feed(chunk.owned)
        acc.feed(chunk.owned)
    cap = scan.apply(cap)
    stats = acc.records()  # plain data: inspect needs no pandas
    notes = quality_notes(cap, stats)
    summary = cap.summary()
    return {
        "file": path,
        "capture": summary,
        "stats": {name: {k: _plain(v) for k, v in row.items()} for name, row in stats.items()},
        "quality": notes,
    }


def _clean(obj: Any) -> Any:
    """JSON-safe copy: non-finite floats become None, numpy scalars plain numbers."""
    if isinstance(obj, dict):
        return {str(k): _clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_clean(v) for v in obj]
    return _plain(obj)


def _plain(v: Any) -> Any:
    if isinstance(v, float) and not math.isfinite(v):
        return None
    if hasattr(v, "item"):
        v = v.item()
        if isinstance(v, float) and not math.isfinite(v):
            return None
    return v


def _fmt_duration(s: float) -> str:
    if s < 120:
        return f"{s:.6g} s"
    h, rem = divmod(s, 3600)
    m, sec = divmod(rem, 60)
    return f"{int(h)} h {int(m):02d} min {sec:06.3f} s" if h else f"{int(m)} min {sec:06.3f} s"


def render_text(r: dict[str, Any]) -> str:
    """Human-readable block for one inspected file."""
    c = r["capture"]
    p = c["provenance"]
    fnom = c["nominal_frequency_hz"]
    vnom = c["nominal_voltage_v"]
    f_txt = "unknown" if fnom is None else f"{fnom:g}"
    v_txt = "voltage not declared" if vnom is None else f"{vnom:g} V line-to-line"
    lines = [
        f"{r['file']}",
        f"  format     {p['importer']}   sha256 {p['sha256'][:16]}",
        f"  start      {c['start_time']}",
        f"  end        {c['end_time']}   ({_fmt_duration(c['duration_s'])})",
        f"  samples    {c['n_samples']} at {c['sample_rate_hz']:g} Hz",
        f"  system     {f_txt} Hz nominal, {v_txt}, {c['wiring']}",
        "  channels",
    ]
    for ch in c["channels"]:
        st = r["stats"].get(ch["name"], {})
        scale = f" x{ch['scale']:g}" if ch["scale"] != 1.0 else ""
        rms = st.get("rms")
        rms_txt = "" if rms is None else f"  RMS {rms:.5g} {ch['unit']}, min {st['min']:.5g}, max {st['max']:.5g}"
        lines.append(f"    {ch['name']:<4} {ch['kind']:<7} {ch['conductor']} {ch['reference']:<7} from {ch['source_label']!r}{scale}{rms_txt}")
    if p["notes"] or p["history"]:
        lines.append("  import notes")
        lines += [f"    - {n}" for n in p["notes"]] + [f"    - history: {h}" for h in p["history"]]
    lines.append("  data quality")
    if r["quality"]:
        lines += [f"    - {q['severity']}: {q['message']}" for q in r["quality"]]
    else:
        lines.append("    - no findings (no clipping, flat or dead channels, NaNs, gaps or DC offset)")
    return "\n".join(lines)


@click.command("inspect")
@click.argument("files", nargs=-1, required=True, type=click.Path(dir_okay=True))
@click.option("--json", "as_json", is_flag=True, help="Machine-readable output (one JSON list).")
@read_options
def command(files: tuple[str, ...], as_json: bool, **kw: Any) -> None:
    """Show channels, time base, mapping and data-quality notes of capture FILES."""
    format_name, options = options_from(kw)
    results: list[dict[str, Any]] = []
    failed = 0
    for f in files:
        try:
            r = inspect_one(f, format_name, options)
        except WaveformsError as err:
            failed += 1
            results.append({"file": f, "error": str(err)})
            if not as_json:
                click.echo(terminal_text(f"error: {err}"), err=True)
            continue
        results.append(r)
        if not as_json:
            click.echo(terminal_text(render_text(r), keep_newlines=True) + "\n")
    if as_json:
        click.echo(json.dumps(_clean(results), indent=2, default=str, allow_nan=False))
    if failed:
        raise SystemExit(2)
