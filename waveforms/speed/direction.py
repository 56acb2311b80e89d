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

    Examples
    --------
    Two seconds of a balanced 230 V A-B-C set at 50 Hz, 2 kS/s: ten-cycle
    windows give RMS phasors 120 degrees apart:

    >>> import numpy as np
    >>> fs = 2000.0
    >>> t = np.arange(4000) / fs
    >>> v = 230 * np.sqrt(2) * np.cos(2 * np.pi * (50 * t - np.arange(3)[:, None] / 3))
    >>> i = 10 * np.sqrt(2) * np.cos(2 * np.pi * (50 * t - np.arange(3)[:, None] / 3) - 0.5)

    >>> t_s, ph = cycle_phasors(v, fs, 50.0)
    >>> print(t_s[:3], np.abs(ph[:, 0]).round(3), np.angle(ph[:, 0], deg=True).round(1) + 0.0)
    [0.1 0.3 0.5] [230. 230. 230.] [   0. -120.  120.]
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
    min_current_a: float | None = None, min_voltage_v: float | None = None, open_point=None,
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
    open_point : {"upstream", "downstream", None} or array_like of them
        Where the open point of a single-phased row lies relative to the logger
        (as `waveforms.detect` reports it), for all rows or one value per row
        (``""`` and ``"unknown"`` count as None).  ``upstream``: the voltage inputs see
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

    Examples
    --------
    Positive sequence dominant in both voltages and currents (Fortescue 1918):
    the field, and the rotor with it, turns A-B-C, forward:

    >>> print(rotation_direction(v1=[230.0], v2=[1.0], i1=[10.0], i2=[0.5]).to_string())
      v_sequence i_sequence        basis rotation
    0        ABC        ABC  three_phase  forward
    """
    return pd.DataFrame(_rotation_arrays(v1, v2, i1, i2, i_line_a, margin=margin, open_frac=open_frac,
                                         min_current_a=min_current_a, min_voltage_v=min_voltage_v, open_point=open_point))


#: Row bases of `rotation_direction`, in the order of its integer codes.
_ROW_BASES = ("", "no_current", "inconsistent", "three_phase", "regenerated_voltage", "supply_side_voltage",
              "single_phased_voltage_unverified", "single_phased_no_voltage")
_SEQUENCES = ("", "ABC", "ACB")


def _names(names: tuple[str, ...], code: np.ndarray) -> np.ndarray:
    """Object array of ``names[code]`` (indexing an object array: no new string per row)."""
    return np.array(names, dtype=object)[code]


def _sequence_code(x1, x2, margin: float) -> np.ndarray:
    """0 / 1 / 2 for "" / "ABC" / "ACB", as `waveforms.measure.sequence.phase_sequence` decides them."""
    seq = phase_sequence(np.asarray(x1), np.asarray(x2), margin)
    return np.select([seq == "ABC", seq == "ACB"], [1, 2], default=0)


def _rotation_arrays(v1, v2, i1, i2, i_line_a, *, margin: float, open_frac: float, min_current_a, min_voltage_v,
                     open_point, codes: bool = False) -> dict[str, np.ndarray]:
    """`rotation_direction`'s columns as object arrays (with ``codes``: also ``basis_code``, ``seq_code``).

    Decisions are made on small integer codes and turned into strings once at
    the end (a cycle table has one row per cycle: 180 000 for an hour at 50 Hz).
    """
    lengths = {np.size(a) for a in (v1, i1) if a is not None}
    if not lengths:
        raise InvalidParameterError("rotation_direction needs voltage (v1, v2) or current (i1, i2) sequence components")
    n = lengths.pop()
    if np.ndim(open_point) == 0:
        if open_point not in (None, "upstream", "downstream"):
            raise InvalidParameterError(f"{open_point=} must be 'upstream', 'downstream' or None")
        ops = np.full(n, open_point or "", dtype=object)
    else:
        ops = np.asarray(open_point, dtype=object).reshape(-1)
        bad = set(ops.tolist()) - {None, "", "unknown", "upstream", "downstream"}
        if ops.size != n or bad:
            raise InvalidParameterError(f"open_point per row: need {n} values from 'upstream', 'downstream', '', None; "
                                        f"got {ops.size} values{f', including {sorted(map(str, bad))}' if bad else ''}")
    upstream, downstream = ops == "upstream", ops == "downstream"
    blank = np.zeros(n, dtype=np.int8)
    have_v = v1 is not None
    if have_v:
        vsum = np.abs(np.asarray(v1)).reshape(n) + np.abs(np.asarray(v2)).reshape(n)
        vmin = 0.05 * np.nanmax(vsum) if min_voltage_v is None else min_voltage_v
        vs = np.where(vsum >= vmin, _sequence_code(v1, v2, margin).reshape(n), 0)
    else:
        vs = blank
    cs = _sequence_code(i1, i2, margin).reshape(n) if i1 is not None else blank
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
    both = (vs != 0) & (cs != 0)
    clash = three & both & (vs != cs)
    single = (n_open == 1) & ~no_cur
    single_v = single & have_v & ~downstream
    seq = np.where(three & ~clash, seq3, np.where(single_v, vs, 0))
    b = _ROW_BASES.index
    single_label = np.select([upstream, downstream], [b("regenerated_voltage"), b("supply_side_voltage")],
                             default=b("single_phased_voltage_unverified"))
    basis = np.select(
        [no_cur, clash, three, single & have_v, single],
        [b("no_current"), b("inconsistent"), b("three_phase"), single_label, b("single_phased_no_voltage")],
        default=b(""),
    )
    out = {"v_sequence": _names(_SEQUENCES, vs), "i_sequence": _names(_SEQUENCES, cs), "basis": _names(_ROW_BASES, basis),
           "rotation": _names(tuple(ROTATION[q] for q in _SEQUENCES), seq)}
    if codes:
        out["basis_code"], out["seq_code"] = basis, seq
    return out


def direction_from_cycles(cycles: pd.DataFrame, **options) -> pd.DataFrame:
    """`rotation_direction` on the measurement engine's cycle table (columns V1 V2 I1 I2 Ia_mag Ib_mag Ic_mag).

    Missing columns are simply not used (see docs/columns.md); ``options`` go
    to `rotation_direction` (``open_point=``, ``min_current_a=`` ...).

    Examples
    --------
    >>> import pandas as pd
    >>> cyc = pd.DataFrame({"t_s": [0.01, 0.03, 0.05], "V1": [230.0] * 3, "V2": [0.5] * 3, "I1": [10.0] * 3,
    ...                     "I2": [0.2] * 3, "Ia_mag": [10.0] * 3, "Ib_mag": [10.0] * 3, "Ic_mag": [10.0] * 3})

    >>> print(direction_from_cycles(cyc)[["v_sequence", "basis", "rotation"]].iloc[0].tolist())
    ['ABC', 'three_phase', 'forward']
    """
    a = _cycle_arrays(cycles, **options)
    return pd.DataFrame({k: a[k] for k in ("t_s", "v_sequence", "i_sequence", "basis", "rotation")})


def direction_from_waveforms(
    v_abc=None, i_abc=None, *, sample_rate_hz: float, f1_hz: float, window_cycles: int = 10, **options,
) -> pd.DataFrame:
    """`rotation_direction` from raw line-to-neutral voltages and/or line currents, shape (3, n) each.

    Phasors from `cycle_phasors`, sequence components from Fortescue (via
    `waveforms.measure.sequence.sequence_components`); ``options`` go to
    `rotation_direction`.

    Examples
    --------
    The same waveforms with B and C swapped are an A-C-B set, which turns the
    other way:

    >>> import numpy as np
    >>> fs = 2000.0
    >>> t = np.arange(4000) / fs
    >>> v = 230 * np.sqrt(2) * np.cos(2 * np.pi * (50 * t - np.arange(3)[:, None] / 3))
    >>> i = 10 * np.sqrt(2) * np.cos(2 * np.pi * (50 * t - np.arange(3)[:, None] / 3) - 0.5)

    >>> print(direction_from_waveforms(v, i, sample_rate_hz=fs, f1_hz=50.0)["rotation"].iloc[0],
    ...       direction_from_waveforms(v[[0, 2, 1]], i[[0, 2, 1]], sample_rate_hz=fs, f1_hz=50.0)["rotation"].iloc[0])
    forward reverse
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


# -- direction relative to the supply, per cycle, speed window and running period -----------------

#: ``direction_basis`` values: how a direction was found, or why it was not (see docs/speed.md).
DIRECTION_BASES = {
    "three_phase_sequence": "fed on three lines: the rotor turns with the supply's field",
    "regenerated_voltage": "single-phased, open point upstream: sequence of the terminal voltages with the regenerated one",
    "sidebands": "the current's fundamental and its speed components each on one side of zero frequency (a rotating field)",
    "no_current": "no motor current",
    "no_dominant_sequence": "neither sequence dominates (stalled or slow single-phased rotor, or a heavy unbalance)",
    "supply_side_voltage": "single-phased with the open point downstream: the logged voltages are the supply's, "
                           "and the current of two lines in series is one signal, symmetric about zero frequency",
    "open_point_unknown": "single-phased, but whether the logger sees the motor terminals is not known",
    "no_voltage": "single-phased without voltage channels",
    "inconsistent": "the voltage and current sequences disagree",
    "changed_within_window": "forward and reverse cycles in the same window",
}
DIRECTIONS = ("forward", "reverse", "unknown")
_BASIS_OF_ROTATION = {"three_phase": "three_phase_sequence", "regenerated_voltage": "regenerated_voltage",
                      "single_phased_voltage_unverified": "open_point_unknown", "supply_side_voltage": "supply_side_voltage",
                      "single_phased_no_voltage": "no_voltage", "inconsistent": "inconsistent", "no_current": "no_current",
                      "": "no_current"}


def supply_sequence(rot: pd.DataFrame) -> tuple[str, str]:
    """The supply's phase sequence from the three-phase-fed rows of a `rotation_direction` table.

    Returns ``(sequence, how)``: the voltages' majority sequence over rows with
    basis ``three_phase`` (else the currents'), ``how`` = ``"measured"``; with no
    such row, ``("ABC", "assumed")`` -- the terminals' A-B-C as labelled.

    Examples
    --------
    >>> import numpy as np
    >>> fs = 2000.0
    >>> t = np.arange(4000) / fs
    >>> v = 230 * np.sqrt(2) * np.cos(2 * np.pi * (50 * t - np.arange(3)[:, None] / 3))
    >>> i = 10 * np.sqrt(2) * np.cos(2 * np.pi * (50 * t - np.arange(3)[:, None] / 3) - 0.5)

    >>> supply_sequence(direction_from_waveforms(v[[0, 2, 1]], sample_rate_hz=fs, f1_hz=50.0))
    ('ACB', 'measured')
    """
    three = np.asarray(rot["basis"], dtype=object) == "three_phase"
    for col in ("v_sequence", "i_sequence"):
        vals = np.asarray(rot[col], dtype=object)[three]
        n_abc, n_acb = int(np.sum(vals == "ABC")), int(np.sum(vals == "ACB"))
        if n_abc + n_acb:
            return ("ABC" if n_abc >= n_acb else "ACB"), "measured"
    return "ABC", "assumed"


def cycle_direction(cycles: pd.DataFrame, open_point=None, supply: str | None = None, **options) -> tuple[pd.DataFrame, str, str]:
    """Per-cycle direction of rotation relative to the supply's phase sequence.

    Parameters
    ----------
    cycles : DataFrame
        The cycle table (``t_s``, ``V1 V2 I1 I2 Ia_mag Ib_mag Ic_mag``).
    open_point : str, None or array_like
        Per cycle (or for all): ``"upstream"`` / ``"downstream"`` while an open
        phase with that location is active, else ``""`` (see `rotation_direction`).
    supply : {"ABC", "ACB", None}
        The supply's sequence; None = `supply_sequence` of the record.
    **options
        To `rotation_direction`.

    Returns
    -------
    (DataFrame, str, str)
        Columns ``t_s``, ``rotor_sequence`` ("ABC", "ACB", ""), ``direction``
        (`DIRECTIONS`), ``direction_basis`` (`DIRECTION_BASES`); the supply
        sequence used and how it was found (``"measured"``, ``"assumed"``, ``"given"``).

    Examples
    --------
    >>> import pandas as pd
    >>> cyc = pd.DataFrame({"t_s": [0.01, 0.03, 0.05], "V1": [230.0] * 3, "V2": [0.5] * 3, "I1": [10.0] * 3,
    ...                     "I2": [0.2] * 3, "Ia_mag": [10.0] * 3, "Ib_mag": [10.0] * 3, "Ic_mag": [10.0] * 3})

    >>> per_cycle, supply, how = cycle_direction(cyc)
    >>> print(per_cycle["direction"].tolist(), supply, how)
    ['forward', 'forward', 'forward'] ABC measured
    """
    if supply is not None and supply not in ("ABC", "ACB"):
        raise InvalidParameterError(f"supply={supply!r} must be 'ABC', 'ACB' or None")
    rot = _cycle_arrays(cycles, open_point=open_point, **options)
    if supply is None:
        sup, how = supply_sequence(rot)
    else:
        sup, how = supply, "given"
    seq = rot["seq_code"]  # 0 "", 1 "ABC", 2 "ACB"
    d_code = np.where(seq == 0, 2, np.where(seq == _SEQUENCES.index(sup), 0, 1))  # DIRECTIONS: forward, reverse, unknown
    mapped = [_BASIS_OF_ROTATION[k] for k in _ROW_BASES]
    names = tuple(dict.fromkeys(mapped + ["no_dominant_sequence"]))
    b_code = np.array([names.index(m) for m in mapped])[rot["basis_code"]]
    turning = np.isin(b_code, [names.index("three_phase_sequence"), names.index("regenerated_voltage")])
    b_code = np.where((seq == 0) & turning, names.index("no_dominant_sequence"), b_code)
    out = pd.DataFrame({"t_s": rot["t_s"], "rotor_sequence": _names(_SEQUENCES, seq), "direction": _names(DIRECTIONS, d_code),
                        "direction_basis": _names(names, b_code)})
    return out, sup, how


def _cycle_arrays(cycles: pd.DataFrame, **options) -> dict[str, np.ndarray]:
    """`direction_from_cycles` as arrays, with the integer codes (see `_rotation_arrays`)."""
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
    opts = {"margin": 2.0, "open_frac": 0.05, "min_current_a": None, "min_voltage_v": None, "open_point": None} | options
    out = _rotation_arrays(v1, v2, i1, i2, il, codes=True, **opts)
    out["t_s"] = cycles["t_s"].to_numpy(float)
    return out


def interval_direction(per_cycle: pd.DataFrame, t0_s, t1_s, min_share: float = 0.5) -> tuple[np.ndarray, np.ndarray]:
    """Direction and basis over intervals ``[t0_s, t1_s]`` from a `cycle_direction` table.

    An interval gets a direction when every cycle in it that has one agrees and
    they are at least ``min_share`` of its cycles carrying current; forward and
    reverse cycles together give ``unknown`` / ``changed_within_window``; otherwise
    ``unknown`` with the most frequent reason among its cycles (our rule, no source).

    Examples
    --------
    >>> import pandas as pd
    >>> cyc = pd.DataFrame({"t_s": [0.01, 0.03, 0.05], "V1": [230.0] * 3, "V2": [0.5] * 3, "I1": [10.0] * 3,
    ...                     "I2": [0.2] * 3, "Ia_mag": [10.0] * 3, "Ib_mag": [10.0] * 3, "Ic_mag": [10.0] * 3})

    >>> per_cycle, supply, how = cycle_direction(cyc)
    >>> d, basis = interval_direction(per_cycle, [0.0], [0.06])
    >>> print(d.tolist(), basis.tolist())
    ['forward'] ['three_phase_sequence']
    """
    t0 = np.atleast_1d(np.asarray(t0_s, dtype=float))
    t1 = np.atleast_1d(np.asarray(t1_s, dtype=float))
    t = per_cycle["t_s"].to_numpy(float)
    d = per_cycle["direction"]  # compared as a column (no conversion of every row to a Python string)
    code, names = pd.factorize(per_cycle["direction_basis"].astype(str), sort=True)  # hashed, sorted names
    names = np.asarray(names, dtype=object)
    lo, hi = np.searchsorted(t, t0, side="left"), np.searchsorted(t, t1, side="right")

    def count(mask: np.ndarray) -> np.ndarray:
        c = np.concatenate(([0], np.cumsum(mask, dtype=np.int64)))
        return c[hi] - c[lo]

    cls = {k: (d == k).to_numpy(bool) for k in ("forward", "reverse", "unknown")}
    n_f, n_r = count(cls["forward"]), count(cls["reverse"])
    # per interval and basis: cycles of each direction class (a handful of bases, so a loop over them)
    by = {k: np.stack([count(m & (code == j)) for j in range(names.size)], axis=1) if names.size else np.zeros((t0.size, 0), int)
          for k, m in cls.items()}
    no_cur = names == "no_current"
    n_live = (by["forward"] + by["reverse"] + by["unknown"])[:, ~no_cur].sum(axis=1)
    out_d = np.full(t0.size, "unknown", dtype=object)
    out_b = np.full(t0.size, "no_current", dtype=object)
    both = (n_f > 0) & (n_r > 0)
    given = ~both & ((n_f + n_r) > 0) & ((n_f + n_r) >= min_share * np.maximum(n_live, 1))
    out_d[given] = np.where(n_f[given] > 0, "forward", "reverse")
    if names.size:
        best_given = np.where((n_f > 0)[:, None], by["forward"], by["reverse"]).argmax(axis=1)
        unk = np.where(no_cur[None, :], 0, by["unknown"])
        best_unknown = np.where(unk.sum(axis=1) > 0, unk.argmax(axis=1), -1)
        rest = ~both & ~given & (hi > lo)
        out_b[given] = names[best_given[given]]
        pick = rest & (best_unknown >= 0)
        out_b[pick] = names[best_unknown[pick]]
    out_b[both] = "changed_within_window"
    return out_d, out_b


#: Both the fundamental and the speed component must be this far to one side of zero frequency [dB] (our choice).
SIDE_MARGIN_DB = 10.0


def sideband_direction(fundamental_side_db, component_side_db, supply: str, margin_db: float = SIDE_MARGIN_DB) -> np.ndarray:
    """Direction from which side of zero frequency the current's fundamental and speed components lie.

    In the current space vector (Clarke) a positive-sequence field shows at
    ``+f1``, a negative-sequence one at ``-f1`` (Fortescue 1918; Clarke 1943,
    from memory).  When both the fundamental and the agreeing speed component
    lie on one side (``|side| >= margin_db``), they belong to one rotating
    field, and a rotor whose slip lies in the searched motoring band turns
    with it: rotor sequence ABC for the ``+`` side, ACB for ``-``.  A
    single-phased motor's current (two lines in series, ``Ia = -Ib``) is one
    real signal whose spectrum is symmetric, so it gives ``unknown``.
    (Reasoning from the space-vector definition; common practice, no source.)

    Returns
    -------
    ndarray of str
        `DIRECTIONS` relative to ``supply``.

    Examples
    --------
    Fundamental and speed component both on the positive-frequency side: an
    A-B-C field; both on the negative side: A-C-B; a symmetric spectrum (one
    real current, single phasing) tells nothing:

    >>> sideband_direction([20.0, -20.0, 0.0], [15.0, -15.0, 0.0], "ABC").tolist()
    ['forward', 'reverse', 'unknown']
    """
    fs_ = np.asarray(fundamental_side_db, dtype=float)
    cs_ = np.asarray(component_side_db, dtype=float)
    one_sided = (np.abs(fs_) >= margin_db) & (np.abs(cs_) >= margin_db)
    seq = np.where(fs_ > 0, "ABC", "ACB")
    d = np.where(seq == supply, "forward", "reverse")
    return np.where(one_sided, d, "unknown").astype(object)


def orient_track(track: pd.DataFrame, per_cycle: pd.DataFrame, supply: str) -> pd.DataFrame:
    """The speed track with ``direction`` / ``direction_basis`` columns and signed ``rpm`` / ``f_rotor_hz``.

    Direction per window from `interval_direction` over its cycles; where that
    gives none, from `sideband_direction` when the track has the side columns.
    ``rpm`` and ``f_rotor_hz`` become negative for ``reverse``; ``slip`` is
    unchanged: it is relative to the rotor's own running direction (the
    field it follows), ``s = 1 - |n| / n_s``.

    Examples
    --------
    >>> import pandas as pd
    >>> cyc = pd.DataFrame({"t_s": [0.01, 0.03, 0.05], "V1": [230.0] * 3, "V2": [0.5] * 3, "I1": [10.0] * 3,
    ...                     "I2": [0.2] * 3, "Ia_mag": [10.0] * 3, "Ib_mag": [10.0] * 3, "Ic_mag": [10.0] * 3})

    >>> per_cycle, supply, how = cycle_direction(cyc)
    >>> track = pd.DataFrame({"t_start_s": [0.0], "t_end_s": [0.06], "rpm": [1470.0], "f_rotor_hz": [24.5], "slip": [0.02]})
    >>> out = orient_track(track, per_cycle, supply)
    >>> print(float(out["rpm"].iloc[0]), out["direction"].iloc[0])
    1470.0 forward
    """
    out = track.copy()
    if len(out) == 0:
        out["direction"] = pd.Series(dtype=object)
        out["direction_basis"] = pd.Series(dtype=object)
        return out
    d, b = interval_direction(per_cycle, out["t_start_s"].to_numpy(float), out["t_end_s"].to_numpy(float))
    if "fundamental_side_db" in out and "component_side_db" in out:
        sb = sideband_direction(out["fundamental_side_db"].to_numpy(float), out["component_side_db"].to_numpy(float), supply)
        use = (d == "unknown") & (sb != "unknown") & (b != "changed_within_window")
        d = np.where(use, sb, d)
        b = np.where(use, "sidebands", b)
    out["direction"] = d.astype(object)
    out["direction_basis"] = b.astype(object)
    sign = np.where(d == "reverse", -1.0, 1.0)
    for col in ("rpm", "f_rotor_hz"):
        if col in out:
            out[col] = sign * np.abs(out[col].to_numpy(float))
    return out
