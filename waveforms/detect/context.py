"""What the detectors read: the cycle table plus shared per-cycle derived quantities.

`DetectionInput` gathers the measurement tables, the speed track, the
nameplate, the declared voltage and the thresholds (`DetectParams`), and
computes once the per-cycle arrays several detectors share: line-current
magnitudes, "energised", "dead line" and the supply-voltage ratio.  It is
read-only for the detectors: derived values are cached, nothing is appended,
and a detector says what it assumed in its own notes (`reference_notes`).
"""

from __future__ import annotations

import dataclasses
import functools
import math
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InvalidParameterError
from ..settings import check_fields, setting

LINES = ("A", "B", "C")
#: With one line open the other two currents are in antiphase (Kirchhoff); allowed departure [deg] (our choice)
ANTIPHASE_TOL_DEG = 30.0


@dataclasses.dataclass(frozen=True)
class DetectParams:
    """Thresholds of the detectors (defaults are our choices unless a source is named).

    Each field's meaning, unit and bounds are given with it (`waveforms.settings.setting`)
    and checked when the object is made.
    """

    energised_frac_fla: float = setting(0.05, "a line carries current when its fundamental exceeds this fraction of FLA [pu]", minimum=0.0)
    dead_line_frac: float = setting(0.10, "a line is dead when its current is below this fraction of the larger of the other two [-]",
                                    minimum=0.0, maximum=1.0)
    pair_balance: float = setting(0.25, "with one line open the other two carry equal and opposite currents (Kirchhoff); "
                                  "they must agree within this relative difference [-]", minimum=0.0)
    min_open_cycles: int = setting(3, "consecutive dead-line cycles needed for an open phase [cycles]", minimum=1)
    stall_frac_lr: float = setting(0.5, "stall region: largest line current above this fraction of the locked-rotor current "
                                   "scaled by the supply voltage [-]", minimum=0.0)
    min_stall_s: float = setting(1.0, "shortest stall reported [s]", minimum=0.0)
    stall_ratio_running: float = setting(3.0, "no nameplate: a running motor is in the locked-rotor region when its largest line "
                                         "current exceeds this multiple of the capture's running current [-] (locked-rotor "
                                         "current is 5-8 x FLA, a running motor draws at most about 1.15 x FLA; from memory, "
                                         "margin our choice)", minimum=1.0)
    start_frac_inrush: float = setting(0.5, "no nameplate: a start leaves the locked-rotor region when the current falls below "
                                       "this fraction of its initial inrush [-] (as stall_frac_lr; our choice)", minimum=0.0, maximum=1.0)
    standstill_tol_3ph: float = setting(0.015, "the stall begins when the apparent impedance stays within this relative distance "
                                        "of its standstill value, three-phase [-] (about 5 % of synchronous speed)", minimum=0.0)
    standstill_tol_1ph: float = setting(0.0015, "the same, single-phased [-]", minimum=0.0)
    stalled_single_phase_frac: float = setting(0.6, "single-phased and stalled above this fraction of the locked-rotor current [-] "
                                               "(ideal single-phase locked-rotor current is sqrt(3)/2 = 0.866 of the three-phase one)",
                                               minimum=0.0, maximum=1.0)
    dip_threshold_pct: float = setting(90.0, "IEC 61000-4-30 5.4.2: dip below this Urms(1/2) [% of declared]", minimum=0.0)
    swell_threshold_pct: float = setting(110.0, "IEC 61000-4-30 5.4.2: swell above this Urms(1/2) [% of declared]", minimum=0.0)
    interruption_threshold_pct: float = setting(10.0, "IEC 61000-4-30 5.5: interruption below this on all channels [% of declared]",
                                                minimum=0.0)
    hysteresis_pct: float = setting(2.0, "IEC 61000-4-30 hysteresis of the thresholds above [% of declared]", minimum=0.0)
    unbalance_threshold_pct: float = setting(1.0, "sustained NEMA line-voltage unbalance above this is an event [%] "
                                             "(NEMA MG-1 derating starts above 1 %)", minimum=0.0)
    unbalance_window_s: float = setting(1.0, "rolling-median window of the unbalance [s]", minimum=0.0)
    unbalance_min_s: float = setting(2.0, "shortest sustained unbalance [s]", minimum=0.0)
    upstream_residual_tol: float = setting(0.03, "upstream of the logger when the open line's line-to-line voltages moved by more "
                                           "than this fraction beyond what the supply impedance explains [-]", minimum=0.0)
    upstream_mag_tol: float = setting(0.07, "fallback test: relative change of the open line's voltage beyond which the open point "
                                      "is upstream [-]", minimum=0.0)
    upstream_angle_tol_deg: float = setting(8.0, "fallback test: angle change of the open line's voltage [deg]", minimum=0.0)
    upstream_v2_rise_pct: float = setting(3.0, "fallback test: rise of V2/V1 [percentage points]", minimum=0.0)
    declared_voltage_v: float | None = setting(
        None, "declared line-to-line supply voltage for dips and swells [V]; absent = the capture's nominal voltage, else the "
        "standard system voltage nearest the measured one (an inference), never the motor's rating", minimum=0.0)
    # the cable or feeder between the logger and the motor (waveforms.motor.terminal); absent = logger at the motor
    cable_r_ohm: float | None = setting(None, "series resistance of each line between the logger and the motor [ohm]", minimum=0.0)
    cable_x_ohm: float | None = setting(None, "series reactance of each line between the logger and the motor, at the system "
                                        "frequency [ohm]", minimum=0.0)
    cable_length_m: float | None = setting(None, "or: length of the cable from the logger to the motor [m] (with the per-km values)",
                                           minimum=0.0)
    cable_r_ohm_per_km: float | None = setting(None, "the cable's resistance per conductor [ohm/km]", minimum=0.0)
    cable_x_ohm_per_km: float | None = setting(None, "the cable's reactance per conductor at the system frequency [ohm/km]",
                                               minimum=0.0)

    def __post_init__(self) -> None:
        check_fields(self)
        given = [k for k in ("cable_r_ohm", "cable_x_ohm") if getattr(self, k) is not None]
        per_km = [k for k in ("cable_length_m", "cable_r_ohm_per_km", "cable_x_ohm_per_km") if getattr(self, k) is not None]
        if given and per_km:
            raise InvalidParameterError(f"give the cable as cable_r_ohm/cable_x_ohm or as cable_length_m with the per-km values, "
                                        f"not both ({given + per_km})")
        if per_km and len(per_km) != 3:
            raise InvalidParameterError("cable_length_m, cable_r_ohm_per_km and cable_x_ohm_per_km go together; given only "
                                        f"{per_km}")

    def to_dict(self) -> dict[str, Any]:
        # the cable keys are recorded when a cable is given (absent: the logger is at the motor)
        return {k: v for k, v in dataclasses.asdict(self).items() if not (k.startswith("cable_") and v is None)}


@dataclasses.dataclass(eq=False)
class DetectionInput:
    """Everything a detector may read.

    Parameters
    ----------
    cycles : DataFrame
        The measurement engine's cycle table (docs/columns.md).
    half_cycles : DataFrame or None
        Urms(1/2) table (``t_s``, ``X_rms_half``).
    speed : DataFrame or None
        Speed track (docs/speed.md).
    fla_a : float or None
        Full-load current [A] (nameplate).
    locked_rotor_a : float or None
        Locked-rotor current at rated voltage [A].
    declared_voltage_ll_v : float or None
        Declared line-to-line voltage [V].
    declared_voltage_source : str
        Where it came from: "user", "capture", "inferred" or "capture median"
        (`waveforms.measure.declared`).
    capture : Capture or None
        For point-on-wave refinement of onsets only.
    voltage_channels, current_channels : dict
        Conductor -> channel label (``{"A": "Va", ...}``, ``{"A": "Ia", ...}``).
    voltage_reference : {"LN", "LL", None}
    params : DetectParams
    """

    cycles: pd.DataFrame
    half_cycles: pd.DataFrame | None = None
    speed: pd.DataFrame | None = None
    fla_a: float | None = None
    locked_rotor_a: float | None = None
    declared_voltage_ll_v: float | None = None
    capture: Any = None
    voltage_channels: dict[str, str] = dataclasses.field(default_factory=dict)
    current_channels: dict[str, str] = dataclasses.field(default_factory=dict)
    voltage_reference: str | None = None
    params: DetectParams = dataclasses.field(default_factory=DetectParams)
    declared_voltage_source: str = "capture"
    #: (3, n) estimated line-to-line fundamental voltages at the motor terminals [V] when a cable between the logger and
    #: the motor is given (`waveforms.motor.terminal`); None = the logger's voltages are the motor's
    terminal_ll_v: np.ndarray | None = None

    def __post_init__(self) -> None:
        if "t_s" not in self.cycles:
            raise InvalidParameterError("the cycle table has no 't_s' column")
        if not self.current_channels:
            self.current_channels = {c: f"I{c.lower()}" for c in LINES if f"I{c.lower()}_rms" in self.cycles or f"I{c.lower()}_mag" in self.cycles}
        if not self.voltage_channels:
            ln = {c: f"V{c.lower()}" for c in LINES if f"V{c.lower()}_mag" in self.cycles}
            ll = {c: n for c, n in zip(LINES, ("Vab", "Vbc", "Vca"), strict=True) if f"{n}_mag" in self.cycles}
            if len(ln) == 3:
                self.voltage_channels, self.voltage_reference = ln, "LN"
            elif len(ll) == 3:
                self.voltage_channels, self.voltage_reference = ll, "LL"

    # -- time axis ----------------------------------------------------------------
    @functools.cached_property
    def t_s(self) -> np.ndarray:
        return self.cycles["t_s"].to_numpy(float)

    @functools.cached_property
    def t_start_s(self) -> np.ndarray:
        if "t_start_s" in self.cycles:
            return self.cycles["t_start_s"].to_numpy(float)
        return self.t_s - 0.5 * self.cycle_s

    @functools.cached_property
    def t_end_s(self) -> np.ndarray:
        if "t_end_s" in self.cycles:
            return self.cycles["t_end_s"].to_numpy(float)
        return self.t_s + 0.5 * self.cycle_s

    @functools.cached_property
    def cycle_s(self) -> float:
        if "frequency_hz" in self.cycles and np.isfinite(self.cycles["frequency_hz"].to_numpy(float)).any():
            f = float(np.nanmedian(self.cycles["frequency_hz"].to_numpy(float)))
            if math.isfinite(f) and f > 0:
                return 1.0 / f
        d = np.diff(self.t_s)
        return float(np.nanmedian(d)) if d.size else 0.02

    @property
    def n(self) -> int:
        return len(self.cycles)

    def col(self, name: str) -> np.ndarray | None:
        return self.cycles[name].to_numpy(float) if name in self.cycles else None

    # -- currents -----------------------------------------------------------------
    @functools.cached_property
    def has_three_currents(self) -> bool:
        return len(self.current_channels) == 3

    @functools.cached_property
    def i_mag(self) -> np.ndarray:
        """(n, 3) fundamental magnitude of Ia, Ib, Ic [A] (RMS where no phasor; NaN if absent)."""
        out = np.full((self.n, 3), np.nan)
        for j, c in enumerate(LINES):
            lab = self.current_channels.get(c)
            if lab is None:
                continue
            v = self.col(f"{lab}_mag")
            out[:, j] = v if v is not None else self.col(f"{lab}_rms")
        return out

    @functools.cached_property
    def i_rms(self) -> np.ndarray:
        out = np.full((self.n, 3), np.nan)
        for j, c in enumerate(LINES):
            lab = self.current_channels.get(c)
            if lab is not None:
                v = self.col(f"{lab}_rms")
                out[:, j] = v if v is not None else self.col(f"{lab}_mag")
        return out

    @functools.cached_property
    def i_max(self) -> np.ndarray:
        """Largest line RMS current per cycle [A]."""
        with np.errstate(all="ignore"):
            m = np.nanmax(np.where(np.isnan(self.i_rms), -np.inf, self.i_rms), axis=1)
        return np.where(np.isfinite(m), m, np.nan)

    @functools.cached_property
    def current_ref_a(self) -> float:
        """FLA, or (no nameplate) the median largest line current over cycles carrying current [A]."""
        if self.fla_a:
            return float(self.fla_a)
        m = self.i_max[np.isfinite(self.i_max)]
        if m.size == 0:
            return math.nan
        on = m[m > 0.05 * np.max(m)]
        return float(np.median(on)) if on.size else math.nan

    @property
    def rated(self) -> bool:
        """True when the nameplate gives an FLA: currents may be judged in multiples of it."""
        return bool(self.fla_a)

    @functools.cached_property
    def locked_rotor_ref_a(self) -> float:
        """The locked-rotor current, or (nameplate without one) 6 x FLA [A]; NaN without a nameplate.

        Never derived from the capture itself: without a rating a stall is
        judged from current ratios (`running_ref_a`, the start's inrush) instead.
        """
        if self.locked_rotor_a:
            return float(self.locked_rotor_a)
        return 6.0 * float(self.fla_a) if self.fla_a else math.nan

    @functools.cached_property
    def running_ref_a(self) -> float:
        """No nameplate: the capture's running current [A], the low end of its steady energised levels.

        The 10th percentile of the one-second rolling median of the largest
        line current over the energised cycles (a start's inrush and a stall
        are short or high; the running level is the low, steady one).  It is a
        reference for ratios only, never reported as a rating.  NaN without
        energised cycles.
        """
        m = self.i_max[self.energised]
        m = m[np.isfinite(m)]
        if m.size == 0:
            return math.nan
        w = max(1, int(round(1.0 / self.cycle_s)))
        med = pd.Series(m).rolling(min(w, m.size), min_periods=1, center=True).median().to_numpy()
        return float(np.quantile(med, 0.10))

    def reference_notes(self, locked_rotor: bool = False) -> tuple[str, ...]:
        """What `current_ref_a` (and, with ``locked_rotor``, `locked_rotor_ref_a`) assumed.

        For the notes of a detector using them; empty without line currents
        (nothing is scaled then) and for figures the nameplate gives.
        """
        if not np.isfinite(self.i_max).any():
            return ()
        out = []
        if locked_rotor and not self.locked_rotor_a and self.fla_a:
            out.append("no locked-rotor current on the nameplate: 6 x FLA assumed")
        if not self.fla_a:
            out.append("no nameplate FLA: currents are not judged against a rating; 'carries current' is 5 % of the capture's median current")
            if locked_rotor:
                out.append(f"no nameplate: locked rotor judged from current ratios (above "
                           f"{self.params.stall_ratio_running:g} x the capture's running current, or a start's current not "
                           f"falling below {self.params.start_frac_inrush:g} x its initial inrush), not from a rating")
        return tuple(out)

    @functools.cached_property
    def energised(self) -> np.ndarray:
        """Cycles in which at least one line carries current (bool, n)."""
        thr = self.params.energised_frac_fla * self.current_ref_a
        m = np.nanmax(np.where(np.isnan(self.i_mag), -np.inf, self.i_mag), axis=1)
        return np.isfinite(m) & (m > thr)

    @functools.cached_property
    def dead_line(self) -> np.ndarray:
        """(n, 3) bool: line j dead while the other two carry equal and opposite current."""
        out = np.zeros((self.n, 3), dtype=bool)
        if not self.has_three_currents:
            return out
        p = self.params
        m = np.nan_to_num(self.i_mag, nan=0.0)
        thr = p.energised_frac_fla * self.current_ref_a
        for j in range(3):
            o1, o2 = m[:, (j + 1) % 3], m[:, (j + 2) % 3]
            big = np.maximum(o1, o2)
            # one line open: the other two carry equal and opposite currents (Kirchhoff's current law)
            pair_ok = np.abs(o1 - o2) <= p.pair_balance * np.maximum(big, 1e-12)
            # ... and opposite: 180 deg apart.  A dead sensor leaves them 120 deg apart (waveforms.hookup.sensors)
            p1, p2 = self.i_phasor(LINES[(j + 1) % 3]), self.i_phasor(LINES[(j + 2) % 3])
            if p1 is not None and p2 is not None:
                with np.errstate(all="ignore"):
                    pair_ok &= ~(np.abs(np.angle(-p1 / p2, deg=True)) > ANTIPHASE_TOL_DEG)
            out[:, j] = (m[:, j] < p.dead_line_frac * big) & (big > thr) & pair_ok
        return out

    # -- voltages -----------------------------------------------------------------
    def _phasor(self, label: str | None) -> np.ndarray | None:
        """Per-cycle complex phasor of a channel label from its ``_mag`` / ``_ang_deg`` columns."""
        if label is None:
            return None
        m, a = self.col(f"{label}_mag"), self.col(f"{label}_ang_deg")
        if m is None or a is None:
            return None
        return m * np.exp(1j * np.deg2rad(a))

    def v_phasor(self, conductor: str) -> np.ndarray | None:
        return self._phasor(self.voltage_channels.get(conductor))

    def i_phasor(self, conductor: str) -> np.ndarray | None:
        return self._phasor(self.current_channels.get(conductor))

    @functools.cached_property
    def v_ll_max_ratio(self) -> np.ndarray:
        """Largest line-to-line fundamental voltage over the declared one, per cycle (1 when unknown)."""
        if len(self.voltage_channels) != 3 or not self.declared_voltage_ll_v:
            return np.ones(self.n)
        ph = [self.v_phasor(c) for c in LINES]
        if any(p is None for p in ph):
            return np.ones(self.n)
        if self.terminal_ll_v is not None:  # locked-rotor current follows the voltage at the motor, not at the logger
            ll = np.asarray(self.terminal_ll_v)
        elif self.voltage_reference == "LN":
            ll = np.abs(np.vstack([ph[0] - ph[1], ph[1] - ph[2], ph[2] - ph[0]]))
        else:
            ll = np.abs(np.vstack(ph))
        r = np.nanmax(ll, axis=0) / self.declared_voltage_ll_v
        return np.where(np.isfinite(r), r, 1.0)


def runs(mask: np.ndarray, min_len: int = 1, max_gap: int = 0) -> list[tuple[int, int]]:
    """Runs of True in a bool array as ``[start, stop)`` index pairs.

    Runs separated by at most ``max_gap`` False entries are merged; runs shorter
    than ``min_len`` are dropped.

    Examples
    --------
    >>> import numpy as np
    >>> m = np.array([0, 1, 1, 0, 1, 0, 0, 0, 1, 1, 1], bool)
    >>> runs(m), runs(m, min_len=2), runs(m, max_gap=1)
    ([(1, 3), (4, 5), (8, 11)], [(1, 3), (8, 11)], [(1, 5), (8, 11)])
    """
    m = np.asarray(mask, dtype=bool)
    if m.size == 0:
        return []
    d = np.diff(np.r_[0, m.astype(np.int8), 0])
    starts, stops = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
    if max_gap > 0 and starts.size > 1:
        keep = (starts[1:] - stops[:-1]) > max_gap
        starts = np.r_[starts[0], starts[1:][keep]]
        stops = np.r_[stops[:-1][keep], stops[-1]]
    return [(int(a), int(b)) for a, b in zip(starts, stops, strict=True) if b - a >= min_len]


def schmitt(set_mask: np.ndarray, reset_mask: np.ndarray) -> np.ndarray:
    """Hysteresis state: True from a ``set`` sample until the next ``reset`` sample.

    Vectorised latch: the state at each index is the most recent decisive
    sample (set -> True, reset -> False), False before the first one.

    Examples
    --------
    >>> import numpy as np
    >>> s = np.array([0, 1, 0, 0, 0, 0], bool)
    >>> r = np.array([0, 0, 0, 1, 0, 0], bool)
    >>> schmitt(s, r).tolist()
    [False, True, True, False, False, False]
    """
    s = np.asarray(set_mask, dtype=bool)
    r = np.asarray(reset_mask, dtype=bool) & ~s
    decisive = s | r
    idx = np.where(decisive, np.arange(s.size), -1)
    last = np.maximum.accumulate(idx) if s.size else idx
    return np.where(last >= 0, s[np.maximum(last, 0)], False)


def speed_summary(speed: pd.DataFrame | None, t0_s: float, t1_s: float | None) -> dict[str, Any]:
    """What the speed track says between two instants: windows, estimates, median slip and rpm.

    Only windows wholly inside ``[t0_s, t1_s]`` count (by their ``t_start_s`` and
    ``t_end_s``; by the centre ``t_s`` when the track has no window bounds).

    Examples
    --------
    >>> import numpy as np
    >>> import pandas as pd
    >>> track = pd.DataFrame({"t_s": [5.0, 10.0, 15.0], "slip": [0.02, np.nan, 0.03],
    ...                       "rpm": [1470.0, np.nan, 1455.0], "status": ["ok", "no_peak", "ok"]})
    >>> speed_summary(track, 0.0, None)
    {'speed_windows': 3, 'speed_estimates': 2, 'slip_median': 0.025, 'rpm_median': 1462.5, 'speed_status_counts': {'no_peak': 1, 'ok': 2}}
    """
    if speed is None or len(speed) == 0 or "t_s" not in speed:
        return {"speed_windows": 0}
    t1 = math.inf if t1_s is None else t1_s
    if "t_start_s" in speed and "t_end_s" in speed:
        # only windows lying wholly inside [t0, t1]: a window straddling a change of state mixes two speeds (issue 18)
        inside = (speed["t_start_s"].to_numpy(float) >= t0_s - 1e-9) & (speed["t_end_s"].to_numpy(float) <= t1 + 1e-9)
    else:
        t = speed["t_s"].to_numpy(float)
        inside = (t >= t0_s) & (t <= t1)
    sel = speed[inside]
    out: dict[str, Any] = {"speed_windows": int(len(sel))}
    if len(sel) == 0:
        return out
    est = sel[np.isfinite(sel["slip"].to_numpy(float))] if "slip" in sel else sel.iloc[:0]
    out["speed_estimates"] = int(len(est))
    if len(est):
        out["slip_median"] = float(np.median(est["slip"].to_numpy(float)))
        if "rpm" in est:
            out["rpm_median"] = float(np.median(est["rpm"].to_numpy(float)))
    if "status" in sel:
        vals, cnt = np.unique(sel["status"].astype(str).to_numpy(), return_counts=True)
        out["speed_status_counts"] = {str(v): int(c) for v, c in zip(vals, cnt, strict=True)}
    return out
