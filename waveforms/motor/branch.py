"""The motor's own current when the logger sees a feeder: logged current less the other equipment's.

Where the logger hangs on a feeder (a second motor, a capacitor bank between
the logger and the motor), the logged line currents are the motor's plus the
other equipment's.  Judging them against the motor's FLA would turn a hook-up
situation into a finding about the motor.  When an open phase below the
logger leaves current on the open line (`waveforms.detect.open_phase_change`),
that current after the onset is the other equipment's alone (the motor's
branch carries nothing on its open line).  The motor's balanced current
before the onset is what line X lost at the onset; the other equipment's
current before is the rest.  After the onset the other equipment keeps its
main sequence component (its positive-sequence voltage barely moves) and
answers the new voltage unbalance with the other component (a second motor's
negative-sequence impedance is low), read cycle by cycle from line X.  By
Kirchhoff's current law at the logger point the motor's branch current is,
cycle by cycle,

    I_motor,k = I_logged,k - I_other,k

(fundamental phasors per line).  The harmonic part of the logged RMS current
(``rms^2 - |fundamental|^2``) is kept with the motor, a conservative choice.
The inference is checked against the branch current the detector inferred at
the onset; when it does not agree, None is returned and the caller says the
current is the feeder's, not the motor's.

References
----------
.. [1] Kirchhoff's current law at a node (any circuits textbook, e.g. Alexander
   & Sadiku, *Fundamentals of Electric Circuits*; chapter from memory).
.. [2] C. L. Fortescue, "Method of symmetrical co-ordinates applied to the
   solution of polyphase networks", *Trans. AIEE* 37 (1918): a balanced set
   is ``I, a^2 I, a I`` in the A-B-C sequence.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from ..measure.sequence import A, sequence_components

LINES = "abc"
#: Cycles skipped after the onset before the other load's current is read (the transient) [-] (our choice)
SETTLE_CYCLES = 3
#: Cycles averaged to read the other load's current on the open line [-] (our choice)
READ_CYCLES = 25
#: The motor's inferred pre-onset current must agree with the detector's within this fraction [-] (our choice)
AGREE_FRAC = 0.15


def _phasors(cycles: pd.DataFrame) -> np.ndarray:
    """(n, 3) complex fundamental line-current phasors from ``Ix_mag`` / ``Ix_ang_deg``."""
    return np.column_stack([cycles[f"I{c}_mag"].to_numpy(float) * np.exp(1j * np.deg2rad(cycles[f"I{c}_ang_deg"].to_numpy(float)))
                            for c in LINES])


def motor_branch_cycles(
    cycles: pd.DataFrame, open_line: str, onset_s: float, end_s: float | None, branch_before_a: float,
) -> tuple[pd.DataFrame, dict[str, Any]] | None:
    """The per-cycle table with the motor's branch current in place of the logged feeder current.

    Parameters
    ----------
    cycles : DataFrame
        Per-cycle table with ``t_s``, ``I{a,b,c}_rms``, ``_mag``, ``_ang_deg``.
    open_line : {"A", "B", "C"}
        The motor's open line (the other equipment's current is read on it after the onset).
    onset_s, end_s : float, float or None
        The open phase's onset and end [s] (None: open to the end of the capture).
    branch_before_a : float
        The motor's current before the onset inferred by the detector [A], the cross-check.

    Returns
    -------
    (DataFrame, dict) or None
        A copy of ``cycles`` with ``I{a,b,c}_rms``, ``_mag``, ``_ang_deg``, ``I1``, ``I2`` (and ``I0``) of
        the motor's branch, and the figures of the inference (``other_load_a``, ``motor_before_a``); None
        when the columns are missing or the inference disagrees with ``branch_before_a``.

    Examples
    --------
    A balanced motor current of 50 A beside a balanced 20 A load; the motor's line B opens at 1 s
    (it then draws +-80 A single-phased on A and C):

    >>> import numpy as np, pandas as pd
    >>> from waveforms.measure.sequence import A
    >>> t = np.arange(100) / 50 + 0.01
    >>> bal = np.array([1, A**2, A])
    >>> motor = np.where((t < 1.0)[:, None], 50 * np.exp(-0.5j) * bal, 80 * np.exp(-0.5j) * np.array([1, 0, -1]))
    >>> logged = motor + 20 * np.exp(1.0j) * bal
    >>> cyc = pd.DataFrame({"t_s": t} | {f"I{c}_{k}": f(logged[:, i]) for i, c in enumerate("abc")
    ...                    for k, f in (("mag", np.abs), ("ang_deg", lambda x: np.degrees(np.angle(x))),
    ...                                 ("rms", np.abs))})
    >>> out, figs = motor_branch_cycles(cyc, "B", 1.0, None, 50.0)
    >>> print(round(figs["other_load_a"], 1), out[["Ia_rms", "Ib_rms", "Ic_rms"]].iloc[[0, -1]].round(1).to_numpy().tolist())
    20.0 [[50.0, 50.0, 50.0], [80.0, 0.0, 80.0]]
    """
    cols = [f"I{c}_{k}" for c in LINES for k in ("mag", "ang_deg", "rms")]
    if "t_s" not in cycles or any(c not in cycles for c in cols) or open_line not in "ABC" or not np.isfinite(branch_before_a):
        return None
    t = cycles["t_s"].to_numpy(float)
    p = _phasors(cycles)
    x = "ABC".index(open_line)
    k_on = int(np.searchsorted(t, onset_s))
    k0 = k_on + SETTLE_CYCLES
    k_end = len(t) if end_s is None else int(np.searchsorted(t, end_s))
    before = slice(max(0, k_on - READ_CYCLES - 2), max(0, k_on - 2))
    if min(k_end, k0 + READ_CYCLES) - k0 < 3 or before.stop - before.start < 3:
        return None

    def med(z: np.ndarray) -> np.ndarray:
        return np.nanmedian(z.real, axis=0) + 1j * np.nanmedian(z.imag, axis=0)

    lb = med(p[before])                      # logged, before: motor (balanced) + other equipment
    la = med(p[k0:min(k_end, k0 + READ_CYCLES)])
    op = A ** 2 if np.angle(lb[1] / lb[0]) < 0 else A  # Ib = a^2 Ia (A-B-C) or a Ia (A-C-B) [2]
    rot = op ** (np.arange(3) - x)
    m_before = (lb[x] - la[x]) * rot         # the motor's balanced current: all of it left line X at the onset [1]
    o_before = lb - m_before                 # the other equipment's, before
    # after the onset the other equipment keeps its main sequence component (its voltages barely move) and answers
    # the small voltage unbalance with the other one, read cycle by cycle from line X, where the motor carries nothing
    e_main, e_minor = rot / rot[x], np.conj(rot / rot[x])  # unit sets of the main and the other rotation, 1 on line X
    main = np.sum(o_before * np.conj(e_main)) / 3.0
    minor_t = p[:, x] - main                 # e_main[x] = e_minor[x] = 1
    other_after = main * e_main[None, :] + minor_t[:, None] * e_minor[None, :]
    after = np.zeros(len(t), bool)
    after[k_on:k_end] = True
    motor = np.where(after[:, None], p - other_after, p - o_before[None, :])
    other_x = la[x]
    with np.errstate(invalid="ignore"):
        harm_sq = np.clip(cycles[[f"I{c}_rms" for c in LINES]].to_numpy(float) ** 2 - np.abs(p) ** 2, 0.0, None)
    motor_before = float(abs(m_before[0]))
    if not (abs(motor_before - branch_before_a) <= AGREE_FRAC * branch_before_a):
        return None
    out = cycles.copy()
    for i, c in enumerate(LINES):
        out[f"I{c}_mag"] = np.abs(motor[:, i])
        out[f"I{c}_ang_deg"] = np.degrees(np.angle(motor[:, i]))
        out[f"I{c}_rms"] = np.sqrt(np.abs(motor[:, i]) ** 2 + harm_sq[:, i])
    i0, i1, i2 = sequence_components(motor[:, 0], motor[:, 1], motor[:, 2])
    for name, v in (("I0", i0), ("I1", i1), ("I2", i2)):
        if name in out:
            out[name] = np.abs(v)
    return out, {"other_load_a": abs(other_x), "motor_before_a": motor_before, "open_line": open_line}
