"""Time-resolved rotor speed from the stator current spectrum alone (no tachometer).

`track_speed` cuts the current into overlapping windows and, in each, looks for
speed-dependent components (rotor-slot harmonics when the rotor bar count is
known, otherwise mixed-eccentricity sidebands; see `waveforms.speed.signatures`)
only where the nameplate makes them plausible: slips between ``min_slip`` and a
bound derived from the rated slip.

Acceptance rule (designed so that a stalled or de-energised rotor gives no
estimate, never a made-up number):

1. a component peak must stand ``threshold_db`` above the median of the
   local spectrum, outside guard zones around DC and every supply harmonic,
   and be as wide as the window's main lobe (sidelobe ripples are rejected);
2. at least ``min_components`` *different* components (for example the lower
   and the upper eccentricity sideband, or the ``R-1`` and ``R+1`` slot
   harmonics) must give the same slip within ``pair_tol_bins`` of a natural
   frequency bin.  Random noise peaks almost never satisfy both.

Windows that fail say why in ``status``: ``no_current``, ``gap`` (missing
samples), ``no_supply_frequency``, ``unconfirmed`` (one component only) or
``no_signature``.

References
----------
.. [1] K. D. Hurst and T. G. Habetler, "Sensorless speed measurement using
   current harmonic spectral estimation in induction machine drives", IEEE
   Trans. Power Electronics 11(1), 1996 (cited from memory).
.. [2] W. T. Thomson and M. Fenger, "Current signature analysis to detect
   induction motor faults", IEEE Industry Applications Magazine 7(4), 2001
   (cited from memory).
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np
import pandas as pd

from ..capture import Capture, Channel, from_arrays
from ..errors import InvalidParameterError
from ..settings import check_fields, setting
from . import signatures as sg
from .spectrum import (
    Candidates,
    Spectrum,
    decimate,
    decimation_factor,
    decimation_filter,
    find_candidates,
    parabolic_peak,
    alpha_beta,
    refine_peak,
    window_spectrum,
)
from .spectrum import _window  # the speed spectra's own Blackman-Harris window

TRACK_COLUMNS: tuple[str, ...] = (
    "t_s", "t_start_s", "t_end_s", "f_supply_hz", "slip", "rpm", "f_rotor_hz", "component",
    "prominence_db", "status", "n_components", "f_component_hz", "i_rms_a",
    "fundamental_side_db", "component_side_db",
)

STATUS_ESTIMATE = "estimate"


@dataclasses.dataclass(frozen=True)
class SpeedSettings:
    """Parameters of the speed search (all optional); each field's meaning and unit is given with it.

    ``components="auto"`` uses slot harmonics when the rotor bar count is known
    and the band is unambiguous (always for the pair nu = -1, +1 with
    ``min_components >= 2``), else (or when they are not found) eccentricity sidebands.
    """

    window_s: float = setting(10.0, "window length [s]")
    hop_s: float | None = setting(None, "step between window starts [s]; absent = half the window")
    min_slip: float = setting(0.0, "lowest slip searched [-]")
    max_slip: float | None = setting(None, "highest slip searched [-]; absent = max_slip_factor x rated slip, capped at 0.5")
    max_slip_factor: float = setting(5.0, "multiple of the rated slip used when max_slip is not given [-]")
    threshold_db: float = setting(12.0, "least prominence of an accepted component over the local median floor [dB]")
    min_components: int = setting(2, "least number of different components that must agree on the slip [-]")
    pair_tol_bins: float = setting(0.5, "agreement tolerance in natural frequency bins of the less sensitive component [bins]")
    components: str = setting("auto", "'auto', 'slot' (rotor-slot harmonics) or 'eccentricity' (sidebands)")
    eccentricity_orders: tuple[int, ...] = setting((1,), "orders m of the sidebands f1 (1 +/- m (1-s)/p) [-]")
    slot_nus: tuple[int, ...] = setting((-1, 1), "signed odd nu of the slot harmonics f1 (R (1-s)/p + nu) [-]")
    guard_bins: float = setting(5.0, "half-width of the guard zone around DC and each supply harmonic [natural bins]")
    pad: int = setting(4, "zero-padding factor of the coarse spectrum [-]")
    refine: str = setting("parabola", "peak interpolation: 'parabola' on the zero-padded grid (fast; bias < 5e-5 bin) "
                          "or 'zoom' (chirp-z zoom around each peak first)")
    min_current_a: float | None = setting(None, "below this RMS a window is no_current [A]; absent = 2 % of the nameplate FLA, else 0.01 A")

    def __post_init__(self) -> None:
        check_fields(self)  # types; the bounds below are the speed search's own
        if not (0.05 <= self.window_s <= 600):
            raise InvalidParameterError(f"window_s={self.window_s!r} must be between 0.05 and 600 s")
        if self.hop_s is not None and not (0 < self.hop_s):
            raise InvalidParameterError(f"hop_s={self.hop_s!r} must be positive")
        if not (-0.1 <= self.min_slip < 1.0):
            raise InvalidParameterError(f"min_slip={self.min_slip!r} must be in [-0.1, 1)")
        if self.max_slip is not None and not (self.min_slip < self.max_slip <= 1.0):
            raise InvalidParameterError(f"max_slip={self.max_slip!r} must be above min_slip={self.min_slip!r} and at most 1")
        if self.components not in ("auto", "slot", "eccentricity"):
            raise InvalidParameterError(f"components={self.components!r} must be 'auto', 'slot' or 'eccentricity'")
        if self.min_components < 1:
            raise InvalidParameterError(f"min_components={self.min_components!r} must be >= 1")
        if self.refine not in ("parabola", "zoom"):
            raise InvalidParameterError(f"refine={self.refine!r} must be 'parabola' or 'zoom'")
        if not (self.threshold_db > 0):
            raise InvalidParameterError(f"threshold_db={self.threshold_db!r} must be positive")

    @property
    def hop(self) -> float:
        return self.window_s / 2.0 if self.hop_s is None else self.hop_s


@dataclasses.dataclass(frozen=True)
class MotorSpec:
    """What the search needs from the nameplate."""

    pole_pairs: int
    rotor_bars: int | None
    rated_slip: float | None
    nominal_frequency_hz: float
    fla_a: float | None

    @classmethod
    def build(cls, nameplate: Any, pole_pairs: int | None, rotor_bars: int | None,
              nominal_frequency_hz: float | None) -> MotorSpec:
        if nameplate is None and pole_pairs is None:
            raise InvalidParameterError("give a nameplate (or pole_pairs) so the speed search knows the pole count")
        p = pole_pairs if pole_pairs is not None else nameplate.pole_pairs
        if not (isinstance(p, (int, np.integer)) and p >= 1):
            raise InvalidParameterError(f"pole_pairs={p!r} must be a whole number >= 1")
        bars = rotor_bars if rotor_bars is not None else (None if nameplate is None else nameplate.rotor_bars)
        fn = nominal_frequency_hz or (None if nameplate is None else nameplate.rated_frequency_hz) or 50.0
        return cls(
            pole_pairs=int(p), rotor_bars=bars,
            rated_slip=None if nameplate is None else float(nameplate.rated_slip),
            nominal_frequency_hz=float(fn), fla_a=None if nameplate is None else float(nameplate.fla_a),
        )


@dataclasses.dataclass(frozen=True)
class WindowResult:
    """Everything found in one window (what the plot shows).

    ``bands`` maps a signature label to its one-sided search band (lo, hi) [Hz];
    ``candidates`` maps it to the peaks found there; ``used`` lists
    ``(label, f_hz, prominence_db, slip)`` of the components that agreed.
    """

    t_start_s: float
    t_end_s: float
    f_supply_hz: float
    slip: float
    component: str
    prominence_db: float
    status: str
    spectrum: Spectrum | None
    bands: dict[str, tuple[float, float]]
    candidates: dict[str, Candidates]
    used: tuple[tuple[str, float, float, float], ...]
    f1_power: float
    i_rms_a: float
    pole_pairs: int


def slip_search_range(settings: SpeedSettings, motor: MotorSpec) -> tuple[float, float]:
    """``(min_slip, max_slip)`` searched: the configured bound, or ``max_slip_factor`` x rated slip (<= 0.5).

    Examples
    --------
    With no bound configured the search goes to `SpeedSettings.max_slip_factor`
    times the rated slip (never above 0.5):

    >>> slip_search_range(SpeedSettings(), MotorSpec(2, 28, 0.02, 50.0, 10.0))
    (0.0, 0.1)
    """
    if settings.max_slip is not None:
        return settings.min_slip, settings.max_slip
    rated = motor.rated_slip if motor.rated_slip is not None else 0.03
    hi = min(0.5, settings.max_slip_factor * rated)
    return settings.min_slip, max(hi, settings.min_slip + 0.01)


def _families(settings: SpeedSettings, motor: MotorSpec, s_lo: float, s_hi: float) -> list[tuple[str, tuple[sg.Signature, ...]]]:
    fams: list[tuple[str, tuple[sg.Signature, ...]]] = []
    slot_ok = motor.rotor_bars is not None
    if slot_ok and settings.components == "auto":
        # harmonic nu at slip s sits where nu + 2 sits at slip s + 2p/R: a wider band is ambiguous
        # unless a pair is required and no two pairs of nu have the same spacing (e.g. nu = -1, +1)
        nus = sorted(set(settings.slot_nus))
        gaps = [b - a for i, a in enumerate(nus) for b in nus[i + 1:]]
        unique_pairs = settings.min_components >= 2 and len(gaps) == len(set(gaps))
        slot_ok = unique_pairs or (s_hi - s_lo) < 2.0 * motor.pole_pairs / motor.rotor_bars
    if settings.components == "slot" and motor.rotor_bars is None:
        raise InvalidParameterError("components='slot' needs the rotor bar count (nameplate rotor_bars)")
    if settings.components in ("auto", "slot") and slot_ok:
        fams.append((sg.COMPONENT_SLOT, sg.slot_signatures(motor.rotor_bars, settings.slot_nus)))
    if settings.components in ("auto", "eccentricity"):
        fams.append((sg.COMPONENT_ECCENTRICITY, sg.eccentricity_signatures(settings.eccentricity_orders)))
    return fams


def highest_frequency_hz(settings: SpeedSettings, motor: MotorSpec) -> float:
    """Highest component frequency searched, with 10 % margin on the supply frequency [Hz].

    Examples
    --------
    For a 28-bar, four-pole 50 Hz motor the upper slot harmonic at zero slip,
    f1 (R/p + 1) = 50 x (28/2 + 1) = 750 Hz, on a supply 10 % high (825 Hz), plus
    ten natural bins of the 10 s window (1 Hz), bounds the search (slot-harmonic
    formula of Hurst & Habetler 1996):

    >>> print(round(highest_frequency_hz(SpeedSettings(), MotorSpec(2, 28, 0.02, 50.0, 10.0))))
    826
    """
    s_lo, s_hi = slip_search_range(settings, motor)
    f1 = 1.1 * motor.nominal_frequency_hz
    top = f1 * 1.1
    for _, sigs in _families(settings, motor, s_lo, s_hi):
        for sig in sigs:
            top = max(top, sg.signature_band_hz(sig, s_lo, s_hi, f1, motor.pole_pairs)[1])
    return top + 10.0 * 1.0 / settings.window_s


def _agree(sigs, cands: list[Candidates], f1: float, p: int, bin_hz: float, settings: SpeedSettings,
           s_lo: float, s_hi: float, signs: list[int]):
    """Pick the slip that most different components agree on; None when fewer than min_components."""
    sig_i, slip, prom, tol, fhz = [], [], [], [], []
    for j, (sig, c, sign) in enumerate(zip(sigs, cands, signs, strict=True)):
        if len(c) == 0 or sign == 0:
            continue
        ok = c.prominence_db >= settings.threshold_db
        s = sg.slip_from_frequency(sig, sign * c.f_hz[ok], f1, p)
        t = settings.pair_tol_bins * bin_hz * p / (f1 * abs(sig.a))
        inb = (s >= s_lo - t) & (s <= s_hi + t)
        sig_i.append(np.full(inb.sum(), j))
        slip.append(s[inb])
        prom.append(c.prominence_db[ok][inb])
        tol.append(np.full(inb.sum(), t))
        fhz.append(c.f_hz[ok][inb])
    if not sig_i:
        return None, False
    sig_i, slip, prom, tol, fhz = (np.concatenate(a) for a in (sig_i, slip, prom, tol, fhz))
    if slip.size == 0:
        return None, False
    # agreement matrix between candidates of different signatures
    close = np.abs(slip[:, None] - slip[None, :]) <= np.maximum(tol[:, None], tol[None, :])
    close &= sig_i[:, None] != sig_i[None, :]
    n_sig = len(sigs)
    best_prom = np.full((slip.size, n_sig), -np.inf)
    best_idx = np.full((slip.size, n_sig), -1)
    for j in range(n_sig):  # per signature (2-4), not per sample
        m = close & (sig_i[None, :] == j)
        pj = np.where(m, prom[None, :], -np.inf)
        best_idx[:, j] = np.argmax(pj, axis=1)
        best_prom[:, j] = pj[np.arange(slip.size), best_idx[:, j]]
    best_prom[np.arange(slip.size), sig_i] = prom
    best_idx[np.arange(slip.size), sig_i] = np.arange(slip.size)
    found = np.isfinite(best_prom)
    n_comp = found.sum(axis=1)
    score = np.where(found, best_prom, 0.0).sum(axis=1)
    anchor = int(np.lexsort((score, n_comp))[-1])
    if n_comp[anchor] < settings.min_components:
        return None, True
    used = best_idx[anchor][found[anchor]]
    a2 = np.array([sigs[k].a ** 2 for k in sig_i[used]])
    w = a2 * 10.0 ** (prom[used] / 10.0)  # slip variance ~ 1 / (SNR a^2): inverse-variance weights
    s_est = float(np.sum(w * slip[used]) / np.sum(w))
    rows = tuple((sigs[sig_i[k]].label, float(fhz[k]), float(prom[k]), float(slip[k])) for k in used)
    return (s_est, float(prom[used].min()), rows), True


def analyse_window(
    x: np.ndarray,
    sample_rate_hz: float,
    motor: MotorSpec,
    settings: SpeedSettings,
    *,
    f1_hz: float = math.nan,
    t_start_s: float = 0.0,
    phase_rms: bool = False,
) -> WindowResult:
    """Search one window of (decimated) current for the speed signature.

    Parameters
    ----------
    x : ndarray, shape (n_signals, N)
        Real line currents or one complex space vector [A].
    sample_rate_hz : float
        Rate of ``x`` [Hz].
    motor : MotorSpec
    settings : SpeedSettings
    f1_hz : float
        Supply frequency for this window [Hz]; NaN to estimate it from the
        current's fundamental in the same window.
    t_start_s : float
        Start of the window, for the record [s].
    phase_rms : bool
        ``x`` is a space vector: report the phase RMS ``sqrt(mean |x|^2 / 2)``.

    Examples
    --------
    >>> from waveforms.speed.synthetic import synthetic_currents
    >>> i = synthetic_currents(12.0, 4000.0, 0.02, f1_hz=50.0, pole_pairs=2, rotor_bars=28)

    >>> r = analyse_window(i[:, :40_000], 4000.0, MotorSpec(2, 28, 0.02, 50.0, 10.0), SpeedSettings(), f1_hz=50.0)
    >>> print(r.status, round(r.slip, 4), r.component)
    estimate 0.02 slot
    """
    x = np.atleast_2d(x)
    n = x.shape[-1]
    t_end = t_start_s + n / sample_rate_hz
    p = motor.pole_pairs

    def result(status, spec=None, f1=math.nan, slip=math.nan, comp="", conf=math.nan, bands=None,
               cands=None, used=(), f1p=math.nan, irms=math.nan):
        return WindowResult(t_start_s, t_end, f1, slip, comp, conf, status, spec, bands or {}, cands or {},
                            used, f1p, irms, p)

    if not np.all(np.isfinite(x)):
        return result("gap")
    ms = np.mean(np.abs(x) ** 2, axis=-1)
    irms = float(np.sqrt(ms.max() / 2.0) if phase_rms else np.sqrt(ms.max()))
    i_min = settings.min_current_a
    if i_min is None:
        i_min = 0.02 * motor.fla_a if motor.fla_a else 0.01
    if irms < i_min:
        return result("no_current", irms=irms)
    spec = window_spectrum(x, sample_rate_hz, pad=settings.pad)
    fn = motor.nominal_frequency_hz
    sel = (spec.f_hz > 0.9 * fn) & (spec.f_hz < 1.1 * fn)
    if not sel.any():
        return result("no_supply_frequency", spec=spec, irms=irms)
    k = int(np.flatnonzero(sel)[np.argmax(spec.power[sel])])
    f1_loc, f1_pow = refine_peak(spec, float(spec.f_hz[k])) if settings.refine == "zoom" else parabolic_peak(spec, k)
    f1 = f1_hz if np.isfinite(f1_hz) else f1_loc
    if not (0.9 * fn < f1 < 1.1 * fn):
        return result("no_supply_frequency", spec=spec, irms=irms)
    s_lo, s_hi = slip_search_range(settings, motor)
    bands: dict[str, tuple[float, float]] = {}
    cands: dict[str, Candidates] = {}
    saw_any = False
    nyq = 0.5 * sample_rate_hz
    for family, sigs in _families(settings, motor, s_lo, s_hi):
        fam_c, signs = [], []
        for sig in sigs:
            lo, hi, sign = sg.signature_band_hz(sig, s_lo, s_hi, f1, p)
            signs.append(sign if hi < 0.8 * nyq else 0)
            pad_hz = 2.0 * spec.bin_hz
            bands[sig.label] = (lo, hi)
            c = find_candidates(spec, lo - pad_hz, hi + pad_hz, f1, guard_bins=settings.guard_bins,
                                min_prominence_db=settings.threshold_db, refine=settings.refine) if signs[-1] else \
                Candidates(*(np.empty(0) for _ in range(5)))
            cands[sig.label] = c
            fam_c.append(c)
        est, saw = _agree(sigs, fam_c, f1, p, spec.bin_hz, settings, s_lo, s_hi, signs)
        saw_any |= saw
        if est is not None:
            s_est, conf, used = est
            return result(STATUS_ESTIMATE, spec, f1, s_est, family, conf, bands, cands, used, f1_pow, irms)
    return result("unconfirmed" if saw_any else "no_signature", spec, f1, bands=bands, cands=cands,
                  f1p=f1_pow, irms=irms)


# -- supply frequency over time ------------------------------------------------------
def _supply_function(supply_hz: Any):
    """Turn the accepted forms of ``supply_hz`` into ``f(t0, t1) -> mean f1 [Hz] or NaN``."""
    if supply_hz is None:
        return lambda t0, t1: math.nan
    if isinstance(supply_hz, (int, float, np.floating)):
        v = float(supply_hz)
        if not (20.0 < v < 500.0):
            raise InvalidParameterError(f"supply_hz={v!r} is not a plausible supply frequency")
        return lambda t0, t1: v
    if isinstance(supply_hz, pd.DataFrame):
        for col in ("t_s", "frequency_hz"):
            if col not in supply_hz.columns:
                raise InvalidParameterError(f"supply_hz table has no column {col!r}; columns are {list(supply_hz.columns)}")
        t = supply_hz["t_s"].to_numpy(float)
        f = supply_hz["frequency_hz"].to_numpy(float)
    elif isinstance(supply_hz, tuple) and len(supply_hz) == 2:
        t, f = (np.asarray(a, dtype=float) for a in supply_hz)
    else:
        arr = np.asarray(supply_hz, dtype=float)
        if arr.ndim != 2 or arr.shape[1] != 2:
            raise InvalidParameterError(f"supply_hz array must have shape (n, 2) of (t_s, f_hz), got {arr.shape}")
        t, f = arr[:, 0], arr[:, 1]
    if t.shape != f.shape or t.size == 0:
        raise InvalidParameterError("supply_hz: t_s and frequency_hz must be non-empty and of equal length")
    ok = np.isfinite(t) & np.isfinite(f)
    t, f = t[ok], f[ok]
    order = np.argsort(t)
    t, f = t[order], f[order]
    cs = np.concatenate(([0.0], np.cumsum(f)))

    def mean_in(t0: float, t1: float) -> float:
        i0, i1 = np.searchsorted(t, [t0, t1])
        return float((cs[i1] - cs[i0]) / (i1 - i0)) if i1 > i0 else math.nan

    return mean_in


# -- the track -----------------------------------------------------------------------
def _as_capture(currents: Any, sample_rate_hz: float | None) -> Capture:
    if isinstance(currents, Capture):
        return currents
    if sample_rate_hz is None:
        raise InvalidParameterError("sample_rate_hz is needed when currents are given as an array")
    arr = np.atleast_2d(np.asarray(currents, dtype=float))
    if arr.shape[0] > 3:
        raise InvalidParameterError(f"currents must have shape (n_phases <= 3, n_samples), got {arr.shape}")
    chans = tuple(Channel(f"I{c.lower()}", "current", c, "line", "A") for c in "ABC"[: arr.shape[0]])
    return from_arrays(arr, chans, sample_rate_hz)


@dataclasses.dataclass(frozen=True)
class Decimator:
    """How the speed track's current is decimated: channels, factor, filter (see `decimated_current`).

    `block` is a pure function of one `Chunk` of the whole capture (all channels, any chunk
    size, an overlap of at least `margin` + q samples), so the measurement engine's shared
    pass can compute the decimated current from the blocks it reads, in any thread, and
    `assemble` joins the blocks: the result equals `decimated_current` of the capture.
    """

    rows: tuple[int, ...]
    q: int
    use_sv: bool
    taps: np.ndarray | None
    margin: int
    n_samples: int

    @property
    def overlap_needed(self) -> int:
        """Least chunk overlap [samples] for `block` to see all it needs."""
        return self.margin + self.q

    def block(self, start_index: int, data: np.ndarray, lead: int, trail: int) -> np.ndarray:
        """Decimated outputs whose input sample (j q) lies in the chunk's owned range."""
        q, n = self.q, self.n_samples
        pos, own_stop = start_index + lead, start_index + data.shape[1] - trail
        j0, j1 = -(-pos // q), -(-own_stop // q)
        if j1 <= j0:
            return np.empty((2 if self.use_sv else len(self.rows), 0))
        lo = max(0, j0 * q - self.margin)
        hi = min(n, j1 * q + self.margin)
        if lo < start_index or hi > start_index + data.shape[1]:
            raise InvalidParameterError(f"chunk overlap {lead}/{trail} samples is below the {self.overlap_needed} the decimation needs")
        x = data[list(self.rows), lo - start_index : hi - start_index]
        # the space vector as two real rows (alpha, beta): real filtering is much faster than complex
        sig = alpha_beta(*x) if self.use_sv else x
        y = decimate(sig, q, self.taps)
        a = (j0 * q - lo) // q
        return y[:, a : a + (j1 - j0)]

    def assemble(self, blocks: list[np.ndarray]) -> np.ndarray:
        """The decimated signal from the blocks in time order: (1, m) complex space vector or (n_lines, m) real."""
        if not blocks:
            return np.empty((1 if self.use_sv else len(self.rows), 0), dtype=complex if self.use_sv else float)
        # filled block by block into one array: no concatenated copy beside the result (memory, issue 10)
        m = sum(int(b.shape[1]) for b in blocks)
        out = np.empty((1, m), dtype=complex) if self.use_sv else np.empty((blocks[0].shape[0], m), dtype=np.result_type(*blocks))
        pos = 0
        for b in blocks:
            n = int(b.shape[1])
            if n > 1 and b.strides[-1] == 0:  # one value broadcast (the engine's NaN for a time-stamp gap): no temporary
                out[:, pos : pos + n] = complex(b[0, 0], b[1, 0]) if self.use_sv else b[:, :1]
            else:
                out[:, pos : pos + n] = (b[0] + 1j * b[1]) if self.use_sv else b
            pos += n
        return out


def make_decimator(capture: Capture, names: list[str], q: int, use_sv: bool, n_samples: int | None = None) -> Decimator:
    """The `Decimator` for channels ``names`` of ``capture`` by ``q`` (samples 0 .. ``n_samples``).

    Examples
    --------
    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> cap = from_arrays(np.zeros((3, 1000)), standard_channels(voltages=None), 4000.0)
    >>> d = make_decimator(cap, ["Ia", "Ib", "Ic"], 5, True)
    >>> print(d.q, d.use_sv, d.rows, d.n_samples)
    5 True (0, 1, 2) 1000
    """
    taps = decimation_filter(q) if q > 1 else None
    margin = 0 if q == 1 else int(math.ceil(len(taps) / q)) * q
    return Decimator(tuple(capture.index_of(nm) for nm in names), q, use_sv, taps, margin,
                     capture.n_samples if n_samples is None else n_samples)


def _decimated(capture: Capture, names: list[str], q: int, use_sv: bool, i0: int, i1: int) -> np.ndarray:
    """Space vector (or the line currents) of samples [i0, i1), low-passed and down-sampled by q."""
    dec = make_decimator(capture, names, q, use_sv, n_samples=i1 - i0)
    dec = dataclasses.replace(dec, rows=tuple(range(len(names))))  # the chunks hold only these channels
    out = [dec.block(ch.start_index - i0, ch.data, ch.lead, ch.trail)
           for ch in capture.iter_chunks(q * (1 << 16), dec.overlap_needed, names, i0, i1)]
    return dec.assemble(out)


@dataclasses.dataclass(frozen=True)
class DecimatedCurrent:
    """The speed track's decimated current of a whole capture, made during the measurement pass.

    ``y`` as `Decimator.assemble` returns it; ``q`` the factor; ``use_sv`` whether it is the
    space vector of the three line currents; ``names`` the current channels.
    """

    y: np.ndarray
    q: int
    use_sv: bool
    names: tuple[str, ...]


def speed_decimator(capture: Capture, nameplate: Any = None, *, pole_pairs: int | None = None,
                    rotor_bars: int | None = None, settings: SpeedSettings | None = None,
                    start_s: float = 0.0, stop_s: float | None = None, **options: Any) -> Decimator | None:
    """The `Decimator` `track_speed` would use on the whole of ``capture`` with these arguments, or None.

    None when the track would not cover the whole capture or cannot be made (no pole count,
    no current): the speed stage then reads what it needs itself.

    Examples
    --------
    >>> from waveforms.speed.synthetic import synthetic_currents
    >>> i = synthetic_currents(12.0, 4000.0, 0.02, f1_hz=50.0, pole_pairs=2, rotor_bars=28)

    >>> from waveforms.capture import from_arrays, standard_channels
    >>> cap = from_arrays(i, standard_channels(voltages=None), 4000.0, nominal_frequency_hz=50.0)
    >>> d = speed_decimator(cap, pole_pairs=2, rotor_bars=28)
    >>> print(d.q, d.use_sv)
    1 True

    At 4 kS/s there is no room to decimate below 4 x 826 Hz; without a pole
    count there is no track, so no decimator:

    >>> speed_decimator(cap) is None
    True
    """
    options.pop("supply_hz", None)
    if start_s != 0.0 or stop_s is not None:
        return None
    try:
        settings, cap, motor, names, use_sv, fs = _prepare(capture, None, nameplate, pole_pairs, rotor_bars, settings, options)
    except (InvalidParameterError, TypeError):
        return None
    q = decimation_factor(fs, highest_frequency_hz(settings, motor))
    return make_decimator(cap, names, q, use_sv)


def _prepare(
    currents: Any, sample_rate_hz: float | None, nameplate: Any, pole_pairs: int | None,
    rotor_bars: int | None, settings: SpeedSettings | None, options: dict[str, Any],
) -> tuple[SpeedSettings, Capture, MotorSpec, list[str], bool, float]:
    """Settings, capture, motor figures and current channels shared by `track_speed` and `window_detail`."""
    if settings is None:
        settings = SpeedSettings(**options)
    elif options:
        settings = dataclasses.replace(settings, **options)
    cap = _as_capture(currents, sample_rate_hz)
    if nameplate is None:
        nameplate = cap.nameplate
    motor = MotorSpec.build(nameplate, pole_pairs, rotor_bars, cap.nominal_frequency_hz)
    phases = cap.phase_channels("current")
    if not phases:
        raise InvalidParameterError(f"capture has no line current channel; channels are {list(cap.channel_names)}")
    names = [phases[c].name for c in sorted(phases)]
    use_sv = len(names) == 3
    fs = cap.sample_rate_hz
    return settings, cap, motor, names, use_sv, fs

def track_speed(
    currents: Any,
    sample_rate_hz: float | None = None,
    nameplate: Any = None,
    *,
    supply_hz: Any = None,
    pole_pairs: int | None = None,
    rotor_bars: int | None = None,
    start_s: float = 0.0,
    stop_s: float | None = None,
    settings: SpeedSettings | None = None,
    decimated: DecimatedCurrent | None = None,
    threads: int = 1,
    **options: Any,
) -> pd.DataFrame:
    """Slip and speed per window, from the stator currents only.

    Parameters
    ----------
    currents : Capture or array_like
        A `Capture` (its line currents Ia/Ib/Ic are used; with all three, the
        complex space vector), or an array of shape (n_phases <= 3, n) or (n,) [A].
    sample_rate_hz : float, optional
        Needed for an array [Hz].
    nameplate : Nameplate, optional
        Pole count, rated slip, rotor bars, FLA.  Defaults to ``capture.nameplate``.
    supply_hz : None, float, DataFrame, (t_s, f_hz) tuple or (n, 2) array
        Supply frequency over time, e.g. ``measure(capture).cycles[["t_s", "frequency_hz"]]``;
        each window uses the mean over its span.  None: estimated from the
        current fundamental in each window [Hz].
    pole_pairs, rotor_bars : int, optional
        Override the nameplate.
    start_s, stop_s : float
        Part of the capture to track [s].
    settings : SpeedSettings, optional
    decimated : DecimatedCurrent, optional
        The decimated current of the whole capture, made by the measurement pass
        (`speed_decimator`); used instead of reading the capture again when it matches.
    threads : int
        Windows analysed in parallel (threads); the result does not depend on it.
    **options
        Fields of `SpeedSettings` (``window_s=2.0``, ``max_slip=0.3`` ...).

    Returns
    -------
    DataFrame
        One row per window with `TRACK_COLUMNS`: ``t_s`` (centre), ``t_start_s``,
        ``t_end_s``, ``f_supply_hz``, ``slip`` [-], ``rpm``, ``f_rotor_hz`` (shaft
        rotation frequency), ``component`` ("slot", "eccentricity" or ""),
        ``prominence_db`` (prominence of the weakest agreeing component over
        the local median floor), ``status``, ``n_components``,
        ``f_component_hz`` (strongest agreeing component), ``i_rms_a``
        (current RMS below the highest searched frequency: with three
        currents ``sqrt(mean |i_s|^2 / 2)`` of the space vector, which is the
        phase RMS for balanced currents and sqrt(2/3) = 0.816 x the line RMS
        for a single-phased pair, ia = -ib, ic = 0; else the largest line RMS).  ``slip``/``rpm`` are NaN
        unless ``status == "estimate"``.

    References
    ----------
    Hurst & Habetler 1996; Thomson & Fenger 2001 (see module docstring).

    Examples
    --------
    >>> from waveforms.speed.synthetic import synthetic_currents
    >>> i = synthetic_currents(12.0, 4000.0, 0.02, f1_hz=50.0, pole_pairs=2, rotor_bars=28)

    One 10 s window of a four-pole motor at 2 % slip on 50 Hz:
    (1 - s) 120 f / P = 0.98 x 1500 = 1470 rpm (the synchronous-speed formula):

    >>> tr = track_speed(i, 4000.0, pole_pairs=2, rotor_bars=28, supply_hz=50.0)
    >>> print(tr[["t_s", "slip", "status"]].round(4).to_string(index=False), round(float(tr.rpm[0]), 1))
     t_s  slip   status
     5.0  0.02 estimate 1470.0
    """
    settings, cap, motor, names, use_sv, fs = _prepare(
        currents, sample_rate_hz, nameplate, pole_pairs, rotor_bars, settings, options
    )
    i0 = int(round(start_s * fs))
    i1 = cap.n_samples if stop_s is None else min(cap.n_samples, int(round(stop_s * fs)))
    if not (0 <= i0 < i1):
        raise InvalidParameterError(f"start_s={start_s!r}, stop_s={stop_s!r} select no samples of a {cap.duration_s:.3f} s capture")
    q = decimation_factor(fs, highest_frequency_hz(settings, motor))
    fsd = fs / q
    if (decimated is not None and i0 == 0 and i1 == cap.n_samples and decimated.q == q
            and decimated.use_sv == use_sv and decimated.names == tuple(names)):
        y = decimated.y
    else:
        y = _decimated(cap, names, q, use_sv, i0, i1)
    win = int(round(settings.window_s * fsd))
    hop = max(1, int(math.floor(settings.hop * fsd + 1e-9)))
    n_win = 0 if y.shape[1] < win else (y.shape[1] - win) // hop + 1
    f_supply = _supply_function(supply_hz)

    def one(w: int) -> dict[str, Any]:  # per window (tens to hundreds), each vectorised
        a = w * hop
        t0 = (i0 + a * q) / fs
        t1 = t0 + win / fsd
        r = analyse_window(y[:, a : a + win], fsd, motor, settings, f1_hz=f_supply(t0, t1), t_start_s=t0,
                           phase_rms=use_sv)
        row = _row(r)
        if use_sv and r.status == STATUS_ESTIMATE:
            row["fundamental_side_db"], row["component_side_db"] = side_db(
                y[0, a : a + win], fsd, [row["f_supply_hz"], row["f_component_hz"]])
        return row

    if threads > 1 and n_win > 1:  # the FFTs release the GIL; results in window order whatever the thread count
        import concurrent.futures

        with concurrent.futures.ThreadPoolExecutor(min(threads, n_win)) as pool:
            rows = list(pool.map(one, range(n_win)))
    else:
        rows = [one(w) for w in range(n_win)]
    return pd.DataFrame(rows, columns=list(TRACK_COLUMNS)).astype(
        {"slip": float, "rpm": float, "f_rotor_hz": float, "prominence_db": float, "n_components": int,
         "fundamental_side_db": float, "component_side_db": float}
    )


def side_db(x: np.ndarray, sample_rate_hz: float, f_hz) -> np.ndarray:
    """``10 log10(P(+f) / P(-f))`` of a complex space-vector window at each frequency of ``f_hz`` [dB].

    Single-bin DFTs of the Blackman-Harris-windowed samples at ``+f`` and
    ``-f``: positive for a component turning with the positive-sequence field,
    negative against it, near 0 for a pulsating (single-phase) one; NaN for a
    non-finite frequency (common practice, no source).

    Examples
    --------
    A positive-sequence 50 Hz vector with 1 % of negative sequence: the +50 Hz
    line is 10 log10(1 / 0.01^2) = 40 dB above the -50 Hz one:

    >>> import numpy as np
    >>> t = np.arange(4000) / 4000.0
    >>> x = np.exp(2j * np.pi * 50 * t) + 0.01 * np.exp(-2j * np.pi * 50 * t)
    >>> side_db(x, 4000.0, [50.0]).round(1).tolist()
    [40.0]
    """
    f = np.atleast_1d(np.asarray(f_hz, dtype=float))
    n = x.shape[-1]
    xw = np.asarray(x) * _window(n)
    k = np.arange(n) / sample_rate_hz
    out = np.full(f.size, np.nan)
    ok = np.isfinite(f)
    if ok.any():
        e = np.exp(-2j * np.pi * np.outer(np.concatenate((f[ok], -f[ok])), k))  # rows: +f..., -f...
        p = np.abs(e @ xw) ** 2
        m = int(ok.sum())
        with np.errstate(divide="ignore"):
            out[ok] = 10.0 * np.log10(np.maximum(p[:m], 1e-300) / np.maximum(p[m:], 1e-300))
    return out


def _row(r: WindowResult) -> dict[str, Any]:
    est = r.status == STATUS_ESTIMATE
    slip = r.slip if est else math.nan
    best = max(r.used, key=lambda u: u[2]) if r.used else None
    return {
        "t_s": 0.5 * (r.t_start_s + r.t_end_s), "t_start_s": r.t_start_s, "t_end_s": r.t_end_s,
        "f_supply_hz": r.f_supply_hz, "slip": slip,
        "rpm": float(sg.speed_rpm(slip, r.f_supply_hz, r.pole_pairs)) if est else math.nan,
        "f_rotor_hz": float(sg.rotor_frequency_hz(slip, r.f_supply_hz, r.pole_pairs)) if est else math.nan,
        "component": r.component if est else "", "prominence_db": r.prominence_db if est else math.nan,
        "status": r.status, "n_components": len(r.used),
        "f_component_hz": best[1] if best else math.nan, "i_rms_a": r.i_rms_a,
        "fundamental_side_db": math.nan, "component_side_db": math.nan,
    }


def window_detail(
    currents: Any,
    t_start_s: float,
    sample_rate_hz: float | None = None,
    nameplate: Any = None,
    *,
    supply_hz: Any = None,
    pole_pairs: int | None = None,
    rotor_bars: int | None = None,
    settings: SpeedSettings | None = None,
    decimated: DecimatedCurrent | None = None,
    **options: Any,
) -> WindowResult:
    """The full `WindowResult` (spectrum, bands, candidates) of the window starting at ``t_start_s``; for plots.

    With ``decimated`` (the whole capture's decimated current kept by the measurement pass,
    `waveforms.measure.Measurements.decimated`) the window is cut from it and nothing is
    read; the result is the same.

    Examples
    --------
    >>> from waveforms.speed.synthetic import synthetic_currents
    >>> i = synthetic_currents(12.0, 4000.0, 0.02, f1_hz=50.0, pole_pairs=2, rotor_bars=28)

    >>> r = window_detail(i, 0.0, 4000.0, pole_pairs=2, rotor_bars=28, supply_hz=50.0)
    >>> print(r.status, round(r.slip, 4), sorted(r.bands))
    estimate 0.02 ['1R+1', '1R-1']
    """
    settings, cap, motor, names, use_sv, fs = _prepare(
        currents, sample_rate_hz, nameplate, pole_pairs, rotor_bars, settings, options
    )
    q = decimation_factor(fs, highest_frequency_hz(settings, motor))
    i0 = int(round(t_start_s / (q / fs))) * q
    n_dec = int(round(settings.window_s * fs / q))
    if 0 <= i0 and n_dec - (cap.n_samples - i0) // q == 1:
        n_dec -= 1  # the last window of a capture may be one decimated sample short
    n = n_dec * q
    if not (0 <= i0 and i0 + n <= cap.n_samples):
        raise InvalidParameterError(f"window {t_start_s} s + {settings.window_s} s is outside the {cap.duration_s:.3f} s capture")
    if decimated is not None and decimated.q == q and decimated.use_sv == use_sv and decimated.names == tuple(names):
        y, a = decimated.y, i0 // q
    else:
        margin = 0 if q == 1 else int(math.ceil(len(decimation_filter(q)) / q)) * q
        lo, hi = max(0, i0 - margin), min(cap.n_samples, i0 + n + margin)
        y = _decimated(cap, names, q, use_sv, lo, hi)
        a = (i0 - lo) // q
    t0 = i0 / fs
    f1 = _supply_function(supply_hz)(t0, t0 + settings.window_s)
    return analyse_window(y[:, a : a + n // q], fs / q, motor, settings, f1_hz=f1, t_start_s=t0, phase_rms=use_sv)


def track_transient(
    currents: Any,
    start_s: float,
    end_s: float,
    sample_rate_hz: float | None = None,
    nameplate: Any = None,
    *,
    window_s: float = 1.0,
    hop_s: float | None = 0.25,
    max_slip: float = 1.0,
    **kwargs: Any,
) -> pd.DataFrame:
    """`track_speed` over ``[start_s, end_s]`` with short windows and the whole slip range.

    Meant for a start or slowdown found by `acceleration_interval` /
    `slowdown_interval`: the slip sweeps through large values, so the band is
    opened to ``max_slip`` (slot harmonics are then ambiguous and ``auto``
    falls back to eccentricity sidebands).  Windows where the sideband moves
    by more than a bin are smeared and usually come back ``no_signature``.

    Examples
    --------
    >>> from waveforms.speed.synthetic import synthetic_currents
    >>> i = synthetic_currents(12.0, 4000.0, 0.02, f1_hz=50.0, pole_pairs=2, rotor_bars=28)

    Short 1 s windows every 0.25 s over the first 4 s:

    >>> tt = track_transient(i, 0.0, 4.0, 4000.0, pole_pairs=2, rotor_bars=28, supply_hz=50.0)
    >>> print(len(tt), tt["slip"].round(2).unique().tolist())
    13 [0.02]
    """
    return track_speed(currents, sample_rate_hz, nameplate, start_s=start_s, stop_s=end_s, window_s=window_s,
                       hop_s=hop_s, max_slip=max_slip, **kwargs)
