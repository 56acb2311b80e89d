"""Running a scenario with a ``[site]``: the network solution and what the logger records.

`waveforms.sim.simulate.run` hands a scenario with a site here.  The result is the same
`waveforms.sim.simulate.Simulation` as for a lone motor (so the truth builder and the writers need no
second path); its motor fields describe the motor (the one with the switch) and ``site`` holds the
other branches' waveforms:

* ``v_bus_v``: line-to-neutral voltages of bus S (against the source neutral; with a transformer
  against the secondary neutral) [V];
* ``i_feeder_a``, ``i_branch_a``, ``i_bank_bus_a``, ``i_bank_motor_a``, ``i_second_motor_a``,
  ``i_magnetising_a``: line currents [A] (smooth: without signature side-bands);
* ``i_primary_a``: transformer primary line currents [A] (with a transformer);
* ``omega2_rad_s``, ``torque2_n_m``: the second motor's speed and torque.

Line-to-neutral voltages: the network gives differential voltages only (three-wire); the common-mode
part of bus S is the source EMF's own zero-sequence voltage (none behind a delta primary), and the
motor terminals take the common mode that makes their closed lines equal to the bus less the cable
drop (an open line's terminal floats; with every line open the motor's neutral is taken at
source-neutral potential, as `waveforms.sim.simulate` does).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import InvalidParameterError
from .network import Network, Segment, SiteTrajectory, integrate_site, steady_state
from .scenario import Scenario
from .signatures import modulation
from .simulate import Simulation
from .steady import operating_point
from .supply import Supply, emf_abc
from .topology import CLARKE, line_map


def _guess_speed(machine, load, supply: Supply, v_ll: float) -> float:  # noqa: ANN001
    try:
        eq = Supply(voltage_ll_v=v_ll, frequency_hz=supply.frequency_hz, frequency_offset_hz=supply.frequency_offset_hz)
        return operating_point(machine, eq, load).omega_m_rad_s
    except InvalidParameterError:
        return 0.97 * machine.synchronous_speed_rad_s(supply.f_hz)


def run_site(sc: Scenario) -> Simulation:
    """Simulate a scenario that has a site (see the module docstring)."""
    from .truth import build_truth

    site = sc.site
    assert site is not None
    sup = sc.supply
    tr = site.transformer
    v_sec = tr.secondary_voltage_ll_v if tr is not None else sup.voltage_ll_v
    steady = sc.initial_state == "steady"
    w0 = 0.0 if sc.initial_state == "rest" else sc.initial_speed_rpm * 2.0 * math.pi / 60.0
    net = Network(site, sup, sc.machine, sc.load, locked=sc.locked_rotor, steady=steady, initial_speed_rad_s=w0)
    if steady and not all(sc.closed_at_start):
        raise InvalidParameterError("initial state 'steady' needs all three motor lines closed at t = 0; use 'rest' or 'coasting'")
    prim0 = tr.closed_at_start if tr is not None else (True, True, True)
    guesses = [_guess_speed(m.machine, m.load, sup, v_sec) if m.steady else m.initial_speed_rad_s for m in net.machines]
    y0 = steady_state(net, sc.closed_at_start, prim0, guesses)
    fs = sc.logger.sample_rate_hz
    n = int(round(sc.duration_s * fs))
    t = np.arange(n) / fs
    traj = integrate_site(net, t, y0, sc.closed_at_start, sc.switch_ops, prim0, tr.ops if tr is not None else ())
    sim = _post_process(sc, net, traj)
    from .simulate import _capture

    sim.capture = _capture(sc, sim)
    sim.truth = build_truth(sim)
    return sim


def _post_process(sc: Scenario, net: Network, traj: SiteTrajectory) -> Simulation:
    site = sc.site
    assert site is not None
    sup = sc.supply
    t, y = traj.t_s, traj.states
    n = t.size
    b = net.blocks
    vs = np.zeros((2, n))
    vt = np.zeros((2, n))
    dxc = np.zeros((2, n))
    dpsi1 = np.zeros((2, n))
    te = [np.zeros(n) for _ in net.machines]
    tl = [np.zeros(n) for _ in net.machines]
    closed = np.zeros((3, n), dtype=bool)
    emf = np.zeros((3, n))
    for p in traj.pieces:
        sl = slice(p.sample_start, p.sample_stop)
        if p.sample_stop <= p.sample_start:
            continue
        seg = Segment(net, p.t0_s, p.closed, p.closed_primary)
        yy = y[:, sl]
        nv = seg.node_voltages(t[sl], yy)
        vs[:, sl], vt[:, sl] = nv["S"], nv["T"]
        dy = seg.derivative(t[sl], yy)
        dxc[:, sl] = dy[b["cable"] : b["cable"] + 2]
        dpsi1[:, sl] = dy[net.i_psi[0] : net.i_psi[0] + 2]
        for j, (a, c) in enumerate(seg.torques(yy)):
            te[j][sl], tl[j][sl] = a, c
        closed[:, sl] = np.array(p.closed)[:, None]
        c, s = sup.emf_coefficients(p.t0_s)
        emf[:, sl] = emf_abc(c, s, sup.orders, sup.omega_rad_s, t[sl])

    def lines(block: str) -> np.ndarray:
        return CLARKE.T @ y[b[block] : b[block] + 2]

    zero_seq = np.zeros(n) if site.transformer is not None else emf.mean(axis=0)
    v_bus = CLARKE.T @ vs + zero_seq
    i_cable = lines("cable")
    drop = site.cable_r_ohm * i_cable + site.cable_x_ohm / sup.omega_rad_s * (CLARKE.T @ dxc)
    vt_d = CLARKE.T @ vt
    n_closed = closed.sum(axis=0)
    common = np.where(n_closed > 0, np.sum(np.where(closed, v_bus - drop - vt_d, 0.0), axis=0) / np.maximum(n_closed, 1), 0.0)
    v_motor = vt_d + common
    i_s1 = y[b["m1"] : b["m1"] + 2]
    m1 = line_map(sc.machine.connection)
    i_motor = m1 @ i_s1
    fac1 = modulation(sc.signatures, y[net.i_th[0]])
    rec: dict[str, np.ndarray] = {"v_bus_v": v_bus, "i_feeder_a": lines("feeder"), "i_branch_a": i_cable}
    bank_bus = np.zeros((3, n))
    bank_mot = np.zeros((3, n))
    # bank currents by Kirchhoff's current law at their nodes (exact, no numerical derivative)
    if net.stiff_bus_cy_f > 0:  # stiff source: the bus bank's current is C_Y de/dt (differential part), added to the feeder
        de = np.zeros((3, n))
        for p in traj.pieces:
            sl = slice(p.sample_start, p.sample_stop)
            c, s = sup.emf_coefficients(p.t0_s)
            for k, h in enumerate(sup.orders):
                hw = h * sup.omega_rad_s
                de[:, sl] += hw * (-c[:, k : k + 1] * np.sin(hw * t[sl]) + s[:, k : k + 1] * np.cos(hw * t[sl]))
        bank_bus = net.stiff_bus_cy_f * (de - de.mean(axis=0))
        rec["i_feeder_a"] = rec["i_feeder_a"] + bank_bus
    elif any(bk.at == "bus" for bk in site.banks):
        bank_bus = rec["i_feeder_a"] - i_cable
        if net.site.second_motor is not None:
            bank_bus = bank_bus - line_map(net.machines[1].machine.connection) @ y[b["m2"] : b["m2"] + 2]
        if site.transformer is not None:
            bank_bus = bank_bus - lines("mag")
    if any(bk.at == "motor" for bk in site.banks):
        bank_mot = i_cable - i_motor
    rec["i_bank_bus_a"], rec["i_bank_motor_a"] = bank_bus, bank_mot
    sig_extra = (fac1 - 1.0) * i_motor  # signature side-bands ride on the machine's own current only
    if site.second_motor is not None:
        m2 = line_map(net.machines[1].machine.connection)
        i2 = m2 @ y[b["m2"] : b["m2"] + 2]
        rec["i_second_motor_a"] = i2
        rec["omega2_rad_s"] = y[net.i_w[1]].copy()
        rec["torque2_n_m"] = te[1]
        sig2 = (modulation(sc.signatures, y[net.i_th[1]]) - 1.0) * i2
    else:
        sig2 = np.zeros((3, n))
    if site.transformer is not None:
        rec["i_magnetising_a"] = lines("mag")
        rec["i_primary_a"] = net.n_map @ y[b["feeder"] : b["feeder"] + 2]
    if site.grounding is not None and site.grounding.kind != "solid":
        from .grounding import neutral_voltage_v

        if site.transformer is not None:  # the secondary's open-circuit EMF drives its zero-sequence circuit
            def phasors_at(tt: float) -> np.ndarray:
                return CLARKE.T @ (net.n_map.T @ sup.phasors(tt))
        else:
            phasors_at = sup.phasors
        v_n = neutral_voltage_v(site.grounding, phasors_at, sup.orders, sup.omega_rad_s, t, sup.change_times_s())
        rec["v_neutral_v"] = v_n
        v_bus = v_bus + v_n
        v_motor = v_motor + v_n
        rec["v_bus_v"] = v_bus
    where = site.logger_at
    if where == "feeder":
        i_log, extra, v_log = rec["i_feeder_a"], sig_extra + sig2, v_bus
    elif where == "branch":
        i_log, extra, v_log = i_cable, sig_extra, v_bus
    elif where == "motor":
        i_log, extra, v_log = i_motor, sig_extra, v_motor
    else:
        i_log, extra, v_log = rec["i_second_motor_a"], sig2, v_bus
    if sc.logger.currents == "winding":  # six-lead hook-up on the (delta) motor: windings AB, BC, CA
        i_log, extra = CLARKE.T @ i_s1, (fac1 - 1.0) * (CLARKE.T @ i_s1)
    signals: dict[str, np.ndarray] = {}
    if sc.logger.voltages == "LN":
        for j, c in enumerate("abc"):
            signals[f"V{c}"] = v_log[j]
    else:
        for j, lab in enumerate(("ab", "bc", "ca")):
            signals[f"V{lab}"] = v_log[j] - v_log[(j + 1) % 3]
    for j, c in enumerate("abc"):
        signals[f"I{c}"] = i_log[j] + extra[j]
    sim = Simulation(
        scenario=sc, trajectory=traj, t_s=t, emf_v=emf, v_motor_v=v_motor, v_source_v=v_bus, v_logger_v=v_log,  # type: ignore[arg-type]
        i_line_a=i_motor * fac1, i_winding_a=(CLARKE.T @ i_s1) * fac1, i_line_smooth_a=i_motor,
        omega_m_rad_s=y[net.i_w[0]].copy(), theta_m_rad=y[net.i_th[0]].copy(), torque_n_m=te[0], load_torque_n_m=tl[0],
        closed=closed, signals=signals, clipped={},
    )
    sim.site = rec
    sim.i_logger_smooth_a = i_log
    return sim
