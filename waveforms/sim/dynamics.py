"""Time-domain model: induction machine + supply + line switches + shaft load.

State ``y = [i_alpha, i_beta, psi_r_alpha, psi_r_beta, w_m, theta_m]``: the
stator current and rotor flux-linkage space vectors in the stationary frame
(winding coordinates, power-invariant), mechanical speed [rad/s] and
mechanical rotor angle [rad].  Equations (stationary reference frame)::

    v_s   = rs i_s + d psi_s/dt,          psi_s = sigma Ls i_s + k psi_r,  k = Lm/Lr
    0     = rr i_r + d psi_r/dt - w_r J psi_r,   i_r = (psi_r - Lm i_s)/Lr
    T_e   = (P/2) k (psi_r_alpha i_beta - psi_r_beta i_alpha)
    J_m dw_m/dt = T_e - T_load(w_m) - B w_m,     w_r = (P/2) w_m

with the supply ``v_s = M^T (e - R_src i_line - L_src d i_line/dt)`` and the
open-line constraint imposed by the projector ``P`` (see
`waveforms.sim.topology`)::

    (sigma Ls + m L_src) d i_s/dt = P [ M^T e - (rs + m R_src) i_s - k d psi_r/dt ]

The ODE is integrated with LSODA segment by segment: a new segment starts
wherever the supply, the load or a switch changes.  Plain stretches go
through `scipy.integrate.odeint` (whose compiled loop also interpolates to
the sample instants, so the only Python work per step is the right-hand
side); a commanded opening takes effect at the next zero of that line's
current (a switch interrupts at current zero), located cycle by cycle with
`scipy.integrate.solve_ivp` event detection.  Closing is immediate.

References
----------
.. [1] P. C. Krause, O. Wasynczuk, S. D. Sudhoff, *Analysis of Electric
   Machinery and Drive Systems*, 2nd ed., Wiley, 2002, chapter 4: voltage
   equations in the arbitrary reference frame (here the stationary frame,
   w = 0), flux linkages, torque and the rotor mechanical equation
   ``J (2/P) d w_r/dt = T_e - T_L`` (equation numbers from memory).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np
from scipy.integrate import odeint, solve_ivp

from ..errors import InvalidParameterError
from .loads import OMEGA_EPS_RAD_S, Load
from .machine import MachineParameters
from .supply import Supply, emf_abc
from .topology import line_map, projector

N_STATE = 6


@dataclasses.dataclass(frozen=True)
class SwitchOp:
    """A commanded switch operation on one line.

    Parameters
    ----------
    line : {"A", "B", "C"}
    time_s : float
        Commanded instant [s from capture start].
    action : {"open", "close"}
    """

    line: str
    time_s: float
    action: str


@dataclasses.dataclass(frozen=True)
class Piece:
    """One integrated stretch with constant topology, supply and load."""

    t0_s: float
    t1_s: float
    closed: tuple[bool, bool, bool]
    sample_start: int
    sample_stop: int


@dataclasses.dataclass
class Trajectory:
    """Integrated states at the sample instants and how each stretch was set up.

    ``states`` has shape (6, n); ``pieces`` cover the samples contiguously.
    ``interruptions`` lists ``(line, commanded_s, actual_s)`` for every opening.
    ``closings`` lists ``(line, time_s)``.
    """

    t_s: np.ndarray
    states: np.ndarray
    pieces: list[Piece]
    interruptions: list[tuple[str, float, float]]
    closings: list[tuple[str, float]]
    n_rhs: int


class _Segment:
    """Constants of one stretch, shared by the solver's right-hand side and the vectorised post-processing."""

    def __init__(self, machine: MachineParameters, supply: Supply, load: Load, closed: tuple[bool, bool, bool], t_s: float, locked: bool) -> None:
        m = machine.winding_to_line
        self.m_map = line_map(machine.connection)
        self.proj = projector(machine.connection, closed)
        c, s = supply.emf_coefficients(t_s)
        self.c_abc, self.s_abc = c, s
        self.c_ws = self.m_map.T @ c  # (2, k) machine-side EMF coefficients: M^T e
        self.s_ws = self.m_map.T @ s
        self.orders = supply.orders
        self.omega = supply.omega_rad_s
        self.k = machine.lm_h / machine.lr_h
        self.sigma_ls = machine.ls_h - machine.lm_h**2 / machine.lr_h
        self.r_tot = machine.rs_ohm + m * supply.source_r_ohm
        self.l_tot = self.sigma_ls + m * supply.source_l_h
        self.rr, self.lm, self.lr = machine.rr_ohm, machine.lm_h, machine.lr_h
        self.rs = machine.rs_ohm
        self.pp = float(machine.pole_pairs)
        self.inv_j = 0.0 if locked else 1.0 / machine.inertia_kg_m2
        self.bf = machine.friction_n_m_s
        self.kq, self.tst = load.coefficients(t_s)
        self.src_r, self.src_l = supply.source_r_ohm, supply.source_l_h

    def rhs(self):  # noqa: ANN201 - returns a closure
        """Right-hand side ``f(t, y)`` for the solver: plain float arithmetic, no numpy per call."""
        (p11, p12), (p21, p22) = self.proj.tolist()
        terms = [(float(h) * self.omega, float(ca), float(cb), float(sa), float(sb))
                 for h, ca, cb, sa, sb in zip(self.orders, self.c_ws[0], self.c_ws[1], self.s_ws[0], self.s_ws[1], strict=True)]
        k, rr, lm, inv_lr = self.k, self.rr, self.lm, 1.0 / self.lr
        r_tot, inv_l = self.r_tot, 1.0 / self.l_tot
        pp, inv_j, bf, kq, tst = self.pp, self.inv_j, self.bf, self.kq, self.tst
        inv_eps = 1.0 / OMEGA_EPS_RAD_S
        cos, sin, tanh = math.cos, math.sin, math.tanh

        def f(t: float, y: np.ndarray) -> list[float]:
            ia, ib, fa, fb, wm, _ = y.tolist()  # Python floats: much cheaper arithmetic than numpy scalars
            ea = eb = 0.0
            for w, ca, cb, sa, sb in terms:
                cw, sw = cos(w * t), sin(w * t)
                ea += ca * cw + sa * sw
                eb += cb * cw + sb * sw
            wr = pp * wm
            # rotor: d psi_r/dt = -rr i_r + w_r J psi_r          (Krause ch. 4, stationary frame)
            dfa = -rr * (fa - lm * ia) * inv_lr - wr * fb
            dfb = -rr * (fb - lm * ib) * inv_lr + wr * fa
            # stator, constrained by the open lines: L di/dt = P [e - R i - k dpsi_r/dt]
            ra = (ea - r_tot * ia - k * dfa) * inv_l
            rb = (eb - r_tot * ib - k * dfb) * inv_l
            te = pp * k * (fa * ib - fb * ia)  # Krause ch. 4 torque, power-invariant form
            tl = kq * wm * abs(wm) + tst * tanh(wm * inv_eps)
            return [p11 * ra + p12 * rb, p21 * ra + p22 * rb, dfa, dfb, (te - tl - bf * wm) * inv_j, wm]

        return f

    def derivatives(self, t: np.ndarray, y: np.ndarray) -> dict[str, np.ndarray]:
        """Vectorised derivatives and torques over many samples (same equations as `rhs`)."""
        ia, ib, fa, fb, wm = y[0], y[1], y[2], y[3], y[4]
        e_ws = np.zeros((2, t.size))
        for j, h in enumerate(self.orders):
            arg = h * self.omega * t
            e_ws += self.c_ws[:, j : j + 1] * np.cos(arg) + self.s_ws[:, j : j + 1] * np.sin(arg)
        wr = self.pp * wm
        dfa = -self.rr * (fa - self.lm * ia) / self.lr - wr * fb
        dfb = -self.rr * (fb - self.lm * ib) / self.lr + wr * fa
        ra = (e_ws[0] - self.r_tot * ia - self.k * dfa) / self.l_tot
        rb = (e_ws[1] - self.r_tot * ib - self.k * dfb) / self.l_tot
        p = self.proj
        dia = p[0, 0] * ra + p[0, 1] * rb
        dib = p[1, 0] * ra + p[1, 1] * rb
        te = self.pp * self.k * (fa * ib - fb * ia)
        tl = self.kq * wm * np.abs(wm) + self.tst * np.tanh(wm / OMEGA_EPS_RAD_S)
        return {"dia": dia, "dib": dib, "dfa": dfa, "dfb": dfb, "te": te, "tl": tl}


def _commands(ops: Sequence[SwitchOp], t_end_s: float) -> dict[float, list[SwitchOp]]:
    out: dict[float, list[SwitchOp]] = {}
    for op in ops:
        if op.line not in ("A", "B", "C") or op.action not in ("open", "close"):
            raise InvalidParameterError(f"switch operation {op!r}: line must be A/B/C and action open/close")
        if not op.time_s > 0.0:
            raise InvalidParameterError(
                f"switch operation {op.action} {op.line} at {op.time_s} s is not after t = 0; "
                "give the state at t = 0 with closed_at_start"
            )
        if op.time_s >= t_end_s:  # after the last sample: no effect on the capture
            continue
        out.setdefault(float(op.time_s), []).append(op)
    return out


def integrate(
    machine: MachineParameters,
    supply: Supply,
    load: Load,
    t_s: np.ndarray,
    y0: np.ndarray,
    closed0: tuple[bool, bool, bool] = (True, True, True),
    switch_ops: Sequence[SwitchOp] = (),
    locked: bool = False,
    rtol: float = 1e-8,
) -> Trajectory:
    """Integrate the model and return the states at the instants ``t_s``.

    Parameters
    ----------
    machine, supply, load
        Model parts.
    t_s : ndarray
        Increasing sample instants, starting at 0 [s].
    y0 : ndarray (6,)
        Initial state at t = 0 (see module docstring).
    closed0 : 3 bools
        Switch states of lines A, B, C at t = 0.
    switch_ops : sequence of SwitchOp
        Commanded openings and closings; an opening takes effect at the next
        current zero of that line.
    locked : bool
        Hold the rotor (infinite inertia): locked-rotor tests.
    rtol : float
        Solver relative tolerance.
    """
    t_s = np.asarray(t_s, dtype=float)
    if t_s.ndim != 1 or t_s.size < 2 or t_s[0] != 0.0 or np.any(np.diff(t_s) <= 0):
        raise InvalidParameterError("t_s must be increasing sample instants starting at 0")
    t_end = float(t_s[-1])
    cmds = _commands(switch_ops, t_end)
    bounds = sorted({b for b in supply.change_times_s() + load.change_times_s() + list(cmds) if 0.0 < b < t_end} | {t_end})
    m_map = line_map(machine.connection)
    atol = np.array([1e-5, 1e-5, 1e-7, 1e-7, 1e-6, 1e-4])  # A, A, Wb, Wb, rad/s, rad

    closed = list(closed0)
    pending: dict[str, float] = {}
    states = np.empty((N_STATE, t_s.size))
    pieces: list[Piece] = []
    interruptions: list[tuple[str, float, float]] = []
    closings: list[tuple[str, float]] = []
    y = np.asarray(y0, dtype=float).copy()
    y[:2] = projector(machine.connection, tuple(closed)) @ y[:2]  # type: ignore[arg-type]
    t = 0.0
    i_next = 0  # next sample not yet filled
    n_rhs = 0
    b_idx = 0
    while True:
        t_stop = bounds[b_idx]
        seg = _Segment(machine, supply, load, tuple(closed), t, locked)  # type: ignore[arg-type]
        lines = [j for j in range(3) if "ABC"[j] in pending]
        events = []
        for j in lines:
            row = m_map[j]

            def ev(_t: float, yy: Sequence[float], r0: float = float(row[0]), r1: float = float(row[1])) -> float:
                return r0 * yy[0] + r1 * yy[1]

            ev.terminal = True  # type: ignore[attr-defined]
            events.append(ev)
        last = t_stop >= t_end
        # a pending opening waits for a current zero: search it a cycle at a time with events
        t_goal = min(t_stop, t + 1.0 / supply.f_hz) if lines else t_stop
        at_end = t_goal >= t_end
        sel_hi = int(np.searchsorted(t_s, t_goal, side="right" if at_end else "left"))
        t_eval = t_s[i_next:sel_hi]
        fired, n_got, t_reached = False, 0, t
        if t_goal > t and events:
            extra = not (t_eval.size and t_eval[-1] == t_goal)
            t_ask = np.append(t_eval, t_goal) if extra else t_eval
            sol = solve_ivp(seg.rhs(), (t, t_goal), y, method="LSODA", t_eval=t_ask, events=events,
                            rtol=rtol, atol=atol, max_step=0.25 / supply.f_hz)
            if sol.status < 0:
                raise InvalidParameterError(f"the machine model could not be integrated at t = {t:.6f} s: {sol.message}")
            n_rhs += int(sol.nfev)
            fired = sol.status == 1
            sol_y = np.asarray(sol.y, dtype=float).reshape(N_STATE, -1)
            n_got = min(sol_y.shape[1], t_eval.size)
            states[:, i_next : i_next + n_got] = sol_y[:, :n_got]
            if fired:
                k_ev = [len(te) > 0 for te in sol.t_events].index(True)
                t_reached = float(sol.t_events[k_ev][0])
                y = np.asarray(sol.y_events[k_ev][0], dtype=float).copy()
            else:
                t_reached = t_goal
                y = sol_y[:, -1].copy()
        elif t_goal > t:
            # no event to locate: LSODA through scipy.integrate.odeint (its Fortran loop
            # interpolates to the sample instants, no Python work per step but the RHS)
            lead = not (t_eval.size and t_eval[0] == t)
            trail = not (t_eval.size and t_eval[-1] == t_goal)
            t_ask = np.concatenate(([t] if lead else [], t_eval, [t_goal] if trail else []))
            rows, info = odeint(seg.rhs(), y, t_ask, tfirst=True, rtol=rtol, atol=atol, hmax=0.25 / supply.f_hz,
                                mxstep=1_000_000, full_output=True)
            if info["message"] != "Integration successful.":
                raise InvalidParameterError(f"the machine model could not be integrated at t = {t:.6f} s: {info['message']}")
            n_rhs += int(info["nfe"][-1])
            n_got = t_eval.size
            states[:, i_next : i_next + n_got] = rows[int(lead) : int(lead) + n_got].T
            t_reached = t_goal
            y = rows[-1].copy()
        pieces.append(Piece(t, t_reached, tuple(closed), i_next, i_next + n_got))  # type: ignore[arg-type]
        i_next += n_got
        t = t_reached
        if fired:
            j = lines[k_ev]
            line = "ABC"[j]
            closed[j] = False
            interruptions.append((line, pending.pop(line), t))
            for other in list(pending):  # a pending line left without current opens at the same instant
                jo = "ABC".index(other)
                if np.linalg.norm(m_map[jo] @ projector(machine.connection, tuple(closed))) < 1e-12:  # type: ignore[arg-type]
                    closed[jo] = False
                    interruptions.append((other, pending.pop(other), t))
            y[:2] = projector(machine.connection, tuple(closed)) @ y[:2]  # type: ignore[arg-type]
            continue
        if t < t_stop:  # still waiting for a current zero before the next change
            continue
        if last:
            break
        for op in cmds.get(t_stop, []):
            j = "ABC".index(op.line)
            if op.action == "close":
                pending.pop(op.line, None)
                if not closed[j]:
                    closed[j] = True
                    closings.append((op.line, t_stop))
            elif closed[j] and op.line not in pending:
                carried = m_map[j] @ projector(machine.connection, tuple(closed))  # type: ignore[arg-type]
                if np.linalg.norm(carried) < 1e-12:  # this line carries no current: opens at once
                    closed[j] = False
                    interruptions.append((op.line, t_stop, t_stop))
                else:
                    pending[op.line] = t_stop
        y[:2] = projector(machine.connection, tuple(closed)) @ y[:2]  # type: ignore[arg-type]
        b_idx += 1
    if i_next != t_s.size:
        raise InvalidParameterError(f"internal: integrated {i_next} of {t_s.size} samples")
    return Trajectory(t_s, states, pieces, interruptions, closings, n_rhs)


def segment_for(machine: MachineParameters, supply: Supply, load: Load, piece: Piece, locked: bool = False) -> _Segment:
    """Rebuild the constants of an integrated piece (for post-processing)."""
    return _Segment(machine, supply, load, piece.closed, piece.t0_s, locked)


def source_emf(supply: Supply, pieces: Sequence[Piece], t_s: np.ndarray) -> np.ndarray:
    """Source EMFs (3, n) [V] at the sample instants, piece by piece (dips included)."""
    out = np.empty((3, t_s.size))
    for p in pieces:
        sl = slice(p.sample_start, p.sample_stop)
        c, s = supply.emf_coefficients(p.t0_s)
        out[:, sl] = emf_abc(c, s, supply.orders, supply.omega_rad_s, t_s[sl])
    return out
