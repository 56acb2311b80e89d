"""The hook-up phasor diagram of the report: one steady window as recorded beside as corrected."""

from __future__ import annotations

import math

from matplotlib.figure import Figure

from ..analysis import AnalysisResult
from .plots import LINE_COLOURS, RC, WIDTH_IN


def _draw(ax, phasors: dict[str, list[float]], title: str) -> None:
    ax.set_title(title, pad=12)
    ax.set_rticks([])
    ax.set_ylim(0, 1.12)
    ax.grid(color="#dddddd", linewidth=0.6)
    vmax = max([m for n, (m, _) in phasors.items() if n.startswith("V") and math.isfinite(m)] or [1.0])
    imax = max([m for n, (m, _) in phasors.items() if n.startswith("I") and math.isfinite(m)] or [1.0])
    for name, (mag, ang_deg) in phasors.items():
        if not (math.isfinite(mag) and math.isfinite(ang_deg)):
            continue
        is_v = name.startswith("V")
        colour = LINE_COLOURS.get(name[1].upper(), "black")
        r = mag / (vmax if is_v else imax) if (vmax if is_v else imax) > 0 else 0.0
        th = math.radians(ang_deg)
        ax.annotate("", xy=(th, r), xytext=(0, 0), arrowprops={"arrowstyle": "-|>", "color": colour, "lw": 1.8 if is_v else 1.1,
                                                               "ls": "-" if is_v else "--", "shrinkA": 0, "shrinkB": 0})
        ax.text(th + (0.0 if is_v else 0.16), (min(1.0, r) + 0.1) if is_v else max(0.2, 0.6 * r), name, ha="center",
                va="center", fontsize=7.5, color=colour,
                bbox={"boxstyle": "round,pad=0.15", "facecolor": "white", "edgecolor": "none", "alpha": 0.8})


def hookup_figure(res: AnalysisResult) -> Figure | None:
    """Phasors of the steadiest hook-up window as recorded and as corrected; None without a hook-up finding."""
    hk = getattr(res, "hookup", None)
    if hk is None or not hk.findings or not hk.phasors_recorded:
        return None
    import matplotlib

    with matplotlib.rc_context(RC):
        fig = Figure(figsize=(WIDTH_IN, 4.0), layout="constrained")
        panels = [(hk.phasors_recorded, "as recorded")]
        if hk.phasors_corrected:
            panels.append((hk.phasors_corrected, "as corrected for the analysis"))
        for k, (ph, title) in enumerate(panels):
            _draw(fig.add_subplot(1, len(panels), k + 1, projection="polar"), ph, title)
        fig.suptitle("solid: voltage, dashed: current (each scaled to its largest); angles relative to the first "
                     "recorded voltage; names as recorded (left) and as analysed (right)", fontsize=8)
    return fig
