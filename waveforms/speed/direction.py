"""Rotation direction from the phase sequence of voltages and currents.

An induction motor turns with its rotating field.  While the motor is fed on
three lines the field follows the supply's phase sequence, so the positive
(A-B-C) or negative (A-C-B) sequence dominance of the terminal voltages (and
currents) gives the direction.  While it runs single-phased, the field is
kept turning by the rotor itself and the open terminal carries a regenerated
voltage; the sequence of the three terminal voltages (with that regenerated
one) still follows the rotation, whereas a stalled single-phased motor shows
no dominant sequence and gets no direction.  That holds only when the voltage
inputs are on the motor side of the open point (open point *upstream* of the
logger); pass ``open_point`` from the open-phase event to say so.

"forward" means rotation in the sense of the A-B-C sequence on the terminals
as labelled in the capture (A on the motor's first terminal, and so on); the
tool cannot know the shaft's clockwise sense.

Symmetrical components come from `waveforms.measure.sequence` (Fortescue).

References
----------
.. [1] C. L. Fortescue, "Method of Symmetrical Co-ordinates Applied to the
   Solution of Polyphase Networks", Trans. AIEE 37, 1918.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import InvalidParameterError
from ..measure.sequence import phase_sequence, sequence_components

ROTATION = {"ABC": "forward", "ACB": "reverse", "": ""}


def cycle_phasors(x, sample_rate_hz: float, f1_hz: float, window_cycles: int = 10) -> tuple[np.ndarray, np.ndarray]:
    """Fundamental phasors (RMS, complex) of each row of ``x`` over consecutive whole-cycle windows.

    A single-bin DFT at ``f1_hz`` over ``window_cycles`` periods (rounded to
    whole samples), windows back to back (common practice, no source).

    Returns
    -------
    t_s : ndarray (n_windows,)
        Window centres [s].
    phasors : ndarray (n_rows, n_windows), complex
    """
    x = np.atleast_2d(np.asarray(x, dtype=float))
    if not (f1_hz > 0 and sample_rate_hz > 2 * f1_hz):
        raise InvalidParameterError(f"{f1_hz=} must be positive and below half of {sample_rate_hz=}")
    n = int(round(window_cycles * sample_rate_hz / f1_hz))
    nw = x.shape[1] // n
    if nw == 0:
        raise InvalidParameterError(f"{x.shape[1]} samples are fewer than one window of {window_cycles} cycles")
    blocks = x[:, : nw * n].reshape(x.shape[0], nw, n)
    k = np.arange(n)
    e = np.exp(-2j * np.pi * f1_hz * k / sample_rate_hz)
    ph = np.sqrt(2.0) / n * (blocks @ e)  # DFT bin at f1, scaled to RMS
    t0 = np.arange(nw) * n / sample_rate_hz
    return t0 + 0.5 * n / sample_rate_hz, ph


def rotation_direction(
    v1=None, v2=None, i1=None, i2=None, i_line_a=None, *, margin: float = 2.0, open_frac: float = 0.05,
    min_current_a: float | None = None, min_voltage_v: float | None = None, open_point: str | None = None,
) -> pd.DataFrame:
    """Decide the rotation per row from sequence components.

    Parameters
    ----------
    v1, v2 : array_like or None
        Positive/negative sequence voltage magnitudes (or phasors) [V].
    i1, i2 : array_like or None
        Positive/negative sequence current magnitudes (or phasors) [A].
    i_line_a : array_like (3, n) or None
        Line current magnitudes Ia, Ib, Ic [A], to tell three-phase from single-phased.
    margin : float
        Sequence dominance factor passed to `waveforms.measure.sequence.phase_sequence`.
    open_frac : float
        A line with less than this fraction of the largest line current is open.
    min_current_a : float or None
        Below this largest line current the row is ``no_current`` [A]; default 2 % of
        the largest line current in the record.
    min_voltage_v : float or None
        Below this ``|V1| + |V2|`` the voltages are not used [V]; default 5 % of the
        largest in the record.
    open_point : {"upstream", "downstream", None}
        Where the open point of a single-phased row lies relative to the logger
        (as `waveforms.detect` reports it).  ``upstream``: the voltage inputs see
        the regenerated voltage, basis ``regenerated_voltage``; ``downstream``:
        they see the supply, no rotation (basis ``supply_side_voltage``);
        None: rotation from the terminal voltages with basis
        ``single_phased_voltage_unverified``.

    Returns
    -------
    DataFrame
        ``v_sequence``, ``i_sequence`` ("ABC", "ACB" or ""), ``basis``
        ("three_phase", "regenerated_voltage", "single_phased_voltage_unverified",
        "supply_side_voltage", "single_phased_no_voltage", "inconsistent",
        "no_current", ""), ``rotation`` ("forward", "reverse" or "").
    """
    if open_point not in (None, "upstream", "downstream"):
        raise InvalidParameterError(f"{open_point=} must be 'upstream', 'downstream' or None")
    lengths = {np.size(a) for a in (v1, i1) if a is not None}
    if not lengths:
        raise InvalidParameterError("rotation_direction needs voltage (v1, v2) or current (i1, i2) sequence components")
    n = lengths.pop()
    blank = np.full(n, "", dtype=object)
    have_v = v1 is not None
    if have_v:
        vsum = np.abs(np.asarray(v1)).reshape(n) + np.abs(np.asarray(v2)).reshape(n)
        vmin = 0.05 * np.nanmax(vsum) if min_voltage_v is None else min_voltage_v
        vs = np.asarray(phase_sequence(np.asarray(v1), np.asarray(v2), margin), dtype=object).reshape(n)
        vs = np.where(vsum >= vmin, vs, "")
    else:
        vs = blank
    cs = np.asarray(phase_sequence(np.asarray(i1), np.asarray(i2), margin), dtype=object).reshape(n) if i1 is not None else blank
    if i_line_a is not None:
        im = np.abs(np.asarray(i_line_a, dtype=float)).reshape(3, n)
        imax = np.nanmax(im, axis=0)
        imin = 0.02 * np.nanmax(imax) if min_current_a is None else min_current_a
        n_open = np.sum(im < open_frac * imax, axis=0)
        no_cur = ~(imax >= imin) | ~(imax > 0)
    else:
        n_open = np.zeros(n, dtype=int)
        no_cur = np.zeros(n, dtype=bool)
    three = (n_open == 0) & ~no_cur
    seq3 = vs if have_v else cs
    both = (vs != "") & (cs != "")
    clash = three & both & (vs != cs)
    single = (n_open == 1) & ~no_cur
    single_v = single & have_v & (open_point != "downstream")
    seq = np.where(three & ~clash, seq3, np.where(single_v, vs, ""))
    single_label = {"upstream": "regenerated_voltage", "downstream": "supply_side_voltage",
                    None: "single_phased_voltage_unverified"}[open_point]
    basis = np.select(
        [no_cur, clash, three, single & have_v, single],
        ["no_current", "inconsistent", "three_phase", single_label, "single_phased_no_voltage"],
        default="",
    )
    rot = np.array([ROTATION[s] for s in seq], dtype=object)
    return pd.DataFrame({"v_sequence": vs, "i_sequence": cs, "basis": basis.astype(object), "rotation": rot})


def direction_from_cycles(cycles: pd.DataFrame, **options) -> pd.DataFrame:
    """`rotation_direction` on the measurement engine's cycle table (columns V1 V2 I1 I2 Ia_mag Ib_mag Ic_mag).

    Missing columns are simply not used (see docs/columns.md); ``options`` go
    to `rotation_direction` (``open_point=``, ``min_current_a=`` ...).
    """
    if "t_s" not in cycles.columns:
        raise InvalidParameterError(f"cycle table has no column 't_s'; columns are {list(cycles.columns)[:12]}...")
    get = lambda c: cycles[c].to_numpy(float) if c in cycles.columns else None  # noqa: E731
    v1, v2, i1, i2 = get("V1"), get("V2"), get("I1"), get("I2")
    if v1 is None or v2 is None:
        v1 = v2 = None
    if i1 is None or i2 is None:
        i1 = i2 = None
    mags = [get(f"I{c}_mag") for c in "abc"]
    il = np.vstack(mags) if all(m is not None for m in mags) else None
    out = rotation_direction(v1, v2, i1, i2, il, **options)
    out.insert(0, "t_s", cycles["t_s"].to_numpy(float))
    return out


def direction_from_waveforms(
    v_abc=None, i_abc=None, *, sample_rate_hz: float, f1_hz: float, window_cycles: int = 10, **options,
) -> pd.DataFrame:
    """`rotation_direction` from raw line-to-neutral voltages and/or line currents, shape (3, n) each.

    Phasors from `cycle_phasors`, sequence components from Fortescue (via
    `waveforms.measure.sequence.sequence_components`); ``options`` go to
    `rotation_direction`.
    """
    if v_abc is None and i_abc is None:
        raise InvalidParameterError("give voltages, currents or both")
    t = None
    v1 = v2 = i1 = i2 = il = None
    if v_abc is not None:
        t, pv = cycle_phasors(v_abc, sample_rate_hz, f1_hz, window_cycles)
        _, v1, v2 = sequence_components(pv[0], pv[1], pv[2])  # Fortescue 1918
    if i_abc is not None:
        t, pi = cycle_phasors(i_abc, sample_rate_hz, f1_hz, window_cycles)
        _, i1, i2 = sequence_components(pi[0], pi[1], pi[2])  # Fortescue 1918
        il = np.abs(pi)
    out = rotation_direction(v1, v2, i1, i2, il, **options)
    out.insert(0, "t_s", t)
    return out
