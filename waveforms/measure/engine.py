"""The measurement engine: a capture in, per-cycle / half-cycle / harmonic tables out, chunk by chunk.

`measure(capture)` returns a `Measurements`; `iter_measure(capture)` yields
the same rows block by block (what the ``measure`` command streams to disk, so
memory does not grow with the capture's length).  Each block is read with an
overlap of `overlap_cycles` nominal cycles on both sides; a cycle belongs to
the block that holds its first boundary, so every cycle is computed exactly
once, from the same samples whatever the block size, and the streamed result
equals the one-block result to float rounding.

Column names, units and definitions: docs/columns.md.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Iterator
from typing import Any

import numpy as np
import pandas as pd

from ..capture import Capture, Channel, Chunk
from ..errors import CaptureReadError, InvalidParameterError
from . import frequency as fq
from . import harmonics as hm
from . import phasor as ph
from . import power as pw
from . import rms as rm
from . import sequence as sq
from . import unbalance as ub
from . import windows as wn

DEFAULT_CHUNK_SAMPLES = 1 << 18
DEFAULT_OVERLAP_CYCLES = 30
#: Survey: blocks read before the main pass to fix the reference level and
#: (when unknown) the nominal frequency, the same for every block size.
SURVEY_BLOCKS = 16
SURVEY_BLOCK_S = 0.2
#: A crossing counts only if the reference slope is at least that of a
#: sinusoid of this fraction of the reference's typical RMS (so a dip to 10 %
#: is still tracked and an interruption is not).
MIN_LEVEL_FRACTION = 0.1


@dataclasses.dataclass(frozen=True)
class Layout:
    """Where each role sits among the capture's channels (row indices into the samples)."""

    labels: tuple[str, ...]
    vln: dict[str, int]
    vll: dict[str, int]
    iline: dict[str, int]
    ineutral: int | None
    ref_rows: tuple[int, ...]
    ref_coef: tuple[float, ...]
    ref_kind: str  # "voltage" or "current"

    @property
    def voltage_phase_rows(self) -> tuple[int, ...]:
        d = self.vln or self.vll
        return tuple(d[c] for c in "ABC" if c in d)


@dataclasses.dataclass(frozen=True)
class Settings:
    """Fixed for the whole capture (decided before the main pass)."""

    fs_hz: float
    f_nom_hz: float
    harmonic_cycles: int
    min_slope_per_s: float
    min_sequence_v: float
    overlap_samples: int
    sos: np.ndarray
    wiring: str
    start_epoch_s: float


@dataclasses.dataclass
class Measurements:
    """Result of `measure`.

    Attributes
    ----------
    cycles : pandas.DataFrame
        One row per fundamental cycle (docs/columns.md).
    half_cycles : pandas.DataFrame
        Urms(1/2) of every channel (``X_rms_half``), ``t_s`` = window end.
    harmonics : pandas.DataFrame
        10/12-cycle windows: ``X_h{n}`` group magnitudes, ``X_hs{n}`` subgroups, ``X_thd_pct``.
    info : dict
        Reference signal, nominal frequency, declared voltages and how they were chosen.
    """

    cycles: pd.DataFrame
    half_cycles: pd.DataFrame
    harmonics: pd.DataFrame
    info: dict[str, Any]
    #: The speed track's decimated current, when `measure` was given a decimator (else None).
    decimated: Any = None

    def intervals(self, kind: str = "basic") -> pd.DataFrame:
        """Aggregated intervals: ``"basic"`` (10/12 cycles), ``"3s"`` or ``"10min"``; see `waveforms.measure.aggregate`."""
        from .aggregate import aggregate

        return aggregate(self.cycles, self.half_cycles, kind, self.info)


# -- setup -------------------------------------------------------------------
def layout_of(capture: Capture) -> Layout:
    """Roles of the capture's channels, and the reference combination (voltages first).

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> lay = layout_of(cap)
    >>> print(lay.vln, lay.iline, lay.ref_kind)
    {'A': 0, 'B': 1, 'C': 2} {'A': 3, 'B': 4, 'C': 5} voltage
    """
    labels = tuple(c.label for c in capture.channels)
    dup = sorted({x for x in labels if labels.count(x) > 1})
    if dup:
        raise InvalidParameterError(f"channels {dup} appear twice (by kind/conductor/reference); cannot tell them apart")
    idx = {c.name: i for i, c in enumerate(capture.channels)}

    def rows(chs: tuple[Channel, ...]) -> dict[str, int]:
        return {c.conductor: idx[c.name] for c in chs if c.conductor in ("A", "B", "C")}

    vln = rows(capture.find("voltage", reference="LN"))
    vll = rows(capture.find("voltage", reference="LL"))
    il = rows(capture.find("current", reference="line"))
    neu = capture.find("current", reference="neutral")
    volt = vln or vll
    src, kind = (volt, "voltage") if volt else (il, "current")
    if not src:
        raise InvalidParameterError("capture has no phase voltage or line current channel to track the frequency on")
    conds = [c for c in "ABC" if c in src]
    coef = fq.reference_coefficients(conds)
    return Layout(labels, vln, vll, il, idx[neu[0].name] if neu else None,
                  tuple(src[c] for c in conds), tuple(float(x) for x in coef), kind)


def _switch_to_currents(lay: Layout) -> Layout:
    conds = [c for c in "ABC" if c in lay.iline]
    coef = fq.reference_coefficients(conds)
    return dataclasses.replace(lay, ref_rows=tuple(lay.iline[c] for c in conds),
                               ref_coef=tuple(float(x) for x in coef), ref_kind="current")


def _survey(capture: Capture, lay: Layout) -> tuple[float, float | None]:
    """Typical RMS of the reference combination and a crossing-rate frequency, from a few spread-out blocks."""
    n = capture.n_samples
    blk = max(8, min(n, int(round(SURVEY_BLOCK_S * capture.sample_rate_hz))))
    starts = np.unique(np.linspace(0, n - blk, SURVEY_BLOCKS).astype(np.int64))
    levels, freqs = [], []
    sos = fq.lowpass_sos(capture.sample_rate_hz, 65.0)
    for s in starts:  # a handful of blocks, not samples
        d = capture.read(int(s), int(s) + blk, [capture.channels[r].name for r in lay.ref_rows])
        r = np.asarray(lay.ref_coef) @ d
        ok = np.isfinite(r)
        if ok.sum() < blk // 2:
            continue
        levels.append(float(np.sqrt(np.mean(np.square(r[ok])))))
        rf = fq.filtered_reference(r, sos)
        cr = fq.rising_crossings(rf, capture.sample_rate_hz, 0.0)
        if cr.size >= 3:
            freqs.append((cr.size - 1) * capture.sample_rate_hz / (cr[-1] - cr[0]))
    level = float(np.median(levels)) if levels else 0.0
    f = float(np.median(freqs)) if freqs else None
    return level, f


def prepare(capture: Capture, nominal_frequency_hz: float | None = None,
            overlap_cycles: int = DEFAULT_OVERLAP_CYCLES) -> tuple[Layout, Settings, dict[str, Any]]:
    """Decide the reference, the nominal frequency and the crossing threshold for a capture.

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> lay, st, info = prepare(cap)
    >>> print(st.f_nom_hz, st.harmonic_cycles, info["reference"])
    50.0 10 voltage Clarke alpha of phases ABC

    The 10-cycle harmonic window at 50 Hz is that of IEC 61000-4-7:2002, 4.4.
    """
    f_nom = nominal_frequency_hz or capture.nominal_frequency_hz or 50.0
    need = max(4, int(np.ceil(2.0 * capture.sample_rate_hz / f_nom)))  # two cycles: one full cycle between crossings
    if capture.n_samples < need:
        raise CaptureReadError(capture.provenance.source_path or "capture", "",
                               f"{capture.n_samples} samples ({capture.n_samples / capture.sample_rate_hz:.3g} s) is too short "
                               f"to measure: at least two cycles ({need} samples) are needed")
    lay = layout_of(capture)
    level, f_est = _survey(capture, lay)
    voltage_level = level if lay.ref_kind == "voltage" else 0.0
    notes = []
    if (level <= 0.0 or not math.isfinite(level)) and lay.ref_kind == "voltage" and lay.iline:
        lay = _switch_to_currents(lay)
        level, f_est = _survey(capture, lay)
        notes.append("voltages carry no signal: frequency tracked on the line currents")
    f_nom = nominal_frequency_hz or capture.nominal_frequency_hz
    if f_nom is None:
        if f_est is None:
            raise InvalidParameterError("nominal frequency unknown and the reference shows no cycles; give nominal_frequency_hz")
        f_nom = fq.nominal_from_measured(f_est)
        notes.append(f"nominal frequency inferred as {f_nom:g} Hz from the zero-crossing rate ({f_est:.2f} Hz)")
    if f_nom not in (50.0, 60.0):
        raise InvalidParameterError(f"nominal_frequency_hz={f_nom!r} must be 50 or 60")
    fs = capture.sample_rate_hz
    if fs < 8.0 * f_nom:
        raise InvalidParameterError(f"sample_rate_hz={fs:g} is too low to measure a {f_nom:g} Hz system (need >= {8 * f_nom:g})")
    min_slope = 2.0 * np.pi * f_nom * np.sqrt(2.0) * MIN_LEVEL_FRACTION * level
    settings = Settings(
        fs_hz=fs, f_nom_hz=float(f_nom), harmonic_cycles=hm.window_cycles(float(f_nom)),
        min_slope_per_s=float(min_slope) if level > 0 else math.inf,
        min_sequence_v=MIN_LEVEL_FRACTION * voltage_level if voltage_level > 0 else math.inf,
        overlap_samples=int(math.ceil(overlap_cycles * fs / f_nom)),
        sos=fq.lowpass_sos(fs, float(f_nom)), wiring=capture.wiring,
        start_epoch_s=capture.start_time.timestamp(),
    )
    conds = [capture.channels[r].conductor for r in lay.ref_rows]
    info = {
        "reference": f"{lay.ref_kind} Clarke alpha of phases {''.join(conds)}",
        "reference_level_rms": level,
        "nominal_frequency_hz": float(f_nom),
        "zero_crossing_frequency_hz": None if f_est is None else float(f_est),
        "harmonic_window_cycles": settings.harmonic_cycles,
        "sample_rate_hz": fs,
        "start_time": capture.start_time.isoformat(),
        "nominal_voltage_v": capture.nominal_voltage_v,
        "wiring": capture.wiring,
        "channels": {lab: capture.channels[i].reference for i, lab in enumerate(lay.labels)},
        "angle_reference": "V1 (V2 when it is larger, an A-C-B supply); else the first voltage, else the first current",
        "notes": notes,
    }
    return lay, settings, info


# -- one block ------------------------------------------------------------------
#: A block of one table: column name -> 1-D array (all the same length).
Columns = dict[str, np.ndarray]


def _empty_block() -> tuple[Columns, Columns, Columns]:
    return {}, {}, {}


def to_frame(cols: Columns) -> pd.DataFrame:
    """A table block as a DataFrame (text columns as pandas strings).

    Examples
    --------
    >>> import numpy as np
    >>> print(to_frame({"cycle": np.arange(2), "Va_rms": np.array([230.0, 229.5])}).to_string())
       cycle  Va_rms
    0      0   230.0
    1      1   229.5
    """
    df = pd.DataFrame(cols)
    if "phase_sequence" in df:
        df["phase_sequence"] = df["phase_sequence"].astype("string")
    return df


def process_block(data: np.ndarray, start_index: int, lead: int, trail: int, cycle_offset: int,
                  lay: Layout, st: Settings) -> tuple[Columns, Columns, Columns, int]:
    """Measure the cycles owned by one block.

    Parameters
    ----------
    data : ndarray, shape (n_channels, n)
        Samples of every channel, absolute index ``start_index`` first.
    lead, trail : int
        Samples at the start / end that belong to the neighbouring blocks.
    cycle_offset : int
        Global index of the first cycle this block owns.

    Returns
    -------
    cycles, half_cycles, harmonics : dict of column name -> 1-D array
    n_cycles : int
        Cycles owned (to advance ``cycle_offset``).

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> lay, st, _ = prepare(cap)
    >>> cyc, half, harm, n = process_block(cap.read(), 0, 0, 0, 0, lay, st)
    >>> print(n, f"{np.median(cyc['Va_rms']):.1f} {np.median(cyc['P_w']):.0f}")
    49 230.0 6055

    P = 3 V I cos(phi) = 3 x 230 x 10 x cos(0.5) = 6055 W (IEEE Std 1459-2010, balanced sinusoidal case).
    """
    part = block_cycles(data, start_index, lead, trail, lay, st)
    if part is None:
        return (*_empty_block(), 0)
    cycles, half = numbered(part, cycle_offset)
    return cycles, half, block_harmonics(data, start_index, part, cycle_offset, lay, st), part.n_cycles


@dataclasses.dataclass(frozen=True)
class BlockCycles:
    """The cycles one block owns, before they are numbered (`block_cycles`)."""

    cycles: Columns          # every per-cycle column but ``cycle``
    half: Columns
    bnd: np.ndarray          # cycle boundaries [samples into the block]
    k0: int                  # owned cycles k0 .. k1-1 of ``bnd``
    k1: int

    @property
    def n_cycles(self) -> int:
        return self.k1 - self.k0


def numbered(part: BlockCycles, cycle_offset: int) -> tuple[Columns, Columns]:
    """The block's cycle table with its ``cycle`` column (global index from ``cycle_offset``), and its half-cycle table.

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> lay, st, _ = prepare(cap)
    >>> part = block_cycles(cap.read(), 0, 0, 0, lay, st)
    >>> cyc, half = numbered(part, 100)
    >>> print(cyc["cycle"][:3].tolist(), part.n_cycles)
    [100, 101, 102] 49
    """
    cyc = {"cycle": np.arange(cycle_offset, cycle_offset + part.n_cycles, dtype=np.int64), **part.cycles}
    return cyc, part.half


def block_harmonics(data: np.ndarray, start_index: int, part: BlockCycles, cycle_offset: int,
                    lay: Layout, st: Settings) -> Columns:
    """The harmonic windows of a block (they start every `Settings.harmonic_cycles` cycles of the whole capture).

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> lay, st, _ = prepare(cap)
    >>> part = block_cycles(cap.read(), 0, 0, 0, lay, st)
    >>> harm = block_harmonics(cap.read(), 0, part, 0, lay, st)
    >>> print(len(harm["t_s"]), f"{harm['Va_h1'][0]:.1f} {harm['Va_thd_pct'][0]:.2f}")
    4 230.0 0.00

    Four whole 10-cycle windows (IEC 61000-4-7:2002, 4.4) in 49 cycles; a pure
    sinusoid has no distortion.
    """
    return _harmonic_windows(data, part.bnd, part.k0, part.k1, cycle_offset, start_index, lay, st)


def block_cycles(data: np.ndarray, start_index: int, lead: int, trail: int,
                 lay: Layout, st: Settings) -> BlockCycles | None:
    """The per-cycle and half-cycle rows a block owns (not depending on the cycles before it); None when it owns none.

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> lay, st, _ = prepare(cap)
    >>> part = block_cycles(cap.read(), 0, 0, 0, lay, st)
    >>> print(part.n_cycles, f"{np.median(part.cycles['frequency_hz']):.3f}")
    49 50.000
    """
    fs, n = st.fs_hz, data.shape[1]
    ref = np.asarray(lay.ref_coef) @ data[list(lay.ref_rows)]
    rf = fq.filtered_reference(ref, st.sos, int(2 * fs / st.f_nom_hz))
    cross = fq.rising_crossings(rf, fs, st.min_slope_per_s)
    bnd, tracked = fq.cycle_boundaries(cross, n, start_index, fs, st.f_nom_hz)
    if bnd.size < 2:
        return None
    f_cyc = fq.cycle_frequency(bnd, tracked, fs, st.f_nom_hz)
    a_all = bnd[:-1]
    own = np.flatnonzero((a_all >= lead) & (a_all < n - trail))
    if own.size == 0:
        return None
    k0, k1 = int(own[0]), int(own[-1]) + 1          # owned cycles k0 .. k1-1
    a = a_all[k0:k1]
    f_use = np.where(np.isfinite(f_cyc[k0:k1]), f_cyc[k0:k1], st.f_nom_hz)
    # a tracked window spans exactly one period of its frequency; an untracked one (dead reference)
    # runs to the next boundary, so the table has no holes
    period = np.where(np.isfinite(f_cyc[k0:k1]), fs / f_use, np.diff(bnd)[k0:k1])
    fits = a + period <= n - 1
    if not fits.all():                               # only at the very end of a capture
        keep = int(fits.sum())                       # a rises, so the misfits are the last ones
        k1 = k0 + keep
        a, f_use, period = a[:keep], f_use[:keep], period[:keep]
        if keep == 0:
            return None
    b = a + period
    mid = a + 0.5 * period
    mid_ok = mid + period <= n - 1
    mid_end = np.where(mid_ok, mid + period, mid)    # empty window where the data end first
    has_nan = bool(np.isnan(data).any())
    first, width = wn.window_grid(a, b)
    w = wn.weights_on_grid(first, width, a, b)
    x = wn.gather(data, first, width, has_nan, w)               # (m, n_ch, width)
    first_m, width_m = wn.window_grid(mid, mid_end)
    w_mid = wn.weights_on_grid(first_m, width_m, mid, mid_end)
    x_mid = wn.gather(data, first_m, width_m, has_nan, w_mid)

    # Urms(1/2): one-cycle windows from each cycle start and from each mid-cycle (IEC 61000-4-30 5.4.1)
    sq_mid, sw_mid = rm.mean_square(x_mid, w_mid)
    with np.errstate(invalid="ignore", divide="ignore"):
        mid_rms = np.sqrt(sq_mid / sw_mid[:, None])
    ll_rows = _ll_from_ln_rows(lay, st)
    if ll_rows is not None:  # 3-wire system recorded line-to-neutral: Urms(1/2) of the line-to-line voltages too
        sq_ll, _ = rm.mean_square(x_mid[:, ll_rows[0]] - x_mid[:, ll_rows[1]], w_mid)
        with np.errstate(invalid="ignore", divide="ignore"):
            mid_rms = np.concatenate([mid_rms, np.sqrt(sq_ll / sw_mid[:, None])], axis=1)
    del x_mid, w_mid

    centre = mid
    reg = ph.basis(first, width, centre, 2.0 * np.pi * f_use, fs)
    phas, _ = ph.fit_phasors(x, w, reg)
    t_c = (centre + start_index) / fs
    phas = ph.to_nominal_frame(phas, t_c, st.f_nom_hz)
    gram = rm.mean_products(x, w)
    rms = np.sqrt(np.clip(np.einsum("kcc->kc", gram), 0.0, None))
    full_rms = rms

    cols: dict[str, Any] = {
        "t_s": t_c,
        "t_start_s": (a + start_index) / fs,
        "t_end_s": (b + start_index) / fs,
        "frequency_hz": f_cyc[k0:k1],
        "tracked": np.isfinite(f_cyc[k0:k1]),
    }
    _channel_columns(cols, lay, phas, rms)
    _sequence_power_columns(cols, lay, st, phas, rms, gram)
    cycles = cols

    # half-cycle table, time-ordered: window from cycle start k (ends at b_k), then from mid-cycle k
    t_full = (b + start_index) / fs
    t_mid = (mid_end[mid_ok] + start_index) / fs
    t_all = np.concatenate([t_full, t_mid])
    order = np.argsort(t_all, kind="stable")
    labels = lay.labels
    if ll_rows is not None:  # mean((va - vb)^2) = <va va> + <vb vb> - 2 <va vb>, over the same one-cycle window
        a_, b_ = ll_rows
        full_ll = np.sqrt(np.clip(gram[:, a_, a_] + gram[:, b_, b_] - 2.0 * gram[:, a_, b_], 0.0, None))
        full_rms = np.concatenate([full_rms, full_ll], axis=1)
        labels = (*labels, *LL_FROM_LN_LABELS)
    vals = np.concatenate([full_rms, mid_rms[mid_ok]])[order]
    half = {"t_s": t_all[order], **{f"{lab}_rms_half": vals[:, i] for i, lab in enumerate(labels)}}
    return BlockCycles(cycles, half, bnd, k0, k1)


#: Urms(1/2) columns added on a 3-wire system recorded line-to-neutral (`_ll_from_ln_rows`).
LL_FROM_LN_LABELS = ("Vab", "Vbc", "Vca")


def _ll_from_ln_rows(lay: Layout, st: Settings) -> tuple[list[int], list[int]] | None:
    """Rows (first, second) of Vab, Vbc, Vca from the line-to-neutral rows, on a 3-wire system without LL channels.

    IEC 61000-4-30 (5.4.1, from memory): on a 3-wire system dips and swells are
    evaluated on the line-to-line voltages, so the half-cycle table carries
    ``Vab_rms_half`` ... computed from the line-to-neutral samples
    (``vab = va - vb``) when only those were recorded.
    """
    if st.wiring != "3-wire" or lay.vll or any(c not in lay.vln for c in "ABC"):
        return None
    return [lay.vln[c] for c in "ABC"], [lay.vln[c] for c in "BCA"]


def _channel_columns(cols: dict[str, Any], lay: Layout, phas: np.ndarray, rms: np.ndarray) -> None:
    ref = _angle_reference(lay, phas)
    rot = np.where(np.abs(ref) > 0, np.conj(ref) / np.where(np.abs(ref) > 0, np.abs(ref), 1.0), np.nan)
    for i, lab in enumerate(lay.labels):
        cols[f"{lab}_rms"] = rms[:, i]
        cols[f"{lab}_mag"] = np.abs(phas[:, i])
        cols[f"{lab}_ang_deg"] = np.degrees(np.angle(phas[:, i] * rot))


def _voltage_sequences(lay: Layout, phas: np.ndarray) -> tuple[np.ndarray | None, np.ndarray | None, np.ndarray | None]:
    if all(c in lay.vln for c in "ABC"):
        return sq.sequence_components(*(phas[:, lay.vln[c]] for c in "ABC"))
    if all(c in lay.vll for c in "ABC"):
        v1, v2 = sq.sequence_from_line_to_line(*(phas[:, lay.vll[c]] for c in "ABC"))
        return None, v1, v2
    return None, None, None


def _angle_reference(lay: Layout, phas: np.ndarray) -> np.ndarray:
    _, v1, v2 = _voltage_sequences(lay, phas)
    if v1 is not None:
        return np.where(np.abs(v1) >= np.abs(v2), v1, v2)
    for d in (lay.vln, lay.vll, lay.iline):
        for c in "ABC":
            if c in d:
                return phas[:, d[c]]
    return phas[:, 0]


def _sequence_power_columns(cols: dict[str, Any], lay: Layout, st: Settings, phas: np.ndarray,
                            rms: np.ndarray, gram: np.ndarray) -> None:
    v0, v1, v2 = _voltage_sequences(lay, phas)
    if v1 is not None:
        if v0 is not None:
            cols["V0"] = np.abs(v0)
        cols["V1"], cols["V2"] = np.abs(v1), np.abs(v2)
        cols["V1_ang_deg"] = np.degrees(np.angle(v1))
        cols["V2_V1_pct"] = ub.ratio_pct(v2, v1)
        if v0 is not None:
            cols["V0_V1_pct"] = ub.ratio_pct(v0, v1)
        cols["V_unbal_vuf_pct"] = ub.vuf_pct(v1, v2)
        if all(c in lay.vll for c in "ABC"):
            ll = [np.abs(phas[:, lay.vll[c]]) for c in "ABC"]
        else:
            va, vb, vc = (phas[:, lay.vln[c]] for c in "ABC")
            ll = [np.abs(va - vb), np.abs(vb - vc), np.abs(vc - va)]
        cols["V_unbal_nema_pct"] = ub.max_deviation_pct(*ll)               # NEMA MG-1 14.36
        if all(c in lay.vln for c in "ABC"):
            cols["V_unbal_pvur_pct"] = ub.max_deviation_pct(*(np.abs(phas[:, lay.vln[c]]) for c in "ABC"))  # Pillay 2001
        cols["V_unbal_iec_ll_pct"] = ub.iec_line_to_line_pct(*ll)          # IEC 61000-4-30 5.7.1
        cols["phase_sequence"] = sq.phase_sequence(v1, v2, min_magnitude=st.min_sequence_v).astype(str)
    i1 = None
    if all(c in lay.iline for c in "ABC"):
        ia, ib, ic = (phas[:, lay.iline[c]] for c in "ABC")
        i0, i1, i2 = sq.sequence_components(ia, ib, ic)
        cols["I0"], cols["I1"], cols["I2"] = np.abs(i0), np.abs(i1), np.abs(i2)
        cols["I2_I1_pct"] = ub.ratio_pct(i2, i1)
        cols["I0_I1_pct"] = ub.ratio_pct(i0, i1)
        cols["I_unbal_vuf_pct"] = ub.vuf_pct(i1, i2)
        mags = [np.abs(ia), np.abs(ib), np.abs(ic)]
        cols["I_unbal_nema_pct"] = ub.max_deviation_pct(*mags)
        cols["I_unbal_pvur_pct"] = cols["I_unbal_nema_pct"].copy()  # line currents: phase = line quantity
    _power_columns(cols, lay, st, phas, rms, gram, v1, i1)


def _power_columns(cols: dict[str, Any], lay: Layout, st: Settings, phas: np.ndarray, rms: np.ndarray,
                   gram: np.ndarray, v1: np.ndarray | None, i1: np.ndarray | None) -> None:
    il = lay.iline
    if not il:
        return
    have_ln = all(c in lay.vln for c in "ABC")
    have_ll = all(c in lay.vll for c in "ABC")
    three_i = all(c in il for c in "ABC")
    # per phase, line-to-neutral voltages (IEEE 1459-2010 single-phase definitions)
    for c in "ABC":
        if c in lay.vln and c in il:
            vi, ii, s = lay.vln[c], il[c], c.lower()
            p = gram[:, vi, ii]                                            # P = mean(v i)
            q = pw.fundamental_powers(phas[:, vi], phas[:, ii])[1]         # Q1 = V1 I1 sin(theta1)
            sva = rms[:, vi] * rms[:, ii]                                  # S = V I
            cols[f"P{s}_w"], cols[f"Q{s}_var"], cols[f"S{s}_va"] = p, q, sva
            cols[f"PF{s}"] = pw.ratio(p, sva)
    if not three_i or not (have_ln or have_ll):
        return
    ia, ib, ic = il["A"], il["B"], il["C"]
    if have_ln:
        va, vb, vc = lay.vln["A"], lay.vln["B"], lay.vln["C"]
        p_tot = gram[:, va, ia] + gram[:, vb, ib] + gram[:, vc, ic]
        q_tot = sum(pw.fundamental_powers(phas[:, lay.vln[c]], phas[:, il[c]])[1] for c in "ABC")
        vln_sq = gram[:, va, va] + gram[:, vb, vb] + gram[:, vc, vc]
        vll_sq = (gram[:, va, va] + gram[:, vb, vb] - 2 * gram[:, va, vb]
                  + gram[:, vb, vb] + gram[:, vc, vc] - 2 * gram[:, vb, vc]
                  + gram[:, vc, vc] + gram[:, va, va] - 2 * gram[:, vc, va])
    else:
        ab, bc, ca = lay.vll["A"], lay.vll["B"], lay.vll["C"]
        # virtual (zero-sum) neutral: va' = (vab - vca)/3, vb' = (vbc - vab)/3, vc' = (vca - vbc)/3
        p_tot = ((gram[:, ab, ia] - gram[:, ca, ia]) + (gram[:, bc, ib] - gram[:, ab, ib])
                 + (gram[:, ca, ic] - gram[:, bc, ic])) / 3.0
        vp = {"A": (phas[:, ab] - phas[:, ca]) / 3.0, "B": (phas[:, bc] - phas[:, ab]) / 3.0,
              "C": (phas[:, ca] - phas[:, bc]) / 3.0}
        q_tot = sum(pw.fundamental_powers(vp[c], phas[:, il[c]])[1] for c in "ABC")
        vll_sq = gram[:, ab, ab] + gram[:, bc, bc] + gram[:, ca, ca]
        vln_sq = None
    iline_sq = gram[:, ia, ia] + gram[:, ib, ib] + gram[:, ic, ic]
    four_wire = st.wiring == "4-wire" and have_ln
    if four_wire:
        if lay.ineutral is not None:
            in_sq = gram[:, lay.ineutral, lay.ineutral]
        else:  # KCL: in = -(ia + ib + ic)
            rows = (ia, ib, ic)
            in_sq = sum(gram[:, r, s] for r in rows for s in rows)
        ve = pw.effective_voltage_4wire(vln_sq, vll_sq)
        ie = pw.effective_current(iline_sq, in_sq)
    else:
        ve = pw.effective_voltage_3wire(vll_sq)
        ie = pw.effective_current(iline_sq)
    s_e = 3.0 * ve * ie                                                   # IEEE 1459-2010 Se = 3 Ve Ie
    cols["P_w"], cols["Q_var"], cols["S_va"] = p_tot, q_tot, s_e
    cols["PF"] = pw.ratio(p_tot, s_e)
    if v1 is not None and i1 is not None:
        p1, q1, dpf = pw.positive_sequence_powers(v1, i1)
        cols["P1_w"], cols["Q1_var"], cols["DPF"] = p1, q1, dpf


def _harmonic_windows(data: np.ndarray, bnd: np.ndarray, k0: int, k1: int, cycle_offset: int,
                      start_index: int, lay: Layout, st: Settings) -> Columns:
    nh, fs, n = st.harmonic_cycles, st.fs_hz, data.shape[1]
    g = cycle_offset + np.arange(k1 - k0)
    ks = k0 + np.flatnonzero(g % nh == 0)
    ks = ks[ks + nh < bnd.size]
    if ks.size == 0:
        return {}
    s = np.rint(bnd[ks]).astype(np.int64)
    length = np.rint(bnd[ks + nh] - bnd[ks]).astype(np.int64)
    ok = s + length <= n
    s, length, ks = s[ok], length[ok], ks[ok]
    if ks.size == 0:
        return {}
    n_ch = data.shape[0]
    grp = np.full((ks.size, n_ch, hm.MAX_ORDER), np.nan)
    sub = np.full((ks.size, n_ch, hm.MAX_ORDER), np.nan)
    for ln in np.unique(length):  # one batched FFT per distinct window length (a few per block)
        rows = np.flatnonzero(length == ln)
        idx = s[rows, None] + np.arange(ln)[None, :]
        c = hm.line_spectra(np.moveaxis(data[:, idx], 0, 1))  # (n_win, n_ch, lines)
        grp[rows] = hm.groups(c, nh)
        sub[rows] = hm.subgroups(c, nh)
    thd = hm.thd_pct(grp)
    cols: dict[str, Any] = {
        "t_s": (0.5 * (bnd[ks] + bnd[ks + nh]) + start_index) / fs,
        "t_start_s": (bnd[ks] + start_index) / fs,
        "t_end_s": (bnd[ks + nh] + start_index) / fs,
        "first_cycle": (cycle_offset + ks - k0).astype(np.int64),
    }
    for i, lab in enumerate(lay.labels):
        cols[f"{lab}_thd_pct"] = thd[:, i]
        for h in range(hm.MAX_ORDER):
            cols[f"{lab}_h{h + 1}"] = grp[:, i, h]
        for h in range(hm.MAX_ORDER):
            cols[f"{lab}_hs{h + 1}"] = sub[:, i, h]
    return cols


# -- the whole capture ------------------------------------------------------------
#: What a shared pass hands each block to besides the measurement: ``feed(owned samples)``
#: in time order in the calling thread (the data-quality survey), and ``extra(chunk)`` for a
#: pure function of the block run in a worker thread (the speed track's decimated current).
Feed = Callable[[np.ndarray], None]
Extra = Callable[[Chunk], Any]


def _blas_one_thread():
    """BLAS limited to one thread during a pass: our own threads share the cores, and results never depend on it."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - threadpoolctl is a dependency
        import contextlib

        return contextlib.nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


def iter_pass(capture: Capture, chunk_samples: int, lay: Layout, st: Settings, *, threads: int = 1,
              feed: Feed | None = None, extra: Extra | None = None, overlap_samples: int | None = None,
              harmonics: bool = True) -> Iterator[tuple[Columns, Columns, Columns, Any]]:
    """One pass over the samples: every block measured, fed to ``feed`` and given to ``extra``, in time order.

    Yields ``(cycles, half_cycles, harmonics, extra_value)`` for every block (empty column
    dicts where a block owns no cycle).  With ``threads > 1`` blocks are measured in a thread
    pool while the next one is read (numpy releases the GIL in its kernels); the per-cycle
    rows of a block do not depend on the blocks before it, only the cycle numbers and the
    harmonic window grid do, which are assigned in order, so the output is the same for any
    ``threads``.

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> lay, st, _ = prepare(cap)
    >>> rows = [len(cyc["cycle"]) for cyc, half, harm, _ in iter_pass(cap, 2000, lay, st)]
    >>> print(rows, sum(rows))
    [20, 20, 9] 49

    The same 49 cycles as one block gives (`measure`), whatever the block size.
    """
    overlap = st.overlap_samples if overlap_samples is None else overlap_samples
    chunks = _segment_chunks(capture, chunk_samples, overlap)
    if feed is not None:
        feed = _gap_feeder(feed, len(capture.channels), chunk_samples)

    def first(ch: Chunk | _GapItem) -> tuple[BlockCycles | _GapItem | None, Any]:
        if isinstance(ch, _GapItem):
            return ch, (extra(ch) if extra is not None else None)
        part = block_cycles(ch.data, ch.start_index, ch.lead, ch.trail, lay, st)
        return part, (extra(ch) if extra is not None else None)

    def second(ch: Chunk | _GapItem, part: BlockCycles | _GapItem | None, offset: int) -> tuple[Columns, Columns, Columns]:
        if isinstance(part, _GapItem):
            return gap_marker(part, offset, len(lay.labels), lay, st), {}, {}
        if part is None:
            return _empty_block()
        cyc, half = numbered(part, offset)
        return cyc, half, block_harmonics(ch.data, ch.start_index, part, offset, lay, st) if harmonics else {}

    def n_owned(part: BlockCycles | _GapItem | None) -> int:
        return 0 if part is None else 1 if isinstance(part, _GapItem) else part.n_cycles

    offset = 0
    with _blas_one_thread():
        if threads <= 1:
            for ch in chunks:
                if feed is not None:
                    feed(ch)
                part, ex = first(ch)
                out = second(ch, part, offset)
                offset += n_owned(part)
                yield (*out, ex)
            return
        import collections
        import concurrent.futures

        # ``feed`` keeps state from block to block: one thread of its own runs it, in submission (time) order
        with concurrent.futures.ThreadPoolExecutor(threads, thread_name_prefix="measure") as pool, \
                concurrent.futures.ThreadPoolExecutor(1, thread_name_prefix="feed") as feeder:
            q1: collections.deque = collections.deque()
            q2: collections.deque = collections.deque()
            fed: collections.deque = collections.deque()

            def advance(limit: int) -> Iterator[tuple[Columns, Columns, Columns, Any]]:
                nonlocal offset
                while len(q1) > limit:
                    ch, f1 = q1.popleft()
                    part, ex = f1.result()
                    q2.append((pool.submit(second, ch, part, offset), ex))
                    offset += n_owned(part)
                while len(q2) > limit:
                    f2, ex = q2.popleft()
                    yield (*f2.result(), ex)

            for ch in chunks:
                q1.append((ch, pool.submit(first, ch)))
                if feed is not None:
                    fed.append(feeder.submit(feed, ch))
                    while len(fed) > threads + 1:  # bounded memory: wait for the survey to catch up
                        fed.popleft().result()
                yield from advance(threads)
            yield from advance(0)
            while fed:
                fed.popleft().result()


@dataclasses.dataclass(frozen=True)
class _GapItem:
    """Samples ``[start, stop)`` of a splitting time-stamp gap (`waveforms.segments.split_gaps`): nothing is read there."""

    start: int
    stop: int


def recorded_segments(capture: Capture) -> list[tuple[int, int]]:
    """``(start, stop)`` sample ranges of the recorded stretches between the splitting gaps (one range without gaps)."""
    from ..segments import split_gaps

    n = capture.n_samples
    out, pos = [], 0
    for g in sorted(split_gaps(capture), key=lambda g: g.start_index):
        a, b = max(pos, int(g.start_index)), min(n, int(g.stop_index))
        if a >= b:
            continue
        out.append((pos, a))
        pos = b
    out.append((pos, n))
    return [(a, b) for a, b in out if b > a] if len(out) > 1 else out


def _segment_chunks(capture: Capture, chunk_samples: int, overlap: int) -> Iterator[Chunk | _GapItem]:
    """`Capture.iter_chunks` over the recorded stretches, a `_GapItem` for each splitting gap between them.

    Without a gap this is ``capture.iter_chunks(chunk_samples, overlap)`` exactly.  A block next to a gap
    still reads its overlap into the gap (NaN, at most ``overlap`` samples), so its rows are those the
    walk over the whole grid gave; the blocks inside the gap are never read, and own no cycle.
    """
    segs = recorded_segments(capture)
    n = capture.n_samples
    prev_stop = 0
    for a, b in segs:
        if a > prev_stop:
            yield _GapItem(prev_stop, a)
        pos = a
        while pos < b:
            own_stop = min(pos + chunk_samples, b)
            lo, hi = max(0, pos - overlap), min(n, own_stop + overlap)
            yield Chunk(start_index=lo, data=capture.read(lo, hi), lead=pos - lo, trail=hi - own_stop)
            pos = own_stop
        prev_stop = b
    if prev_stop < n:
        yield _GapItem(prev_stop, n)


def _gap_feeder(feed: Feed, n_channels: int, chunk_samples: int) -> Callable[[Any], None]:
    """``feed`` of a block's owned samples; a gap is fed as NaN in pieces of one reused buffer (memory bounded)."""
    buf: list[np.ndarray] = []

    def run(item: Any) -> None:
        if not isinstance(item, _GapItem):
            feed(item.owned)
            return
        if not buf:
            buf.append(np.full((n_channels, max(1, min(chunk_samples, item.stop - item.start))), np.nan))
        pos = item.start
        while pos < item.stop:
            m = min(buf[0].shape[1], item.stop - pos)
            feed(buf[0][:, :m])
            pos += m

    return run


def gap_marker(gap: _GapItem, cycle: int, n_channels: int, lay: Layout, st: Settings) -> Columns:
    """One cycle-table row standing for a whole gap: every value NaN, untracked, ``t_start_s``/``t_end_s`` the gap's ends.

    The row is what the walk over the gap's NaN samples gave for each of its cycles (made the same way,
    from a few NaN cycles), so every consumer sees the kind of row it saw there, once instead of once
    per cycle; the timeline marks it ``"no data"`` (`waveforms.segments.mark_no_data`).
    """
    m = max(8, int(math.ceil(4 * st.fs_hz / st.f_nom_hz)))
    part = block_cycles(np.full((n_channels, m), np.nan), gap.start, 0, 0, lay, st)
    if part is None:  # pragma: no cover - NaN cycles are always laid out at the nominal period
        return {}
    cyc, _ = numbered(part, cycle)
    out = {k: np.asarray(v)[:1].copy() for k, v in cyc.items()}
    out["t_start_s"] = np.array([gap.start / st.fs_hz])
    out["t_end_s"] = np.array([gap.stop / st.fs_hz])
    out["t_s"] = np.array([0.5 * (gap.start + gap.stop) / st.fs_hz])
    return out


def iter_blocks(capture: Capture, chunk_samples: int = DEFAULT_CHUNK_SAMPLES,
                nominal_frequency_hz: float | None = None,
                overlap_cycles: int = DEFAULT_OVERLAP_CYCLES,
                prepared: tuple[Layout, Settings, dict[str, Any]] | None = None,
                threads: int = 1,
                ) -> Iterator[tuple[Columns, Columns, Columns]]:
    """Like `iter_measure`, but each table block is a dict of column arrays (no pandas overhead).

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> print([len(cyc["cycle"]) for cyc, half, harm in iter_blocks(cap, chunk_samples=2500)])
    [25, 24]
    """
    if chunk_samples < 1:
        raise InvalidParameterError(f"{chunk_samples=} must be positive")
    lay, st, _ = prepared or prepare(capture, nominal_frequency_hz, overlap_cycles)
    for cyc, half, harm, _ in iter_pass(capture, chunk_samples, lay, st, threads=threads):
        if cyc:
            yield cyc, half, harm


def iter_measure(capture: Capture, chunk_samples: int = DEFAULT_CHUNK_SAMPLES,
                 nominal_frequency_hz: float | None = None,
                 overlap_cycles: int = DEFAULT_OVERLAP_CYCLES,
                 prepared: tuple[Layout, Settings, dict[str, Any]] | None = None,
                 ) -> Iterator[tuple[pd.DataFrame, pd.DataFrame, pd.DataFrame]]:
    """Yield ``(cycles, half_cycles, harmonics)`` DataFrames block by block, in time order.

    Parameters
    ----------
    capture : Capture
    chunk_samples : int
        Samples owned per block (memory bound) [samples].
    nominal_frequency_hz : float, optional
        Overrides ``capture.nominal_frequency_hz`` [Hz].
    overlap_cycles : int
        Extra nominal cycles read on each side of a block.

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> import pandas as pd
    >>> cycles = pd.concat([c for c, h, g in iter_measure(cap, chunk_samples=2000)], ignore_index=True)
    >>> print(len(cycles), cycles["cycle"].is_monotonic_increasing)
    49 True
    """
    for cyc, half, harm in iter_blocks(capture, chunk_samples, nominal_frequency_hz, overlap_cycles, prepared):
        yield to_frame(cyc), to_frame(half), to_frame(harm)


def _decimated_block(decimator: Any, ch: Chunk | _GapItem) -> np.ndarray:
    """The decimator's outputs of a block; those of a gap are NaN without reading (a filter over NaN gives NaN).

    The speed track needs the decimated current on the capture's whole grid, so the gap's NaN are
    still held once in the assembled array (``n_samples / q`` values; see docs/importing.md).
    """
    if not isinstance(ch, _GapItem):
        return decimator.block(ch.start_index, ch.data, ch.lead, ch.trail)
    q = decimator.q
    j0, j1 = -(-ch.start // q), -(-ch.stop // q)
    # a read-only view of one NaN (no memory); `Decimator.assemble` fills its stretch without a temporary
    return np.broadcast_to(np.nan, (2 if decimator.use_sv else len(decimator.rows), max(0, j1 - j0)))


class _Table:
    """Rows of one table gathered block by block into arrays allocated once for the expected row count.

    Holding the blocks and then concatenating them would need the table's memory twice;
    here each block is copied in as it comes and dropped.  The arrays grow by half when the
    estimate is passed; rows past the estimate that are never written stay untouched
    (not resident).
    """

    def __init__(self, expected_rows: int) -> None:
        self.cap = max(16, int(expected_rows))
        self.n = 0
        self.cols: dict[str, np.ndarray] = {}

    def add(self, block: Columns) -> None:
        if not block:
            return
        m = len(next(iter(block.values())))
        if not self.cols:
            self.cols = {k: np.empty(self.cap, dtype=np.asarray(v).dtype) for k, v in block.items()}
        if self.n + m > self.cap:
            self.cap = max(self.n + m, int(self.cap * 1.5))
            for k, v in self.cols.items():
                grown = np.empty(self.cap, dtype=v.dtype)
                grown[: self.n] = v[: self.n]
                self.cols[k] = grown
        for k, v in block.items():
            col = self.cols[k]
            if col.dtype != np.asarray(v).dtype and col.dtype.kind == "U":  # text columns: widest seen
                col = self.cols[k] = col.astype(np.result_type(col.dtype, np.asarray(v).dtype))
            col[self.n : self.n + m] = v
        self.n += m

    def frame(self) -> pd.DataFrame:
        if not self.cols:
            return pd.DataFrame()
        cols = {k: v[: self.n] for k, v in self.cols.items()}
        self.cols = {}
        df = pd.DataFrame(cols, copy=False)  # the arrays as they are, no copy into one block
        if "phase_sequence" in df:
            df["phase_sequence"] = df["phase_sequence"].astype("string")
        return df


def measure(capture: Capture, chunk_samples: int = DEFAULT_CHUNK_SAMPLES,
            nominal_frequency_hz: float | None = None,
            overlap_cycles: int = DEFAULT_OVERLAP_CYCLES, *, threads: int = 1,
            feed: Feed | None = None, decimator: Any = None, harmonics: bool = True) -> Measurements:
    """Measure every cycle of a capture.

    Parameters
    ----------
    capture : Capture
    chunk_samples : int
        Samples per block [samples]; the result does not depend on it (to float rounding).
    nominal_frequency_hz : float, optional
        50 or 60 [Hz]; default the capture's, else inferred from the zero-crossing rate.
    overlap_cycles : int
        Nominal cycles of overlap between blocks (at least 20 is needed for the
        filter, the frequency median and the 10/12-cycle harmonic windows).
    threads : int
        Blocks measured in parallel (threads); the result does not depend on it.
    feed : callable, optional
        Called with the owned samples of every block in time order (e.g.
        `waveforms.quality.StatsAccumulator.feed`), so that survey needs no pass of its own.
    decimator : waveforms.speed.estimator.Decimator, optional
        Makes the speed track's decimated current from the same blocks
        (`Measurements.decimated`), so the speed stage reads nothing.
    harmonics : bool
        Compute the harmonic table; False leaves `Measurements.harmonics` empty
        (the chain's findings do not use it) and saves its time and memory.

    Returns
    -------
    Measurements

    Examples
    --------
    A balanced 230 V / 10 A, 50 Hz capture of one second at 5 kS/s, the
    currents lagging by 0.5 rad:

    >>> import numpy as np
    >>> from waveforms.capture import from_arrays, standard_channels
    >>> t = np.arange(5000) / 5000.0
    >>> ph = 2 * np.pi * (50 * t - np.arange(3)[:, None] / 3)
    >>> v, i = 230 * np.sqrt(2) * np.cos(ph), 10 * np.sqrt(2) * np.cos(ph - 0.5)
    >>> cap = from_arrays(np.vstack([v, i]), standard_channels(), 5000.0, nominal_frequency_hz=50.0)

    >>> m = measure(cap)
    >>> row = m.cycles.iloc[len(m.cycles) // 2]
    >>> print(f"{row.Va_rms:.1f} V {row.Ia_rms:.2f} A {row.PF:.4f} {row.V2_V1_pct:.2f} %")
    230.0 V 10.00 A 0.8776 0.00 %

    The power factor of a sinusoidal balanced load is cos(phi) = cos(0.5) =
    0.8776 (IEEE Std 1459-2010, sinusoidal case), and a balanced set has no negative
    sequence (Fortescue 1918).
    """
    if chunk_samples < 1:
        raise InvalidParameterError(f"{chunk_samples=} must be positive")
    prepared = prepare(capture, nominal_frequency_hz, overlap_cycles)
    lay, st, info = prepared
    overlap = st.overlap_samples
    if decimator is not None and decimator.overlap_needed > overlap:
        overlap = decimator.overlap_needed  # wider than the engine needs: its rows do not change
    segs = recorded_segments(capture)  # the gaps own one row each, not their cycles
    recorded_s = sum(b - a for a, b in segs) / capture.sample_rate_hz
    n_cyc = int(recorded_s * st.f_nom_hz * 1.05) + 64 + len(segs)  # the supply frequency stays within a few % of nominal
    tables = (_Table(n_cyc), _Table(2 * n_cyc), _Table(n_cyc // st.harmonic_cycles + 16))
    dec_parts = []
    for *blocks, ex in iter_pass(capture, chunk_samples, lay, st, threads=threads, feed=feed, overlap_samples=overlap,
                                 harmonics=harmonics,
                                 extra=None if decimator is None else (lambda ch: _decimated_block(decimator, ch))):
        for t, b in zip(tables, blocks, strict=True):
            t.add(b)
        dec_parts.append(ex)
    m = Measurements(tables[0].frame(), tables[1].frame(), tables[2].frame(), info)
    m.decimated = None if decimator is None else decimator.assemble(dec_parts)
    return m
