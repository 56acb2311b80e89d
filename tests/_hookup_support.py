"""Hook-up faults made in memory from a capture (test data only; the shipped files are never modified)."""

from __future__ import annotations

import dataclasses
from pathlib import Path

import numpy as np

from waveforms.capture import ArraySource, Capture

SAMPLES = Path(__file__).resolve().parents[1] / "sample_captures"
SAMPLE_FILES = sorted(p for p in SAMPLES.iterdir() if p.suffix in {".h5", ".csv"})


def arrays(cap: Capture) -> dict[str, np.ndarray]:
    x = cap.read()
    return {n: x[i].copy() for i, n in enumerate(cap.channel_names)}


def rebuild(cap: Capture, d: dict[str, np.ndarray], drop: tuple[str, ...] = ()) -> Capture:
    chans = tuple(c for c in cap.channels if c.name not in drop)
    return cap.replace(channels=chans, source=ArraySource(np.vstack([d[c.name] for c in chans])))


def relabel_acb(cap: Capture) -> Capture:
    """Lines B and C exchanged in every label (the file as a site wired A-C-B would give it)."""
    d, e = arrays(cap), {}
    e.update(d)
    if "Va" in d:
        e["Vb"], e["Vc"] = d["Vc"], d["Vb"]
    else:  # V(A,B) as labelled is V(A,C) of the lines: -Vca; V(B,C) -> -Vbc; V(C,A) -> -Vab
        e["Vab"], e["Vbc"], e["Vca"] = -d["Vca"], -d["Vbc"], -d["Vab"]
    e["Ib"], e["Ic"] = d["Ic"], d["Ib"]
    return rebuild(cap, e)


def fault(cap: Capture, name: str, fs_fall_s: float = 3.0) -> Capture:
    """One hook-up fault of the issue, made from ``cap``'s samples."""
    d = arrays(cap)
    e = dict(d)
    rng = np.random.default_rng(17)
    if name == "Ib negated":
        e["Ib"] = -d["Ib"]
    elif name == "Ia negated":
        e["Ia"] = -d["Ia"]
    elif name == "A-C-B":
        return relabel_acb(cap)
    elif name == "moved":  # the clamp labelled Ia is on line B, Ib on C, Ic on A
        e["Ia"], e["Ib"], e["Ic"] = d["Ib"], d["Ic"], d["Ia"]
    elif name == "moved back":  # the clamp labelled Ia is on line C, Ib on A, Ic on B
        e["Ia"], e["Ib"], e["Ic"] = d["Ic"], d["Ia"], d["Ib"]
    elif name == "Ia/Ib swapped":
        e["Ia"], e["Ib"] = d["Ib"], d["Ia"]
    elif name == "dead Ib":  # clamp open: 0.05 A of noise
        e["Ib"] = 0.05 * rng.standard_normal(d["Ib"].size)
    elif name == "Ib falls off":
        k = int(fs_fall_s * cap.sample_rate_hz)
        e["Ib"] = d["Ib"].copy()
        e["Ib"][k:] = 0.05 * rng.standard_normal(d["Ib"].size - k)
    elif name == "two-CT":
        return rebuild(cap, d, drop=("Ib",))
    elif name == "V reversed":
        v = "Vb" if "Vb" in d else "Vbc"
        e[v] = -d[v]
    elif name in ("V dead", "V falls off"):  # voltage lead B (Vb, or Vbc line-to-line) off: 0.5 V of noise
        v = "Vb" if "Vb" in d else "Vbc"
        k = 0 if name == "V dead" else int(fs_fall_s * cap.sample_rate_hz)
        e[v] = d[v].copy()
        e[v][k:] = 0.5 * rng.standard_normal(d[v].size - k)
    elif name in ("V moved", "V moved back"):  # the voltage leads moved one line along; the current clamps are right
        va, vb, vc = voltage_names(cap)
        if name == "V moved":  # the lead labelled Va is on line B, Vb on C, Vc on A
            e[va], e[vb], e[vc] = d[vb], d[vc], d[va]
        else:
            e[va], e[vb], e[vc] = d[vc], d[va], d[vb]
    else:
        raise KeyError(name)
    return rebuild(cap, e)


def voltage_names(cap: Capture) -> tuple[str, str, str]:
    return ("Va", "Vb", "Vc") if "Va" in cap.channel_names else ("Vab", "Vbc", "Vca")


FAULTS = ("Ib negated", "Ia negated", "A-C-B", "moved", "moved back", "Ia/Ib swapped", "dead Ib", "Ib falls off", "two-CT",
          "V reversed", "V dead", "V falls off", "V moved", "V moved back")
VOLTAGE_LEAD_FAULTS = ("V reversed", "V dead", "V falls off")
EXPECTED_CHECK = {"Ib negated": "current_assignment", "Ia negated": "current_assignment", "A-C-B": "phase_sequence",
                  "moved": "current_assignment", "moved back": "current_assignment", "Ia/Ib swapped": "current_assignment",
                  "dead Ib": "dead_sensor", "Ib falls off": "dead_sensor", "two-CT": "missing_channel",
                  "V reversed": "voltage_polarity", "V dead": "dead_sensor", "V falls off": "dead_sensor",
                  "V moved": "current_assignment", "V moved back": "current_assignment"}
EXPECTED_CHANNELS = {"Ib negated": {"Ib"}, "Ia negated": {"Ia"}, "moved": {"Ia", "Ib", "Ic"}, "moved back": {"Ia", "Ib", "Ic"},
                     "Ia/Ib swapped": {"Ia", "Ib"}, "dead Ib": {"Ib"}, "Ib falls off": {"Ib"}, "two-CT": {"Ia", "Ic"},
                     "V moved": {"Ia", "Ib", "Ic"}, "V moved back": {"Ia", "Ib", "Ic"}}
