"""Signal builders for the measurement tests (test data only, no real site)."""

from __future__ import annotations

import numpy as np

from waveforms.capture import Capture, from_arrays, standard_channels

PHASE_SHIFT = {"A": 0.0, "B": -2.0 * np.pi / 3.0, "C": 2.0 * np.pi / 3.0}  # A-B-C sequence


def three_phase(
    t: np.ndarray,
    rms: float,
    f_hz: float,
    phi_rad: float = 0.0,
    harmonics: dict[int, tuple[float, float]] | None = None,
    sequence: str = "ABC",
) -> dict[str, np.ndarray]:
    """Balanced three-phase set; harmonic n (relative RMS, phase) follows the n-th multiple of the phase shifts."""
    sign = 1.0 if sequence == "ABC" else -1.0
    out = {}
    for c, sh in PHASE_SHIFT.items():
        x = np.sqrt(2.0) * rms * np.cos(2 * np.pi * f_hz * t + phi_rad + sign * sh)
        for n, (rel, ph) in (harmonics or {}).items():
            x = x + np.sqrt(2.0) * rms * rel * np.cos(n * (2 * np.pi * f_hz * t + sign * sh) + ph)
        out[c] = x
    return out


def capture_of(volts: dict[str, np.ndarray] | None, amps: dict[str, np.ndarray] | None, fs_hz: float,
               voltages: str = "LN", **meta) -> Capture:
    """A capture with Va Vb Vc (or Vab Vbc Vca) and Ia Ib Ic as given."""
    chans = standard_channels(voltages=voltages if volts is not None else None, currents=amps is not None)
    rows = []
    if volts is not None:
        rows += [volts[c] for c in "ABC"]
    if amps is not None:
        rows += [amps[c] for c in "ABC"]
    meta.setdefault("nominal_frequency_hz", 50.0)
    return from_arrays(np.vstack(rows), chans, fs_hz, **meta)


def absolute_phasor(cycles, label: str) -> np.ndarray:
    """Phasor of a channel in the C37.118.1 frame from the table: |X| at (V1 angle + X angle)."""
    ang = np.radians(cycles["V1_ang_deg"].to_numpy() + cycles[f"{label}_ang_deg"].to_numpy())
    return cycles[f"{label}_mag"].to_numpy() * np.exp(1j * ang)
