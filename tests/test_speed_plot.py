"""The speed spectrum figure: bands shaded, components marked (structure checks, no image comparison; no external source)."""

from __future__ import annotations

import matplotlib.patches
from matplotlib.figure import Figure

from _speed_support import FS_HZ, plate
from waveforms.speed import plot_spectrum, window_detail
from waveforms.speed.synthetic import synthetic_currents


def test_plot_marks_components_and_shades_bands():
    x = synthetic_currents(4.0, FS_HZ, 0.03, seed=31)
    r = window_detail(x, 0.5, FS_HZ, plate(), window_s=2.0, components="eccentricity")
    assert r.status == "estimate" and len(r.used) == 2
    fig = plot_spectrum(r)
    assert isinstance(fig, Figure)
    ax = fig.axes[0]
    spans = [p for p in ax.patches if isinstance(p, matplotlib.patches.Polygon | matplotlib.patches.Rectangle)]
    assert len(spans) == len(r.bands) == 2
    labels = [t.get_text() for t in ax.texts]
    assert any("f1-1fr" in s for s in labels) and any("f1+1fr" in s for s in labels)
    assert "slip 0.03" in fig._suptitle.get_text()


def test_plot_without_spectrum():
    x = synthetic_currents(3.0, FS_HZ, 0.03, seed=32) * 0.0
    r = window_detail(x, 0.0, FS_HZ, plate(), window_s=2.0)
    assert r.status == "no_current"
    fig = plot_spectrum(r)
    assert "no_current" in fig.axes[0].texts[0].get_text()
