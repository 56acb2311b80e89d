"""The speed spectrum for the report: search bands shaded, found components marked.

Returns a `matplotlib.figure.Figure` (no pyplot state, no file written); the
report layer decides where it goes.  Colours are the project's own
colour-blind-safe pairing of blue and orange, and every element also differs
by line style or marker shape, so the plot reads in grey scale too.
"""

from __future__ import annotations

import numpy as np
from matplotlib.figure import Figure

from . import signatures as sg
from .estimator import WindowResult

#: Project palette (blue / orange contrast, distinguishable with common colour-vision deficiencies).
PALETTE = {
    "spectrum": "#24466b",   # deep blue
    "band": "#f0a830",       # amber (shaded, translucent)
    "used": "#c85a12",       # burnt orange, triangle markers
    "candidate": "#6f9fd8",  # light blue, hollow circles
    "supply": "#5a5a5a",     # grey, dashed
}


def _family_of(label: str) -> str:
    return sg.COMPONENT_SLOT if "R" in label else sg.COMPONENT_ECCENTRICITY


def plot_spectrum(result: WindowResult, *, title: str | None = None, width_in: float = 9.0) -> Figure:
    """One panel per component family searched: spectrum in dB re the fundamental.

    Parameters
    ----------
    result : WindowResult
        From `waveforms.speed.window_detail` (or `analyse_window`).
    title : str, optional
        Figure title; default states the window and the outcome.
    width_in : float
        Figure width [in].

    Examples
    --------
    Synthetic currents of a four-pole, 28-bar motor at 2 % slip on 50 Hz
    (`waveforms.speed.synthetic`); the figure's title gives the speed found,
    (1 - s) 120 f / P = 0.98 x 1500 = 1470 rpm (the synchronous-speed formula,
    any machines textbook):

    >>> from waveforms.speed.synthetic import synthetic_currents
    >>> from waveforms.speed.estimator import window_detail
    >>> i = synthetic_currents(12.0, 4000.0, 0.02, f1_hz=50.0, pole_pairs=2, rotor_bars=28)
    >>> fig = plot_spectrum(window_detail(i, 0.0, 4000.0, pole_pairs=2, rotor_bars=28, supply_hz=50.0))
    >>> print("1470.0 rpm" in fig.get_suptitle(), len(fig.axes))
    True 1
    """
    spec = result.spectrum
    fams = sorted({_family_of(lbl) for lbl in result.bands}, reverse=True)
    n = max(1, len(fams))
    fig = Figure(figsize=(width_in, 3.0 * n), layout="constrained")
    axes = fig.subplots(n, 1, squeeze=False)[:, 0]
    if spec is None:
        axes[0].text(0.5, 0.5, f"no spectrum: {result.status}", ha="center", va="center", transform=axes[0].transAxes)
        axes[0].set_axis_off()
        return fig
    ref = result.f1_power if np.isfinite(result.f1_power) and result.f1_power > 0 else float(np.max(spec.power))
    with np.errstate(divide="ignore"):
        db = 10.0 * np.log10(spec.power / ref)
    used = {u[0]: u for u in result.used}
    # not strict: with a spectrum but no search band (status no_supply_frequency returns bands={}) there is
    # one empty panel and no family, so the lengths differ; otherwise len(axes) == len(fams)
    for ax, fam in zip(axes, fams, strict=False):
        labels = [lbl for lbl in result.bands if _family_of(lbl) == fam]
        lo = min(result.bands[lbl][0] for lbl in labels)
        hi = max(result.bands[lbl][1] for lbl in labels)
        margin = max(0.15 * (hi - lo), 5 * spec.bin_hz)
        f0, f1 = max(0.0, lo - margin), hi + margin
        if fam == sg.COMPONENT_ECCENTRICITY and np.isfinite(result.f_supply_hz):
            f0, f1 = min(f0, result.f_supply_hz - margin), max(f1, result.f_supply_hz + margin)
        sel = (spec.f_hz >= f0) & (spec.f_hz <= f1)
        ax.plot(spec.f_hz[sel], db[sel], color=PALETTE["spectrum"], lw=0.8, label="current spectrum")
        for j, lbl in enumerate(labels):
            b0, b1 = result.bands[lbl]
            ax.axvspan(b0, b1, color=PALETTE["band"], alpha=0.22, lw=0, label="search band" if j == 0 else None)
            c = result.candidates.get(lbl)
            if c is not None and len(c):
                ax.plot(c.f_hz, 10 * np.log10(c.power / ref), "o", mfc="none", color=PALETTE["candidate"], ms=5,
                        label="peaks considered" if j == 0 else None)
            if lbl in used:
                _, f, prom, _s = used[lbl]
                y = 10 * np.log10(np.interp(f, spec.f_hz, spec.power) / ref)
                ax.plot([f], [y], "v", color=PALETTE["used"], ms=9, label="component used" if lbl == next(u for u in labels if u in used) else None)
                ax.annotate(f"{lbl}\n{f:.3f} Hz, +{prom:.0f} dB", (f, y), xytext=(0, 12), textcoords="offset points",
                            ha="center", fontsize=8, color=PALETTE["used"])
        if np.isfinite(result.f_supply_hz):
            hs = np.arange(max(1, int(f0 // result.f_supply_hz)), int(f1 // result.f_supply_hz) + 1)
            fh = hs * result.f_supply_hz
            for j, x in enumerate(fh[(fh >= f0) & (fh <= f1)]):
                ax.axvline(x, color=PALETTE["supply"], ls="--", lw=0.8, label="supply harmonics" if j == 0 else None)
        ax.set_xlim(f0, f1)
        finite = db[sel][np.isfinite(db[sel])]
        if finite.size:
            ax.set_ylim(max(np.percentile(finite, 1) - 10, -200), 5)
        ax.set_xlabel("frequency [Hz]")
        ax.set_ylabel("dB re fundamental")
        ax.set_title(f"{fam} components", fontsize=10, loc="left")
        ax.grid(True, lw=0.3, alpha=0.5)
        ax.legend(fontsize=7, loc="lower right")
    if title is None:
        if result.status == "estimate":
            rpm = float(sg.speed_rpm(result.slip, result.f_supply_hz, result.pole_pairs))
            outcome = f"slip {result.slip:.4f}, {rpm:.1f} rpm from {result.component}, prominence {result.prominence_db:.0f} dB"
        else:
            outcome = f"no estimate ({result.status})"
        title = f"window {result.t_start_s:.2f}-{result.t_end_s:.2f} s: {outcome}"
    fig.suptitle(title, fontsize=10)
    return fig
