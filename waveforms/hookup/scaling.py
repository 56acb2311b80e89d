"""Implausible scaling: running current or voltage far from the nameplate ("CT/PT ratio or nameplate suspect").

A motor running at normal slip draws between its no-load current (well above
0.1 x FLA) and its full-load current, a little over when overloaded; more than
3 x FLA in steady running means a stall or a wrong CT ratio / nameplate, less
than 0.1 x FLA while the currents are balanced and lag as a motor's do a wrong
CT ratio.  Windows whose lag exceeds ``RUNNING_LAG_MAX_DEG`` (a stalled motor
runs at a power factor of about 0.2-0.4, REFERENCES.md [mem]) are left out.
A voltage outside ``VOLTAGE_BAND`` of the declared or rated voltage points
at a PT ratio.  Thresholds: the issue's figures, common practice, no source.
Nothing is corrected: the finding is a warning.
"""

from __future__ import annotations

import numpy as np

from .finding import Finding

CURRENT_BAND_PU = (0.1, 3.0)
VOLTAGE_BAND = (0.7, 1.3)
RUNNING_LAG_MAX_DEG = 60.0


def scaling(i_level_a: np.ndarray, lag_deg: np.ndarray, v_ll_v: np.ndarray, fla_a: float | None, declared_v: float | None,
            i_names: list[str], v_names: list[str]) -> list[Finding]:
    """Findings for a running current or a voltage far from the nameplate / declared value."""
    out = []
    run = np.isfinite(i_level_a) & np.isfinite(lag_deg) & (np.abs(lag_deg) <= RUNNING_LAG_MAX_DEG)
    if fla_a and run.any():
        pu = float(np.median(i_level_a[run])) / fla_a
        if not CURRENT_BAND_PU[0] <= pu <= CURRENT_BAND_PU[1]:
            out.append(Finding("scaling", f"steady running current {pu:.2f} x FLA: CT ratio or nameplate suspect",
                               tuple(i_names), {"running_current_a": float(np.median(i_level_a[run])), "fla_a": fla_a,
                                                "current_pu_fla": pu, "band_pu": list(CURRENT_BAND_PU), "windows": int(run.sum())},
                               "medium", "warning only", short="CT ratio or nameplate suspect"))
    v = v_ll_v[np.isfinite(v_ll_v) & (v_ll_v > 0)]
    if declared_v and v.size:
        pu = float(np.median(v)) / declared_v
        if not VOLTAGE_BAND[0] <= pu <= VOLTAGE_BAND[1]:
            out.append(Finding("scaling", f"line-to-line voltage {pu:.2f} x the declared {declared_v:.0f} V: PT ratio or nameplate suspect",
                               tuple(v_names), {"voltage_ll_v": float(np.median(v)), "declared_v": declared_v, "voltage_pu": pu,
                                                "band_pu": list(VOLTAGE_BAND), "windows": int(v.size)},
                               "medium", "warning only", short="PT ratio or nameplate suspect"))
    return out
