"""The report's figures (matplotlib, object API, no global state), returned as PNG bytes.

A look of our own: white ground, light grid, thin lines, the Okabe-Ito
colour-blind-safe palette (Okabe & Ito, "Color Universal Design", 2002;
from memory), motor states shaded behind every time plot.
"""

from __future__ import annotations

import base64
import io
import math
from collections.abc import Callable

import numpy as np
from matplotlib.figure import Figure

from ..analysis import AnalysisResult

#: Okabe-Ito palette.
OI = {
    "black": "#000000", "orange": "#E69F00", "sky": "#56B4E9", "green": "#009E73",
    "yellow": "#F0E442", "blue": "#0072B2", "vermillion": "#D55E00", "purple": "#CC79A7",
}
LINE_COLOURS = {"A": OI["blue"], "B": OI["orange"], "C": OI["purple"]}
LINE_STYLES = {"A": "-", "B": "--", "C": "-."}
STATE_STYLE = {
    "three-phase": {"color": OI["green"], "alpha": 0.08, "hatch": None},
    "single-phased": {"color": OI["orange"], "alpha": 0.22, "hatch": None},
    "stalled": {"color": OI["vermillion"], "alpha": 0.16, "hatch": "//"},
    "single-phased, stalled": {"color": OI["vermillion"], "alpha": 0.22, "hatch": "\\\\"},
    "de-energised": {"color": "#7f7f7f", "alpha": 0.22, "hatch": None},
    "no data": {"color": "#ffffff", "alpha": 1.0, "hatch": "xx"},  # a time-stamp gap (waveforms.segments)
}
#: Axes box of every time plot (figure fractions), so that their time axes line up.
TIME_AXES = {"left": 0.105, "right": 0.79}
RC = {"font.size": 9, "axes.titlesize": 10, "axes.labelsize": 9, "legend.fontsize": 8}
WIDTH_IN = 9.5


def _style(ax) -> None:
    ax.grid(True, color="#e3e3e3", linewidth=0.6)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    ax.spines["left"].set_color("#777777")
    ax.spines["bottom"].set_color("#777777")
    ax.tick_params(colors="#333333", labelsize=8)


def _shade(ax, res: AnalysisResult, legend: bool = False) -> None:
    seen: set[str] = set()
    for r in res.timeline.itertuples(index=False):
        st = STATE_STYLE.get(r.state, STATE_STYLE["three-phase"])
        label = r.state if (legend and r.state not in seen) else None
        seen.add(r.state)
        ax.axvspan(r.start_s, r.end_s, facecolor=st["color"], alpha=st["alpha"], hatch=st["hatch"], edgecolor="#ffffff",
                   linewidth=0, label=label)


def _legend(ax) -> None:
    """Legend outside the axes on the right, only when something is labelled."""
    if ax.get_legend_handles_labels()[0]:
        ax.legend(loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False)


def _figure(height_in: float, nrows: int = 1, ncols: int = 1, **kw) -> tuple[Figure, np.ndarray]:
    """A time-plot figure with the common axes box (legend outside on the right)."""
    fig = Figure(figsize=(WIDTH_IN, height_in))
    axes = fig.subplots(nrows, ncols, squeeze=False, **kw)
    fig.subplots_adjust(bottom=0.55 / height_in, top=1 - 0.2 / height_in, **TIME_AXES)
    return fig, axes


def png_bytes(fig: Figure, dpi: int = 110) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=dpi, facecolor="white")
    return buf.getvalue()


def data_uri(png: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(png).decode("ascii")


def _t(res: AnalysisResult) -> np.ndarray:
    return res.cycles["t_s"].to_numpy(float)


def timeline_figure(res: AnalysisResult) -> Figure:
    """Motor states as shaded periods, with the events as bars beneath."""
    import matplotlib

    with matplotlib.rc_context(RC):
        kinds = sorted({e.kind for e in res.events})
        fig, axes = _figure(1.2 + 0.32 * max(1, len(kinds)))
        ax = axes[0, 0]
        _style(ax)
        for r in res.timeline.itertuples(index=False):
            st = STATE_STYLE.get(r.state, STATE_STYLE["three-phase"])
            ax.barh(len(kinds), r.end_s - r.start_s, left=r.start_s, height=0.8, color=st["color"],
                    alpha=min(1.0, st["alpha"] * 2.5), hatch=st["hatch"], edgecolor="white", linewidth=0.5)
        end_cap = res.capture.duration_s
        colours = [OI["blue"], OI["vermillion"], OI["green"], OI["orange"], OI["purple"], OI["sky"], OI["black"]]
        for k, kind in enumerate(kinds):
            for e in res.events:
                if e.kind != kind:
                    continue
                end = end_cap if e.end_s is None else e.end_s
                ax.barh(k, max(end - e.start_s, end_cap / 400), left=e.start_s, height=0.5, color=colours[k % len(colours)])
                ax.plot([e.start_s], [k], marker="|", color="black", markersize=12)
        ax.set_yticks(range(len(kinds) + 1), [*(k.replace("_", " ") for k in kinds), "motor state"])
        ax.set_xlim(0, end_cap)
        ax.set_xlabel("time from capture start [s]")
        handles = [matplotlib.patches.Patch(facecolor=STATE_STYLE[s]["color"], alpha=min(1.0, STATE_STYLE[s]["alpha"] * 2.5),
                                            hatch=STATE_STYLE[s]["hatch"], label=s)
                   for s in STATE_STYLE if s in set(res.timeline["state"])]
        ax.legend(handles=handles, loc="upper left", bbox_to_anchor=(1.0, 1.0), frameon=False)
    return fig


def currents_figure(res: AnalysisResult) -> Figure:
    """Per-line RMS current against FLA and service-factor current."""
    import matplotlib

    with matplotlib.rc_context(RC):
        fig, axes = _figure(3.0)
        ax = axes[0, 0]
        _style(ax)
        _shade(ax, res, legend=True)
        t = _t(res)
        plate = res.nameplate
        for c in "ABC":
            col = f"I{c.lower()}_rms"
            if col in res.cycles:
                ax.plot(t, res.cycles[col].to_numpy(float), color=LINE_COLOURS[c], ls=LINE_STYLES[c], lw=1.1, label=f"I{c.lower()} RMS")
        if plate is not None:
            ax.axhline(plate.fla_a, color=OI["black"], lw=0.9, ls=":", label=f"FLA {plate.fla_a:g} A")
            if plate.service_factor > 1:
                ax.axhline(plate.fla_a * plate.service_factor, color=OI["vermillion"], lw=0.9, ls=":",
                           label=f"SF x FLA {plate.fla_a * plate.service_factor:.1f} A")
        ax.set_xlim(0, res.capture.duration_s)
        ax.set_ylim(bottom=0)
        ax.set_xlabel("time from capture start [s]")
        ax.set_ylabel("current [A RMS]")
        _legend(ax)
    return fig


def sequence_figure(res: AnalysisResult) -> Figure:
    """Negative-sequence ratios I2/I1 and V2/V1 [%]."""
    import matplotlib

    with matplotlib.rc_context(RC):
        fig, axes = _figure(2.6)
        ax = axes[0, 0]
        _style(ax)
        _shade(ax, res)
        t = _t(res)
        off = (res.states["state"] == "de-energised").to_numpy() if len(res.states) == len(t) else np.zeros(t.size, bool)
        for col, colour, ls, lab in (("I2_I1_pct", OI["vermillion"], "-", "I2/I1"), ("V2_V1_pct", OI["blue"], "--", "V2/V1")):
            if col in res.cycles:
                # a ratio of two noise figures means nothing while the motor is de-energised: not drawn
                ax.plot(t, np.where(off, np.nan, res.cycles[col].to_numpy(float)), color=colour, ls=ls, lw=1.1, label=lab)
        ax.set_xlim(0, res.capture.duration_s)
        ax.set_ylim(bottom=0)
        ax.set_xlabel("time from capture start [s]")
        ax.set_ylabel("negative / positive sequence [%]")
        _legend(ax)
    return fig


def thermal_figure(res: AnalysisResult) -> Figure | None:
    """Thermal capacity used by the motor model and each overload-relay class model [%]."""
    if res.thermal is None:
        return None
    import matplotlib

    with matplotlib.rc_context(RC):
        fig, axes = _figure(2.6)
        ax = axes[0, 0]
        _style(ax)
        _shade(ax, res)
        tr = res.thermal.track
        ax.plot(tr["t_s"], tr["theta_motor_pct"], color=OI["black"], lw=1.3, label="motor model")
        for col, colour, ls in zip([c for c in tr.columns if c.startswith("theta_class")],
                                   [OI["vermillion"], OI["orange"], OI["sky"], OI["green"]], ["-", "--", "-.", ":"], strict=False):
            ax.plot(tr["t_s"], tr[col], color=colour, ls=ls, lw=1.0, label=f"relay class {col[len('theta_class'):-4]}")
        ax.axhline(100, color="#555555", lw=0.8, ls=":")
        ax.set_xlim(0, res.capture.duration_s)
        ax.set_ylim(bottom=0)
        ax.set_xlabel("time from capture start [s]")
        ax.set_ylabel("thermal capacity used [%]")
        _legend(ax)
    return fig


def speed_figure(res: AnalysisResult) -> Figure:
    """Speed track: rpm where estimated, the windows without an estimate marked with their reason."""
    import matplotlib

    with matplotlib.rc_context(RC):
        fig, axes = _figure(2.6)
        ax = axes[0, 0]
        _style(ax)
        _shade(ax, res)
        sp = res.speed
        plate = res.nameplate
        if sp is None or len(sp) == 0:
            ax.text(0.5, 0.5, "no speed track (no nameplate, or too short for one window)", ha="center", va="center", transform=ax.transAxes)
        else:
            ok = np.isfinite(sp["rpm"].to_numpy(float))
            neg = bool((sp["rpm"].to_numpy(float)[ok] < 0).any())  # signed speed: negative = reverse (issue 12)
            ax.plot(sp["t_s"][ok], sp["rpm"][ok], color=OI["blue"], marker="o", ms=3.5, lw=1.0,
                    label="estimated speed" + (" (< 0: reverse)" if neg else ""))
            bad = sp[~ok]
            if len(bad):
                y0 = 0.0
                ax.plot(bad["t_s"], np.full(len(bad), y0), ls="none", marker="x", color=OI["vermillion"], ms=5,
                        label="no estimate: " + ", ".join(sorted(set(bad["status"].astype(str)))))
            if plate is not None:
                ax.axhline(plate.synchronous_speed_rpm, color=OI["black"], lw=0.8, ls=":", label=f"synchronous {plate.synchronous_speed_rpm:.0f} rpm")
                ax.axhline(plate.rated_speed_rpm, color=OI["green"], lw=0.8, ls="--", label=f"rated {plate.rated_speed_rpm:.0f} rpm")
            if plate is not None and neg:
                ax.axhline(-plate.synchronous_speed_rpm, color=OI["black"], lw=0.8, ls=":")
            ax.set_ylim(bottom=(-1.08 if neg else -0.04) * (plate.synchronous_speed_rpm if plate else 1800))
        ax.set_xlim(0, res.capture.duration_s)
        ax.set_xlabel("time from capture start [s]")
        ax.set_ylabel("rotor speed [rpm]")
        _legend(ax)
    return fig


def phasor_instants(res: AnalysisResult) -> tuple[float, float, str]:
    """Two instants to compare (before, after) and what they straddle."""
    for kind in ("open_phase", "stall", "interruption", "dip", "start"):
        evs = res.events_of(kind)
        if evs:
            e = evs[0]
            t_after = e.start_s + 0.2 if e.end_s is None else min(e.start_s + 0.2, 0.5 * (e.start_s + e.end_s))
            return max(0.0, e.start_s - 0.1), t_after, f"{kind.replace('_', ' ')} at {e.start_s:.4f} s"
    d = res.capture.duration_s
    return 0.25 * d, 0.75 * d, "no event: two instants of the capture"


def _phasors_at(res: AnalysisResult, t_s: float) -> dict[str, complex]:
    cyc = res.cycles
    k = int(np.argmin(np.abs(cyc["t_s"].to_numpy(float) - t_s)))
    out = {}
    for lab in ("Va", "Vb", "Vc", "Vab", "Vbc", "Vca", "Ia", "Ib", "Ic"):
        m, a = f"{lab}_mag", f"{lab}_ang_deg"
        if m in cyc and a in cyc:
            mv, av = float(cyc[m].iloc[k]), float(cyc[a].iloc[k])
            if math.isfinite(mv) and math.isfinite(av):
                out[lab] = mv * complex(math.cos(math.radians(av)), math.sin(math.radians(av)))
    return out


def phasor_figure(res: AnalysisResult) -> Figure:
    """Voltage and current phasors one instant before and one after the first event's onset."""
    import matplotlib

    t_b, t_a, what = phasor_instants(res)
    with matplotlib.rc_context(RC):
        fig = Figure(figsize=(WIDTH_IN, 4.0), layout="constrained")
        axes = [fig.add_subplot(1, 2, k + 1, projection="polar") for k in range(2)]
        ph_b, ph_a = _phasors_at(res, t_b), _phasors_at(res, t_a)
        vmax = max([abs(v) for d in (ph_b, ph_a) for k, v in d.items() if k.startswith("V")] or [1.0])
        imax = max([abs(v) for d in (ph_b, ph_a) for k, v in d.items() if k.startswith("I")] or [1.0])
        for ax, ph, t in zip(axes, (ph_b, ph_a), (t_b, t_a), strict=True):
            ax.set_title(f"t = {t:.3f} s", pad=12)
            ax.set_rticks([])
            ax.set_ylim(0, 1.08)
            ax.grid(color="#dddddd", linewidth=0.6)
            for lab, z in ph.items():
                line = lab[1].upper()
                is_v = lab.startswith("V")
                r = abs(z) / (vmax if is_v else imax)
                ax.annotate("", xy=(math.atan2(z.imag, z.real), r), xytext=(0, 0),
                            arrowprops={"arrowstyle": "-|>", "color": LINE_COLOURS.get(line, "black"),
                                        "lw": 1.8 if is_v else 1.1, "ls": "-" if is_v else "--", "shrinkA": 0, "shrinkB": 0})
                ang = math.atan2(z.imag, z.real) + (0.0 if is_v else 0.16)  # current labels turned aside a little
                ax.text(ang, (min(1.0, r) + 0.1) if is_v else max(0.18, 0.55 * r), f"{lab} {abs(z):.3g} {'V' if is_v else 'A'}",
                        ha="center", va="center", fontsize=7, color=LINE_COLOURS.get(line, "black"),
                        bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.8})
        fig.suptitle(f"solid: voltage (full scale {vmax:.4g} V); dashed: current (full scale {imax:.4g} A); "
                     "angles relative to the positive-sequence voltage of each cycle", fontsize=8)
    return fig


def spectrum_figure(res: AnalysisResult) -> tuple[Figure | None, str]:
    """The current spectrum of one speed window with the slip components marked (waveforms.speed.plot)."""
    sp = res.speed
    if sp is None or len(sp) == 0 or res.nameplate is None:
        return None, "no speed track, so no spectrum"
    from ..speed import window_detail
    from ..speed.plot import plot_spectrum

    est = sp[np.isfinite(sp["slip"].to_numpy(float))]
    ops = res.events_of("open_phase")
    pick = None
    if ops and len(est):
        after = est[est["t_start_s"] >= ops[0].start_s]
        if len(after):
            pick = after.iloc[int(np.argmax(after["prominence_db"].to_numpy(float)))]
    if pick is None:
        pick = est.iloc[int(np.argmax(est["prominence_db"].to_numpy(float)))] if len(est) else sp.iloc[len(sp) // 2]
    import dataclasses

    from ..errors import WaveformsError
    from ..speed import SpeedSettings

    known = {f.name for f in dataclasses.fields(SpeedSettings)} | {"pole_pairs", "rotor_bars"}
    opts = {k: v for k, v in dict(res.parameters.get("speed") or {}).items() if k in known and v is not None}
    cyc = res.cycles
    supply = cyc[["t_s", "frequency_hz"]] if "frequency_hz" in cyc else None
    try:
        wr = window_detail(res.capture, float(pick["t_start_s"]), nameplate=res.nameplate, supply_hz=supply,
                           decimated=getattr(res.measurements, "decimated", None), **opts)  # kept by the measure pass
    except WaveformsError as e:
        return None, f"the spectrum could not be drawn ({e})"
    fig = plot_spectrum(wr, width_in=WIDTH_IN)
    return fig, f"window {float(pick['t_start_s']):.2f}-{float(pick['t_end_s']):.2f} s ({pick['status']})"


def all_figures(res: AnalysisResult) -> dict[str, str | None]:
    """Every figure as a data: URI (None where a figure cannot be drawn), plus captions."""
    out: dict[str, str | None] = {}
    makers: dict[str, Callable[[AnalysisResult], Figure | None]] = {
        "timeline": timeline_figure, "currents": currents_figure, "sequence": sequence_figure,
        "thermal": thermal_figure, "speed": speed_figure, "phasors": phasor_figure,
    }
    for name, make in makers.items():
        fig = make(res)
        out[name] = None if fig is None else data_uri(png_bytes(fig))
    fig, caption = spectrum_figure(res)
    out["spectrum"] = None if fig is None else data_uri(png_bytes(fig))
    out["spectrum_caption"] = caption
    out["phasors_caption"] = phasor_instants(res)[2]
    from .hookup_plot import hookup_figure

    fig = hookup_figure(res)
    out["hookup"] = None if fig is None else data_uri(png_bytes(fig))
    return out
