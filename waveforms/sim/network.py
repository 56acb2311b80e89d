"""Time-domain solution of a site (`waveforms.sim.site`): a three-wire network with induction machines.

Every quantity is a space vector of line quantities (power-invariant Clarke transform, 2 real
components): in a three-wire network no zero-sequence current flows, so two components describe
every set of line currents.  The unknowns are

* inductive branch currents ``x``: the feeder (source + transformer leakage impedance, feeding bus
  S), the transformer's magnetising branch, the motor's cable (bus S -> terminals T, through the
  motor switch), and each machine's stator current (in its own winding coordinates);
* capacitor voltages ``v_c``: the differential voltage of a node that carries a bank (S or T);
* each machine's rotor flux, speed and angle (the equations of `waveforms.sim.dynamics`).

Branch ``b`` from node p to node q obeys ``L_b dx_b/dt = v_p - v_q + e_b - R_b x_b - k dpsi_r/dt``
(the last term only for a machine); with the node incidence ``A`` (current leaving a node counted
positive; a machine leaves its terminal node through its line map ``G = C M``) this is
``L dx/dt = f + A^T v``.  A node with a bank obeys ``C_Y dv/dt = -A_node x`` (Kirchhoff's current law
with the bank's star-equivalent capacitance); a node without one imposes ``A_node x = 0``, and an open
line ``j`` of a switch imposes ``(row j of the line map) x_branch = 0``.  With ``Z`` an orthonormal
basis of the currents allowed by all these constraints (``B Z = 0``), the node voltages and the
open switches' voltages are Lagrange multipliers and drop out::

    dx/dt = Z (Z^T L Z)^{-1} Z^T (f + A_cap^T v_c)

(the constrained network of `waveforms.sim.topology` with a non-scalar inductance; common practice
for linear networks with algebraic constraints, no source).  The multipliers are recovered afterwards
by least squares from ``L dx/dt - f - A_cap^T v_c = B^T lambda`` to give the voltages of nodes
without a bank.

Openings interrupt at the next current zero of the line (`scipy.integrate.solve_ivp` events);
closings are immediate (currents stay continuous: a closing removes a constraint).

The steady state at t = 0 is the network's phasor solution (``d/dt -> j h w`` for every supply
order, each machine at a constant speed) with the speeds of steadily running machines found where
the mean electromagnetic torque equals the load torque (`scipy.optimize.root`).  It neglects the
torque pulsation of negative-sequence currents, as `waveforms.sim.steady` does.

References
----------
.. [1] P. C. Krause, O. Wasynczuk, S. D. Sudhoff, *Analysis of Electric Machinery and Drive
   Systems*, 2nd ed., Wiley, 2002, ch. 4 (machine equations, stationary frame; from memory).
.. [2] C. L. Fortescue, "Method of symmetrical co-ordinates applied to the solution of polyphase
   networks", Trans. AIEE 37, 1918 (three-wire: no zero-sequence current).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Sequence

import numpy as np
from scipy.integrate import odeint, solve_ivp
from scipy.linalg import null_space
from scipy.optimize import root

from ..errors import InvalidParameterError
from .dynamics import SwitchOp
from .loads import OMEGA_EPS_RAD_S, Load, load_torque_n_m
from .machine import MachineParameters
from .site import Site
from .supply import Supply
from .topology import CLARKE, line_map

I2 = np.eye(2)
J2 = np.array([[0.0, -1.0], [1.0, 0.0]])


@dataclasses.dataclass
class MachineSlot:
    """One machine in the network: parameters, load, where its states sit."""

    name: str
    machine: MachineParameters
    load: Load
    xi: int          # first index of its stator current in x
    node: str        # terminal node ("S" or "T")
    locked: bool = False
    steady: bool = True
    initial_speed_rad_s: float = 0.0

    @property
    def g(self) -> np.ndarray:
        """``G = C M`` (2x2): line-current space vector from the winding space vector."""
        return CLARKE @ line_map(self.machine.connection)


class Network:
    """The assembled site; index bookkeeping and the constant matrices."""

    def __init__(self, site: Site, supply: Supply, machine: MachineParameters, load: Load, locked: bool = False,
                 steady: bool = True, initial_speed_rad_s: float = 0.0) -> None:
        self.site, self.supply = site, supply
        w = supply.omega_rad_s
        tr = site.transformer
        self.n_map = tr.line_map() if tr is not None else CLARKE.T.copy()  # primary line currents from feeder current
        nn = self.n_map.T @ self.n_map
        blocks: dict[str, int] = {}
        k = 0
        for name, present in (("feeder", True), ("mag", tr is not None), ("cable", True), ("m1", True), ("m2", site.second_motor is not None)):
            if present:
                blocks[name] = k
                k += 2
        self.blocks, self.nx = blocks, k
        self.machines = [MachineSlot("motor", machine, load, blocks["m1"], "T", locked, steady, initial_speed_rad_s)]
        if site.second_motor is not None:
            self.machines.append(MachineSlot(site.second_motor.name, site.second_motor.machine, site.second_motor.load, blocks["m2"], "S"))
        lmat = np.zeros((k, k))
        rmat = np.zeros((k, k))

        def put(mat: np.ndarray, name: str, val: np.ndarray) -> None:
            i = blocks[name]
            mat[i : i + 2, i : i + 2] = val

        r_leak = tr.leakage_r_ohm if tr else 0.0
        l_leak = tr.leakage_x_ohm / w if tr else 0.0
        put(lmat, "feeder", supply.source_l_h * nn + l_leak * I2)
        put(rmat, "feeder", supply.source_r_ohm * nn + r_leak * I2)
        if tr is not None:
            put(lmat, "mag", tr.magnetising_x_ohm / w * I2)
        put(lmat, "cable", site.cable_x_ohm / w * I2)
        put(rmat, "cable", site.cable_r_ohm * I2)
        for m in self.machines:
            p = m.machine
            sig = p.ls_h - p.lm_h**2 / p.lr_h
            lmat[m.xi : m.xi + 2, m.xi : m.xi + 2] = sig * I2
            rmat[m.xi : m.xi + 2, m.xi : m.xi + 2] = p.rs_ohm * I2
        self.lmat, self.rmat = lmat, rmat
        # node incidence (2 rows per node), current leaving the node positive
        self.nodes = ("S", "T")
        a = np.zeros((4, k))
        a[0:2, blocks["feeder"] : blocks["feeder"] + 2] = -I2
        if tr is not None:
            a[0:2, blocks["mag"] : blocks["mag"] + 2] = I2
        a[0:2, blocks["cable"] : blocks["cable"] + 2] = I2
        a[2:4, blocks["cable"] : blocks["cable"] + 2] = -I2
        for m in self.machines:
            r = 0 if m.node == "S" else 2
            a[r : r + 2, m.xi : m.xi + 2] = m.g
        self.a = a
        # A stiff source (no impedance, no transformer) holds bus S at the EMF: a bank there draws
        # C_Y de/dt whatever the rest of the network does, so it is left out of the network and its
        # current added afterwards (`stiff_bus_cy_f`).  Behind an impedance it is a node of the network.
        self.stiff = tr is None and supply.source_r_ohm == 0.0 and supply.source_x_ohm == 0.0
        bus_cy = sum(b.star_equivalent_f for b in site.banks if b.at == "bus")
        self.stiff_bus_cy_f = bus_cy if self.stiff else 0.0
        if bus_cy > 0 and not self.stiff and supply.source_x_ohm == 0.0 and tr is None:
            raise InvalidParameterError("a capacitor bank at the bus behind a purely resistive source: give supply source_x_ohm > 0 "
                                        "(or a stiff source, source_r_ohm = source_x_ohm = 0)")
        cy = {"S": 0.0 if self.stiff else bus_cy,
              "T": sum(b.star_equivalent_f for b in site.banks if b.at == "motor")}
        self.cap_nodes = [nd for nd in self.nodes if cy[nd] > 0]
        self.nv = 2 * len(self.cap_nodes)
        self.cap_f = np.array([cy[nd] for nd in self.cap_nodes for _ in range(2)])
        self.a_cap = np.vstack([a[2 * self.nodes.index(nd) : 2 * self.nodes.index(nd) + 2] for nd in self.cap_nodes]) if self.cap_nodes else np.zeros((0, k))
        free = [a[2 * self.nodes.index(nd) : 2 * self.nodes.index(nd) + 2] for nd in self.nodes if nd not in self.cap_nodes]
        self.a_free = np.vstack(free) if free else np.zeros((0, k))
        self.free_nodes = [nd for nd in self.nodes if nd not in self.cap_nodes]
        # state layout: x, v_c, then per machine psi (2), w (1), theta (1)
        self.ny = k + self.nv + 4 * len(self.machines)
        self.i_vc = k
        self.i_psi = [k + self.nv + 2 * j for j in range(len(self.machines))]
        base = k + self.nv + 2 * len(self.machines)
        self.i_w = [base + j for j in range(len(self.machines))]
        self.i_th = [base + len(self.machines) + j for j in range(len(self.machines))]

    # -- constraints -------------------------------------------------------------------------------
    def open_rows(self, closed_motor: Sequence[bool], closed_primary: Sequence[bool]) -> np.ndarray:
        rows = []
        c0 = self.blocks["cable"]
        for j in range(3):
            if not closed_motor[j]:
                r = np.zeros(self.nx)
                r[c0 : c0 + 2] = CLARKE.T[j]
                rows.append(r)
        f0 = self.blocks["feeder"]
        for j in range(3):
            if not closed_primary[j]:
                r = np.zeros(self.nx)
                r[f0 : f0 + 2] = self.n_map[j]
                rows.append(r)
        return np.array(rows).reshape(-1, self.nx)

    def line_row(self, which: str, j: int) -> np.ndarray:
        """Row giving the current of line ``j`` of the motor switch (``which='m'``) or of the primary (``'p'``)."""
        r = np.zeros(self.nx)
        if which == "m":
            c0 = self.blocks["cable"]
            r[c0 : c0 + 2] = CLARKE.T[j]
        else:
            f0 = self.blocks["feeder"]
            r[f0 : f0 + 2] = self.n_map[j]
        return r

    def constraint(self, closed_motor: Sequence[bool], closed_primary: Sequence[bool]) -> np.ndarray:
        return np.vstack([self.a_free, self.open_rows(closed_motor, closed_primary)])

    def emf_vectors(self, t_s: float) -> tuple[np.ndarray, np.ndarray, tuple[int, ...]]:
        """``(ec, es, orders)``: branch source terms ``e_x(t) = sum_k ec[:,k] cos(h_k w t) + es[:,k] sin(h_k w t)``."""
        c, s = self.supply.emf_coefficients(t_s)
        f0 = self.blocks["feeder"]
        ec = np.zeros((self.nx, c.shape[1]))
        es = np.zeros_like(ec)
        ec[f0 : f0 + 2] = self.n_map.T @ c
        es[f0 : f0 + 2] = self.n_map.T @ s
        return ec, es, self.supply.orders


class Segment:
    """Constants of one stretch with fixed switch states, supply and loads."""

    def __init__(self, net: Network, t_s: float, closed_motor: Sequence[bool], closed_primary: Sequence[bool]) -> None:
        self.net = net
        self.b = net.constraint(closed_motor, closed_primary)
        z = null_space(self.b) if self.b.shape[0] else np.eye(net.nx)
        self.z = z
        self.proj = z @ z.T
        if z.shape[1]:
            zlz = z.T @ net.lmat @ z
            if np.linalg.cond(zlz) > 1e12:
                raise InvalidParameterError("the site network has a current path without inductance (give the cable or source an inductance)")
            self.k = z @ np.linalg.solve(zlz, z.T)
        else:
            self.k = np.zeros((net.nx, net.nx))
        self.ec, self.es, self.orders = net.emf_vectors(t_s)
        self.hw = np.array(self.orders, dtype=float) * net.supply.omega_rad_s
        self.mach = []
        for j, m in enumerate(net.machines):
            p = m.machine
            kq, tst = m.load.coefficients(t_s)
            self.mach.append((m.xi, net.i_psi[j], net.i_w[j], net.i_th[j], p.lm_h / p.lr_h, p.rr_ohm / p.lr_h, p.lm_h,
                              float(p.pole_pairs), 0.0 if m.locked else 1.0 / p.inertia_kg_m2, p.friction_n_m_s, kq, tst))
        self.inv_c = 1.0 / net.cap_f if net.nv else np.zeros(0)

    def forcing(self, t: np.ndarray, y: np.ndarray) -> tuple[np.ndarray, list[np.ndarray]]:
        """``f + A_cap^T v_c`` (nx, n) and each machine's ``d psi_r/dt`` (2, n) at states ``y`` (ny, n)."""
        net = self.net
        arg = self.hw[:, None] * t[None, :]
        f = self.ec @ np.cos(arg) + self.es @ np.sin(arg) - net.rmat @ y[: net.nx]
        if net.nv:
            f += net.a_cap.T @ y[net.i_vc : net.i_vc + net.nv]
        dpsis = []
        for xi, ip, iw, _ith, k, rr_lr, lm, pp, _ij, _bf, _kq, _tst in self.mach:
            ia, ib = y[xi], y[xi + 1]
            fa, fb = y[ip], y[ip + 1]
            wr = pp * y[iw]
            dfa = -rr_lr * (fa - lm * ia) - wr * fb   # Krause ch. 4, rotor in the stationary frame
            dfb = -rr_lr * (fb - lm * ib) + wr * fa
            f[xi] -= k * dfa
            f[xi + 1] -= k * dfb
            dpsis.append(np.array([dfa, dfb]))
        return f, dpsis

    def torques(self, y: np.ndarray) -> list[tuple[np.ndarray, np.ndarray]]:
        out = []
        for xi, ip, iw, _ith, k, _rr, _lm, pp, _ij, _bf, kq, tst in self.mach:
            te = pp * k * (y[ip] * y[xi + 1] - y[ip + 1] * y[xi])
            out.append((te, load_torque_n_m(kq, tst, y[iw])))
        return out

    def derivative(self, t: np.ndarray, y: np.ndarray) -> np.ndarray:
        """``dy/dt`` for states ``y`` (ny, n) at instants ``t`` (n,)."""
        net = self.net
        f, dpsis = self.forcing(t, y)
        dy = np.empty_like(y)
        dy[: net.nx] = self.k @ f
        if net.nv:
            dy[net.i_vc : net.i_vc + net.nv] = -self.inv_c[:, None] * (net.a_cap @ y[: net.nx])
        for (xi, ip, iw, ith, *_rest), dpsi, (te, tl) in zip(self.mach, dpsis, self.torques(y), strict=True):
            inv_j, bf = _rest[4], _rest[5]
            dy[ip : ip + 2] = dpsi
            dy[iw] = (te - tl - bf * y[iw]) * inv_j
            dy[ith] = y[iw]
        return dy

    def linear_form(self) -> tuple[np.ndarray, np.ndarray, np.ndarray, list[np.ndarray]]:
        """``(M, Fc, Fs, Q)`` with ``dy/dt = M y + Fc cos(h w t) + Fs sin(h w t) + sum_m w_r,m Q_m y + (torque rows)``.

        The same equations as `derivative`, written as matrices once per stretch so that the solver's
        right-hand side is a few small matrix products (the torque and load rows are added in `rhs`).
        """
        net = self.net
        ny, nx = net.ny, net.nx
        # psi rows: d psi/dt = -rr/Lr psi + rr Lm/Lr i + w_r J psi
        dpsi_lin = np.zeros((ny, ny))
        dpsi_q = []
        for xi, ip, _iw, _ith, _k, rr_lr, lm, _pp, *_ in self.mach:
            dpsi_lin[ip : ip + 2, ip : ip + 2] = -rr_lr * I2
            dpsi_lin[ip : ip + 2, xi : xi + 2] = rr_lr * lm * I2
            q = np.zeros((ny, ny))
            q[ip : ip + 2, ip : ip + 2] = J2
            dpsi_q.append(q)
        # forcing f = e - R x + A_cap^T v - k dpsi/dt (machine rows)
        f_lin = np.zeros((nx, ny))
        f_lin[:, :nx] = -net.rmat
        if net.nv:
            f_lin[:, net.i_vc : net.i_vc + net.nv] = net.a_cap.T
        f_q = [np.zeros((nx, ny)) for _ in self.mach]
        for j, (xi, ip, *_rest) in enumerate(self.mach):
            k = _rest[2]
            f_lin[xi : xi + 2] -= k * dpsi_lin[ip : ip + 2]
            f_q[j][xi : xi + 2] -= k * dpsi_q[j][ip : ip + 2]
        m = dpsi_lin.copy()
        m[:nx] = self.k @ f_lin
        if net.nv:
            m[net.i_vc : net.i_vc + net.nv, :nx] = -self.inv_c[:, None] * net.a_cap
        for _xi, _ip, iw, ith, *_ in self.mach:
            m[ith, iw] = 1.0
        qs = []
        for j in range(len(self.mach)):
            q = dpsi_q[j].copy()
            q[:nx] = self.k @ f_q[j]
            qs.append(q)
        fc = np.zeros((ny, self.ec.shape[1]))
        fs = np.zeros_like(fc)
        fc[:nx], fs[:nx] = self.k @ self.ec, self.k @ self.es
        return m, fc, fs, qs

    def rhs(self):  # noqa: ANN201 - returns a closure
        """Right-hand side ``f(t, y)`` for the solvers (see `linear_form`)."""
        m, fc, fs, qs = self.linear_form()
        hw = self.hw
        mech = [(xi, ip, iw, pp * k, pp, inv_j, bf, kq, tst, q)
                for (xi, ip, iw, _ith, k, _rr, _lm, pp, inv_j, bf, kq, tst), q in zip(self.mach, qs, strict=True)]
        cos, sin, tanh, dot = np.cos, np.sin, math.tanh, np.dot
        inv_eps = 1.0 / OMEGA_EPS_RAD_S

        def f(t: float, yy: np.ndarray) -> np.ndarray:
            arg = hw * t
            dy = dot(m, yy) + dot(fc, cos(arg)) + dot(fs, sin(arg))
            for xi, ip, iw, ppk, pp, inv_j, bf, kq, tst, q in mech:
                wm = yy[iw]
                dy += (pp * wm) * dot(q, yy)
                te = ppk * (yy[ip] * yy[xi + 1] - yy[ip + 1] * yy[xi])
                dy[iw] = (te - kq * wm * abs(wm) - tst * tanh(wm * inv_eps) - bf * wm) * inv_j
            return dy

        return f

    def node_voltages(self, t: np.ndarray, y: np.ndarray) -> dict[str, np.ndarray]:
        """Differential voltage space vectors (2, n) of nodes S and T [V]."""
        net = self.net
        out: dict[str, np.ndarray] = {}
        for j, nd in enumerate(net.cap_nodes):
            out[nd] = y[net.i_vc + 2 * j : net.i_vc + 2 * j + 2]
        if net.free_nodes:
            f, _ = self.forcing(t, y)
            res = net.lmat @ (self.k @ f) - f  # = B^T lambda
            lam = np.linalg.pinv(self.b.T) @ res
            for j, nd in enumerate(net.free_nodes):
                out[nd] = lam[2 * j : 2 * j + 2]
        return out


# -- steady state ------------------------------------------------------------------------------------
def _phasor_solve(net: Network, seg: Segment, speeds_e: Sequence[float], w: float, e_x: np.ndarray) -> np.ndarray:
    """Complex state amplitudes (ny,) of the response to branch forcing ``Re(e_x exp(j w t))`` at fixed speeds."""
    z = seg.z
    nq, nv, nm = z.shape[1], net.nv, len(net.machines)
    n = nq + nv + 2 * nm
    m = np.zeros((n, n), dtype=complex)
    rhs = np.zeros(n, dtype=complex)
    # currents: Z^T (jw L + R) Z q + Z^T (k jw psi terms) - Z^T A_cap^T v = Z^T e
    m[:nq, :nq] = z.T @ (1j * w * net.lmat + net.rmat) @ z
    if nv:
        m[:nq, nq : nq + nv] = -z.T @ net.a_cap.T
        m[nq : nq + nv, :nq] = net.a_cap @ z
        m[nq : nq + nv, nq : nq + nv] = 1j * w * np.diag(net.cap_f)
    rhs[:nq] = z.T @ e_x
    for j, (slot, wr) in enumerate(zip(net.machines, speeds_e, strict=True)):
        p = slot.machine
        k, rr_lr = p.lm_h / p.lr_h, p.rr_ohm / p.lr_h
        c0 = nq + nv + 2 * j
        sel = np.zeros((2, net.nx))
        sel[:, slot.xi : slot.xi + 2] = I2
        m[:nq, c0 : c0 + 2] = z.T @ sel.T * (k * 1j * w)
        # (j w + rr/Lr) psi - wr J psi - rr Lm/Lr i_s = 0
        m[c0 : c0 + 2, c0 : c0 + 2] = (1j * w + rr_lr) * I2 - wr * J2
        m[c0 : c0 + 2, :nq] = -rr_lr * p.lm_h * (sel @ z)
    sol = np.linalg.solve(m, rhs)
    y = np.zeros(net.ny, dtype=complex)
    y[: net.nx] = z @ sol[:nq]
    y[net.i_vc : net.i_vc + nv] = sol[nq : nq + nv]
    for j in range(nm):
        y[net.i_psi[j] : net.i_psi[j] + 2] = sol[nq + nv + 2 * j : nq + nv + 2 * j + 2]
    return y


def steady_state(net: Network, closed_motor: Sequence[bool], closed_primary: Sequence[bool], guess_speeds_rad_s: Sequence[float]) -> np.ndarray:
    """State at t = 0: the phasor solution with steady machines at their torque-balance speeds."""
    seg = Segment(net, 0.0, closed_motor, closed_primary)
    w1 = net.supply.omega_rad_s

    def components(speeds: Sequence[float]) -> list[np.ndarray]:
        wr = [m.machine.pole_pairs * s for m, s in zip(net.machines, speeds, strict=True)]
        return [_phasor_solve(net, seg, wr, h * w1, seg.ec[:, k] - 1j * seg.es[:, k]) for k, h in enumerate(seg.orders)]

    def balance(free: np.ndarray) -> np.ndarray:
        speeds = _speeds(free)
        comps = components(speeds)
        out = []
        for j, m in enumerate(net.machines):
            if not m.steady:
                continue
            p, ip, xi = m.machine, net.i_psi[j], m.xi
            te = sum(p.pole_pairs * p.lm_h / p.lr_h * 0.5 * float(np.real(c[ip] * np.conj(c[xi + 1]) - c[ip + 1] * np.conj(c[xi]))) for c in comps)
            kq, tst = m.load.coefficients(0.0)
            out.append((te - float(load_torque_n_m(kq, tst, float(speeds[j]))) - p.friction_n_m_s * speeds[j]) / max(1.0, abs(te)))
        return np.array(out)

    steady_idx = [j for j, m in enumerate(net.machines) if m.steady]

    def _speeds(free: np.ndarray) -> list[float]:
        sp = [m.initial_speed_rad_s for m in net.machines]
        for k, j in enumerate(steady_idx):
            sp[j] = float(free[k])
        return sp

    speeds = [float(s) for s in guess_speeds_rad_s]
    if steady_idx:
        x0 = np.array([speeds[j] for j in steady_idx])
        sol = root(balance, x0, method="hybr", options={"xtol": 1e-12})
        if not sol.success or np.max(np.abs(balance(sol.x))) > 1e-6:
            raise InvalidParameterError(f"no steady running point of the site's machines ({sol.message})")
        speeds = _speeds(sol.x)
    y = np.real(sum(components(speeds)))
    for j, s in enumerate(speeds):
        y[net.i_w[j]] = s
        y[net.i_th[j]] = 0.0
    return y


# -- integration -------------------------------------------------------------------------------------
@dataclasses.dataclass(frozen=True)
class SitePiece:
    t0_s: float
    t1_s: float
    closed: tuple[bool, bool, bool]
    closed_primary: tuple[bool, bool, bool]
    sample_start: int
    sample_stop: int


@dataclasses.dataclass
class SiteTrajectory:
    t_s: np.ndarray
    states: np.ndarray
    pieces: list[SitePiece]
    interruptions: list[tuple[str, float, float]]          # motor switch: (line, commanded_s, current_zero_s)
    closings: list[tuple[str, float]]
    primary_interruptions: list[tuple[str, float, float]]
    primary_closings: list[tuple[str, float]]
    n_rhs: int


def integrate_site(net: Network, t_s: np.ndarray, y0: np.ndarray, closed0: Sequence[bool], ops: Sequence[SwitchOp],
                   primary_closed0: Sequence[bool], primary_ops: Sequence[SwitchOp], rtol: float = 1e-7) -> SiteTrajectory:
    """Integrate the site from ``y0`` and return the states at ``t_s`` (see the module docstring)."""
    t_end = float(t_s[-1])
    cmds: dict[float, list[tuple[str, SwitchOp]]] = {}
    for which, seq in (("m", ops), ("p", primary_ops)):
        for op in seq:
            if 0.0 < op.time_s < t_end:
                cmds.setdefault(float(op.time_s), []).append((which, op))
    changes = set(net.supply.change_times_s())
    for m in net.machines:
        changes |= set(m.load.change_times_s())
    bounds = sorted({b for b in changes | set(cmds) if 0.0 < b < t_end} | {t_end})
    closed = {"m": list(closed0), "p": list(primary_closed0)}
    inter: dict[str, list] = {"m": [], "p": []}
    closings: dict[str, list] = {"m": [], "p": []}
    pending: dict[tuple[str, int], float] = {}
    states = np.empty((net.ny, t_s.size))
    pieces: list[SitePiece] = []
    seg = Segment(net, 0.0, closed["m"], closed["p"])
    y = np.asarray(y0, dtype=float).copy()
    y[: net.nx] = seg.proj @ y[: net.nx]
    atol = np.full(net.ny, 1e-5)
    atol[net.i_vc : net.i_vc + net.nv] = 1e-4
    for j in range(len(net.machines)):
        atol[net.i_psi[j] : net.i_psi[j] + 2] = 1e-7
        atol[net.i_w[j]] = 1e-6
        atol[net.i_th[j]] = 1e-4
    t, i_next, n_rhs = 0.0, 0, 0
    max_step = 0.25 / net.supply.f_hz
    for t_stop in bounds:
        while t < t_stop:
            seg = Segment(net, t, closed["m"], closed["p"])
            keys = list(pending)
            events = []
            for which, j in keys:
                row = net.line_row(which, j)

                def ev(_t: float, yy: np.ndarray, r: np.ndarray = row) -> float:
                    return float(r @ yy[: net.nx])

                ev.terminal = True  # type: ignore[attr-defined]
                events.append(ev)
            at_end = t_stop >= t_end
            hi = int(np.searchsorted(t_s, t_stop, side="right" if at_end else "left"))
            t_eval = t_s[i_next:hi]
            t_ask = t_eval if (t_eval.size and t_eval[-1] == t_stop) else np.append(t_eval, t_stop)
            t_ask = t_ask[t_ask >= t]
            if not events:
                # no current zero to locate: LSODA through scipy.integrate.odeint (its Fortran loop
                # interpolates to the sample instants; only the right-hand side runs in Python)
                lead = not (t_ask.size and t_ask[0] == t)
                t_full = np.concatenate(([t] if lead else [], t_ask))
                rows, info = odeint(seg.rhs(), y, t_full, tfirst=True, rtol=rtol, atol=atol, hmax=max_step,
                                    mxstep=1_000_000, full_output=True)
                if info["message"] != "Integration successful.":
                    raise InvalidParameterError(f"the site network could not be integrated at t = {t:.6f} s: {info['message']}")
                n_rhs += int(info["nfe"][-1])
                got = rows[int(lead) :].T
                status = 0
            else:
                sol = solve_ivp(seg.rhs(), (t, t_stop), y, method="LSODA", t_eval=t_ask, events=events,
                                rtol=rtol, atol=atol, max_step=max_step)
                if sol.status < 0:
                    raise InvalidParameterError(f"the site network could not be integrated at t = {t:.6f} s: {sol.message}")
                n_rhs += int(sol.nfev)
                got = np.asarray(sol.y).reshape(net.ny, -1)
                status = sol.status
            n_got = min(got.shape[1], t_eval.size)
            states[:, i_next : i_next + n_got] = got[:, :n_got]
            pieces.append(SitePiece(t, t_stop, tuple(closed["m"]), tuple(closed["p"]), i_next, i_next + n_got))  # type: ignore[arg-type]
            i_next += n_got
            if status == 1:
                k_ev = [len(te) > 0 for te in sol.t_events].index(True)
                t_hit = float(sol.t_events[k_ev][0])
                pieces[-1] = dataclasses.replace(pieces[-1], t1_s=t_hit)
                y = np.asarray(sol.y_events[k_ev][0], dtype=float).copy()
                which, j = keys[k_ev]
                closed[which][j] = False
                inter[which].append(("ABC"[j], pending.pop((which, j)), t_hit))
                t = t_hit
                seg2 = Segment(net, t, closed["m"], closed["p"])
                for (w2, j2) in list(pending):  # a pending line left without current opens at the same instant
                    if np.linalg.norm(net.line_row(w2, j2) @ seg2.proj) < 1e-12:
                        closed[w2][j2] = False
                        inter[w2].append(("ABC"[j2], pending.pop((w2, j2)), t))
                        seg2 = Segment(net, t, closed["m"], closed["p"])
                y[: net.nx] = seg2.proj @ y[: net.nx]
                continue
            y = got[:, -1].copy()
            t = t_stop
        for which, op in cmds.get(t_stop, []):
            j = "ABC".index(op.line)
            if op.action == "close":
                pending.pop((which, j), None)
                if not closed[which][j]:
                    closed[which][j] = True
                    closings[which].append((op.line, t_stop))
            elif closed[which][j] and (which, j) not in pending:
                segc = Segment(net, t, closed["m"], closed["p"])
                if np.linalg.norm(net.line_row(which, j) @ segc.proj) < 1e-12:
                    closed[which][j] = False
                    inter[which].append((op.line, t_stop, t_stop))
                else:
                    pending[(which, j)] = t_stop
        y[: net.nx] = Segment(net, t, closed["m"], closed["p"]).proj @ y[: net.nx]
    if i_next != t_s.size:
        raise InvalidParameterError(f"internal: integrated {i_next} of {t_s.size} samples")
    return SiteTrajectory(t_s, states, pieces, inter["m"], closings["m"], inter["p"], closings["p"], n_rhs)
