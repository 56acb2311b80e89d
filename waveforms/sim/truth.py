"""Ground truth of a simulated capture: events, speed track, steady phasors.

All instants are seconds from the capture start (sample 0).  Definitions
(see docs/simulator.md for the full list):

* ``open_phase``: a stretch with exactly one line open while the other two
  are closed; ``start_s`` is the instant the line's current was interrupted
  (its first current zero after the commanded opening), ``end_s`` the
  re-closing (or the moment a second line opens), None if still open at the
  end.  Stretches shorter than one fundamental cycle (pole scatter) are not
  reported.
* ``start``: energisation (two or more lines closed after fewer) with the
  rotor below half of synchronous speed; ``end_s`` is the first instant the
  speed (in either direction) reaches 90 % of synchronous speed, None if it never does
  (``outcome`` = "failed").
* ``stall``: energised with ``|speed|`` below 5 % of synchronous speed for at
  least 0.2 s; ``start_s`` is the energisation instant when the rotor never
  turned, else the instant the speed fell below 5 %.
  Two more instants (issue 12): ``pull_out_s``, where the motor could no
  longer carry its load -- the start of the deceleration that ends in the
  stall, i.e. the first instant after which the one-cycle mean of the torque
  balance ``T_e - T_L - B w`` stays negative (more than 1 % of the load
  torque) -- None when the rotor never turned; and ``rest_s``, the first
  instant with ``|speed|`` at or below 1 % of synchronous speed (the rotor at
  standstill).
* ``dip`` / ``swell`` / ``interruption``: the source EMF events of the
  scenario (residual < 0.9 pu dip, < 0.1 pu interruption, > 1.1 pu swell),
  with the instants of the EMF change.  What a logger at the motor measures
  is softened by the motor's back-EMF and the source impedance.
* ``unbalance``: a steady supply magnitude/angle unbalance, for the whole capture.

Steady windows carry phasors fitted by least squares at the actual supply
frequency (RMS magnitudes, angles in degrees against ``cos(w t)`` at the
capture start and relative to the positive-sequence voltage angle),
symmetrical components (Fortescue, AIEE 1918) and unbalance in three
definitions: NEMA MG-1 line-voltage unbalance, PVUR (Pillay & Manyage, IEEE
Power Engineering Review 2001) and VUF = |V2|/|V1| (IEEE 1159).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from .signatures import expected_lines_hz
from .simulate import Simulation

STALL_SPEED_PU = 0.05
STALL_MIN_S = 0.2
REST_SPEED_PU = 0.01
PULL_OUT_NET_TORQUE_FRAC = 0.01
START_MAX_SPEED_PU = 0.5
START_END_SPEED_PU = 0.9
TRACK_STEP_S = 0.01
A_OP = np.exp(2j * np.pi / 3)


def _f(x: float | None, nd: int = 6) -> float | None:
    if x is None or not math.isfinite(float(x)):
        return None
    return round(float(x), nd) + 0.0  # + 0.0 turns -0.0 into 0.0


def _timeline(sim: Simulation) -> list[tuple[float, float, tuple[bool, bool, bool]]]:
    """Merged stretches (t0, t1, closed) of constant switch state."""
    out: list[list[Any]] = []
    for p in sim.trajectory.pieces:
        if p.t1_s <= p.t0_s:
            continue
        if out and out[-1][2] == p.closed and abs(out[-1][1] - p.t0_s) < 1e-12:
            out[-1][1] = p.t1_s
        else:
            out.append([p.t0_s, p.t1_s, p.closed])
    return [(a, b, c) for a, b, c in out]


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Index ranges [i0, i1) where ``mask`` is True."""
    d = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
    return list(zip(np.nonzero(d == 1)[0].tolist(), np.nonzero(d == -1)[0].tolist(), strict=True))


def _stall_instants(sim: Simulation, a: int, near_energisation: bool) -> tuple[float | None, float | None]:
    """(pull_out_s, rest_s) of the stall whose slow run starts at sample ``a`` (see the module docstring)."""
    sc = sim.scenario
    t, w = sim.t_s, sim.omega_m_rad_s
    ws = sc.machine.synchronous_speed_rad_s(sc.supply.f_hz)
    fs = sc.logger.sample_rate_hz
    n = max(1, int(round(fs / sc.supply.f_hz)))
    slow = np.abs(w) <= REST_SPEED_PU * ws
    after = np.flatnonzero(slow[a:])
    rest = float(t[a + after[0]]) if after.size else None
    if near_energisation:
        return None, rest
    net = sim.torque_n_m - sim.load_torque_n_m - sc.machine.friction_n_m_s * w  # J dw/dt (Krause ch. 4 mechanical equation)
    cs = np.concatenate(([0.0], np.cumsum(net[: a + 1])))
    ct = np.concatenate(([0.0], np.cumsum(np.abs(sim.load_torque_n_m[: a + 1]))))
    net_m = (cs[n:] - cs[:-n]) / n  # trailing one-cycle mean ending at each sample: a single-phased motor's 2 f1 pulsation cancels
    tl_m = (ct[n:] - ct[:-n]) / n
    ok = net_m >= -PULL_OUT_NET_TORQUE_FRAC * np.maximum(tl_m, 1e-9)
    last = np.flatnonzero(ok)
    # the deceleration's first sample: after the last cycle whose mean balance was not negative
    return (float(t[last[-1] + n]) if last.size and last[-1] + n <= a else None), rest


def events(sim: Simulation) -> list[dict[str, Any]]:
    sc = sim.scenario
    f1 = sc.supply.f_hz
    t_end = sc.duration_s
    out: list[dict[str, Any]] = []
    tl = _timeline(sim)
    commanded = {(line, round(act, 9)): cmd for line, cmd, act in sim.trajectory.interruptions}
    # open phase
    for t0, t1, closed in tl:
        if sum(closed) != 2:
            continue
        j = closed.index(False)
        line = "ABC"[j]
        if out and out[-1]["kind"] == "open_phase" and out[-1]["phase"] == line and out[-1]["_t1"] == t0:
            out[-1]["_t1"] = t1
            continue
        out.append({"kind": "open_phase", "phase": line, "_t0": t0, "_t1": t1,
                    "commanded_s": _f(commanded.get((line, round(t0, 9)))), "location": sc.open_point})
    ops = []
    for e in out:
        at_end = e["_t1"] >= float(sim.t_s[-1]) - 1e-9
        if not at_end and e["_t1"] - e["_t0"] < 1.0 / f1:
            continue
        e["start_s"], e["end_s"] = _f(e.pop("_t0")), (None if at_end else _f(e["_t1"]))
        e.pop("_t1")
        ops.append(e)
    out = ops
    # energisations
    ws = sc.machine.synchronous_speed_rad_s(f1)
    t = sim.t_s
    fs = sc.logger.sample_rate_hz
    energised = sim.closed.sum(axis=0) >= 2
    energ_instants = [t0 for k, (t0, _, c) in enumerate(tl) if sum(c) >= 2 and (k == 0 and t0 > 0 or k > 0 and sum(tl[k - 1][2]) < 2)]
    deenerg_instants = [t0 for k, (t0, _, c) in enumerate(tl) if k > 0 and sum(c) < 2 and sum(tl[k - 1][2]) >= 2]
    if tl and sum(tl[0][2]) >= 2 and sc.initial_state != "steady":
        energ_instants.insert(0, 0.0)
    for te in energ_instants:
        i0 = int(np.searchsorted(t, te))
        if i0 >= t.size or abs(sim.omega_m_rad_s[i0]) >= START_MAX_SPEED_PU * ws:
            continue
        run_end = next((b for a, b in _runs(energised) if a <= i0 < b), t.size)
        reach = np.nonzero(np.abs(sim.omega_m_rad_s[i0:run_end]) >= START_END_SPEED_PU * ws)[0]  # either direction
        lines = "".join(c for c, on in zip("ABC", sim.closed[:, i0], strict=True) if on)
        peak = float(np.max(np.abs(sim.i_line_smooth_a[:, i0 : min(run_end, i0 + int(fs / f1 * 3))]))) if run_end > i0 else 0.0
        out.append({"kind": "start", "phase": None, "start_s": _f(te), "end_s": _f(t[i0 + reach[0]]) if reach.size else None,
                    "outcome": "accelerated" if reach.size else "failed", "lines_closed": lines, "peak_current_a": _f(peak, 3)})
    # stalls
    slow = energised & (np.abs(sim.omega_m_rad_s) < STALL_SPEED_PU * ws)
    for a, b in _runs(slow):
        if (b - a) / fs < STALL_MIN_S:
            continue
        t0 = float(t[a])
        near = [e for e in energ_instants if 0 <= t0 - e <= 1.0 / fs]
        t0 = near[0] if near else t0
        t1 = None if b >= t.size else float(t[b])
        if t1 is not None:
            exact = [x for x in deenerg_instants if t[b - 1] < x <= t[b]]
            t1 = exact[0] if exact else t1
        pull_out, rest = _stall_instants(sim, a, near_energisation=bool(near))
        out.append({"kind": "stall", "phase": None, "start_s": _f(t0), "end_s": _f(t1),
                    "pull_out_s": _f(pull_out), "rest_s": _f(rest),
                    "speed_threshold_pu": STALL_SPEED_PU,
                    "rms_current_a": _f(float(np.sqrt(np.mean(sim.i_line_smooth_a[:, a:b] ** 2, axis=1)).max()), 3)})
    # supply events
    for d in sc.supply.dips:
        kind = "interruption" if d.residual_pu < 0.1 else "dip" if d.residual_pu < 0.9 else "swell" if d.residual_pu > 1.1 else "supply_change"
        out.append({"kind": kind, "phase": d.phases if len(d.phases) == 1 else None, "phases": d.phases,
                    "start_s": _f(d.start_s), "end_s": _f(d.end_s) if d.end_s < t_end else None,
                    "residual_pu": d.residual_pu, "where": "source EMF"})
    mags, angs = sc.supply.magnitude_pu, sc.supply.angle_offset_deg
    if max(mags) - min(mags) > 1e-9 or max(angs) - min(angs) > 1e-9:
        e = sc.supply.phasors(0.0)[:, 0]
        v1 = (e[0] + A_OP * e[1] + A_OP**2 * e[2]) / 3
        v2 = (e[0] + A_OP**2 * e[1] + A_OP * e[2]) / 3
        out.append({"kind": "unbalance", "phase": None, "start_s": 0.0, "end_s": None,
                    "emf_vuf_pct": _f(100 * abs(v2) / abs(v1), 4), "where": "source EMF"})
    if sim.site is not None:
        for e in out:
            if e["kind"] == "open_phase":
                e["where"] = "motor switch"
        out += _primary_open_events(sim)
        gr = sc.site.grounding if sc.site is not None else None
        for gf in (gr.faults if gr is not None else ()):
            out.append({"kind": "ground_fault", "phase": gf.line, "start_s": _f(gf.start_s), "end_s": _f(gf.end_s) if gf.end_s < t_end else None,
                        "resistance_ohm": gf.resistance_ohm, "location": "another feeder", "grounding": gr.kind,
                        "where": "line-to-ground voltages shift with the source neutral; line-to-line voltages unchanged"})
    out.sort(key=lambda e: (e["start_s"] if e["start_s"] is not None else -1.0, e["kind"]))
    return out


def _primary_open_events(sim: Simulation) -> list[dict[str, Any]]:
    """Open transformer primary lines (one line open of three): ``open_phase`` with location ``transformer_primary``."""
    tr = getattr(sim.trajectory, "primary_interruptions", None)
    if tr is None:
        return []
    f1 = sim.scenario.supply.f_hz
    t_last = float(sim.t_s[-1])
    out: list[dict[str, Any]] = []
    stretches: list[list[Any]] = []
    for p in sim.trajectory.pieces:
        if p.t1_s <= p.t0_s:
            continue
        if stretches and stretches[-1][2] == p.closed_primary and abs(stretches[-1][1] - p.t0_s) < 1e-12:
            stretches[-1][1] = p.t1_s
        else:
            stretches.append([p.t0_s, p.t1_s, p.closed_primary])
    commanded = {(line, round(act, 9)): cmd for line, cmd, act in tr}
    for t0, t1, closed in stretches:
        if sum(closed) != 2:
            continue
        at_end = t1 >= t_last - 1e-9
        if not at_end and t1 - t0 < 1.0 / f1:
            continue
        line = "ABC"[list(closed).index(False)]
        out.append({"kind": "open_phase", "phase": line, "start_s": _f(t0), "end_s": None if at_end else _f(t1),
                    "commanded_s": _f(commanded.get((line, round(t0, 9)))), "location": "transformer_primary",
                    "where": "transformer primary line (the secondary keeps three live lines)"})
    return out


def _site_window(sim: Simulation, sl: slice, f1: float, ref: float) -> dict[str, Any]:
    """Per-branch phasors of a site run over one window (see `waveforms.sim.site_run`)."""
    t = sim.t_s[sl]
    rec = sim.site or {}
    out: dict[str, Any] = {}
    for key, label in (("v_bus_v", "V_bus"), ("v_neutral_v", "V_neutral"), ("i_feeder_a", "I_feeder"), ("i_branch_a", "I_branch"), ("i_bank_bus_a", "I_bank_bus"),
                       ("i_bank_motor_a", "I_bank_motor"), ("i_second_motor_a", "I_second_motor"), ("i_magnetising_a", "I_magnetising"),
                       ("i_primary_a", "I_primary")):
        if key in rec and np.any(np.atleast_2d(rec[key])[:, sl]):
            ph = phasors(np.atleast_2d(rec[key])[:, sl], t, f1)
            if label == "V_neutral":
                out[label] = _ph(complex(ph[0]), ref)
                continue
            out[label] = {c: _ph(complex(ph[j]), ref) for j, c in enumerate("abc" if label != "I_primary" else "ABC")}
    out["I_motor"] = {c: _ph(complex(z), ref) for c, z in zip("abc", phasors(sim.i_line_smooth_a[:, sl], t, f1), strict=True)}
    out["P_motor_w"] = _f(float(np.mean(np.sum(sim.v_motor_v[:, sl] * sim.i_line_smooth_a[:, sl], axis=0))), 2)
    if "i_second_motor_a" in rec:
        w2 = rec["omega2_rad_s"][sl]
        out["second_motor_speed_rpm"] = _f(float(np.mean(w2)) * 60 / (2 * math.pi), 4)
        out["P_second_motor_w"] = _f(float(np.mean(np.sum(rec["v_bus_v"][:, sl] * rec["i_second_motor_a"][:, sl], axis=0))), 2)
    out["P_feeder_w"] = _f(float(np.mean(np.sum(rec["v_bus_v"][:, sl] * rec["i_feeder_a"][:, sl], axis=0))), 2)
    return out


def phasors(x: np.ndarray, t_s: np.ndarray, f_hz: float) -> np.ndarray:
    """Least-squares fundamental phasors (RMS, complex) of the rows of ``x`` over ``t_s``.

    Model ``x = sqrt(2) Re(X exp(j 2 pi f t)) + c``; exact for a pure sinusoid
    at ``f_hz`` (common practice, no source).
    """
    w = 2 * np.pi * f_hz * t_s
    a = np.column_stack([np.cos(w), np.sin(w), np.ones_like(w)])
    coef, *_ = np.linalg.lstsq(a, np.atleast_2d(x).T, rcond=None)
    return (coef[0] - 1j * coef[1]) / math.sqrt(2.0)


def sequence(p: np.ndarray) -> tuple[complex, complex, complex]:
    """(X0, X1, X2) from phasors (Xa, Xb, Xc).

    References
    ----------
    C. L. Fortescue, "Method of symmetrical co-ordinates applied to the solution of
    polyphase networks", Trans. AIEE 37, 1918.
    """
    x0 = (p[0] + p[1] + p[2]) / 3
    x1 = (p[0] + A_OP * p[1] + A_OP**2 * p[2]) / 3  # Fortescue: X1 = (Xa + a Xb + a^2 Xc)/3
    x2 = (p[0] + A_OP**2 * p[1] + A_OP * p[2]) / 3
    return complex(x0), complex(x1), complex(x2)


def _ph(z: complex, ref_deg: float) -> dict[str, float | None]:
    if abs(z) < 1e-6:  # a dead line or channel has no angle
        return {"mag": 0.0, "ang_abs_deg": None, "ang_deg": None}
    ang = math.degrees(math.atan2(z.imag, z.real))
    rel = (ang - ref_deg + 180.0) % 360.0 - 180.0
    return {"mag": _f(abs(z), 4), "ang_abs_deg": _f(ang, 3), "ang_deg": _f(rel, 3)}


def window(sim: Simulation, name: str, start_s: float, end_s: float) -> dict[str, Any]:
    """True phasors, sequence values, unbalance, speed and power over ``[start_s, end_s)``.

    References
    ----------
    NEMA MG-1 (line-voltage unbalance: max deviation from the mean line voltage over the
    mean; clause 14.36 in recent editions, from memory); P. Pillay, M. Manyage,
    "Definitions of voltage unbalance", IEEE Power Engineering Review, 2001 (PVUR);
    IEEE 1159 (VUF = |V2|/|V1|).
    """
    sc = sim.scenario
    f1 = sc.supply.f_hz
    t = sim.t_s
    sl = slice(int(np.searchsorted(t, start_s)), int(np.searchsorted(t, end_s)))
    tt = t[sl]
    vl = phasors(sim.v_logger_v[:, sl], tt, f1)
    vm = phasors(sim.v_motor_v[:, sl], tt, f1)
    em = phasors(sim.emf_v[:, sl], tt, f1)
    i_seen = sim.i_logger_smooth_a if sim.i_logger_smooth_a is not None else sim.i_line_smooth_a  # a site: what the logger sees
    il = phasors(i_seen[:, sl], tt, f1)
    v0, v1, v2 = sequence(vl)
    i0, i1, i2 = sequence(il)
    ref = math.degrees(math.atan2(v1.imag, v1.real))
    vll = np.array([vl[0] - vl[1], vl[1] - vl[2], vl[2] - vl[0]])
    mll, mln = np.abs(vll), np.abs(vl)
    imag_ = np.abs(il)
    nema = 100 * np.max(np.abs(mll - mll.mean())) / mll.mean()  # NEMA MG-1 line-voltage unbalance
    pvur = 100 * np.max(np.abs(mln - mln.mean())) / mln.mean()  # Pillay & Manyage 2001, PVUR
    inema = 100 * np.max(np.abs(imag_ - imag_.mean())) / imag_.mean() if imag_.mean() > 0 else math.nan
    ws = sc.machine.synchronous_speed_rad_s(f1)
    wm = float(np.mean(sim.omega_m_rad_s[sl]))
    slip = 1 - abs(wm) / ws  # relative to the rotor's own running direction, as the tool reports it
    p_w = float(np.mean(np.sum(sim.v_logger_v[:, sl] * i_seen[:, sl], axis=0)))
    out: dict[str, Any] = {
        "name": name, "start_s": start_s, "end_s": end_s, "frequency_hz": f1,
        "voltage_reference": f"logger voltage inputs, line-to-neutral against the {_neutral(sc)}",
        "V": {c: _ph(complex(vl[j]), ref) for j, c in enumerate("abc")},
        "V_ll": {lab: _ph(complex(vll[j]), ref) for j, lab in enumerate(("ab", "bc", "ca"))},
        "V_motor": {c: _ph(complex(vm[j]), ref) for j, c in enumerate("abc")},
        "EMF": {c: _ph(complex(em[j]), ref) for j, c in enumerate("abc")},
        "I": {c: _ph(complex(il[j]), ref) for j, c in enumerate("abc")},
        "V0": _f(abs(v0), 4), "V1": _f(abs(v1), 4), "V2": _f(abs(v2), 4), "V1_ang_abs_deg": _f(ref, 3),
        "I0": _f(abs(i0), 4), "I1": _f(abs(i1), 4), "I2": _f(abs(i2), 4),
        "V2_V1_pct": _f(100 * abs(v2) / abs(v1), 4) if abs(v1) > 0 else None,
        "I2_I1_pct": _f(100 * abs(i2) / abs(i1), 4) if abs(i1) > 0 else None,
        "V_unbal_nema_pct": _f(nema, 4), "V_unbal_pvur_pct": _f(pvur, 4), "I_unbal_nema_pct": _f(inema, 4),
        "I_rms": {c: _f(float(np.sqrt(np.mean(i_seen[j, sl] ** 2))), 4) for j, c in enumerate("abc")},
        "speed_rpm": _f(wm * 60 / (2 * math.pi), 4), "slip": _f(slip, 6),
        "torque_n_m": _f(float(np.mean(sim.torque_n_m[sl])), 4), "P_w": _f(p_w, 2),
        "signature_lines_hz": {k: _f(v, 4) for k, v in expected_lines_hz(sc.signatures, f1, slip, sc.machine.pole_pairs).items()},
    }
    if sim.site is not None:
        out["site"] = _site_window(sim, sl, f1, ref)
    if sc.machine.connection == "delta":
        iw = phasors(sim.i_winding_a[:, sl], tt, f1)
        out["I_winding"] = {lab: _ph(complex(iw[j]), ref) for j, lab in enumerate(("ab", "bc", "ca"))}
    return out


def speed_track(sim: Simulation) -> dict[str, list]:
    """Block means every 10 ms: t_s (block centre), rpm, slip, f_rotor_hz, torque, energised."""
    sc = sim.scenario
    fs = sc.logger.sample_rate_hz
    nb = max(1, int(round(TRACK_STEP_S * fs)))
    nblk = sim.t_s.size // nb
    cut = nblk * nb

    def blk(x: np.ndarray) -> np.ndarray:
        return x[:cut].reshape(nblk, nb).mean(axis=1)

    wm = blk(sim.omega_m_rad_s)
    ws = sc.machine.synchronous_speed_rad_s(sc.supply.f_hz)
    t_c = blk(sim.t_s)
    en = blk((sim.closed.sum(axis=0) >= 2).astype(float)) > 0.5
    return {
        "t_s": np.round(t_c, 6).tolist(),
        "rpm": np.round(wm * 60 / (2 * np.pi), 4).tolist(),
        "slip": np.round(1 - np.abs(wm) / ws, 6).tolist(),  # relative to the rotor's own direction; rpm is signed
        "f_rotor_hz": np.round(wm / (2 * np.pi), 5).tolist(),
        "torque_n_m": np.round(blk(sim.torque_n_m), 3).tolist(),
        "load_torque_n_m": np.round(blk(sim.load_torque_n_m), 3).tolist(),
        "energised": en.tolist(),
    }


def build_truth(sim: Simulation) -> dict[str, Any]:
    sc = sim.scenario
    wins = list(sc.windows) or []
    f1 = sc.supply.f_hz
    return {
        "format": "motor-waveforms simulation truth",
        "format_version": 1,
        "scenario": sc.name,
        "description": sc.description,
        "seed": sc.seed,
        "notes": list(sc.notes),
        "time_reference": "seconds from the capture's first sample",
        "capture": {
            "sample_rate_hz": sc.logger.sample_rate_hz, "n_samples": int(sim.t_s.size), "duration_s": sim.t_s.size / sc.logger.sample_rate_hz,
            "start_time": sc.logger.start_time.isoformat(), "channels": list(sim.capture.channel_names) if sim.capture is not None else list(sim.signals),
            "voltages": sc.logger.voltages, "voltage_reference": _neutral(sc) if sc.logger.voltages == "LN" else "line-to-line",
            "open_point": sc.open_point,
            "currents": sc.logger.currents,
            "current_channels": ({"Iab": "winding A-B (A->B)", "Ibc": "winding B-C (B->C)", "Ica": "winding C-A (C->A)"}
                                 if sc.logger.currents == "winding" else {"Ia": "line A", "Ib": "line B", "Ic": "line C"}),
        },
        "supply": {"frequency_hz": f1, "nominal_frequency_hz": sc.supply.frequency_hz, "voltage_ll_v": sc.supply.voltage_ll_v,
                   "magnitude_pu": list(sc.supply.magnitude_pu), "angle_offset_deg": list(sc.supply.angle_offset_deg),
                   "sequence": sc.supply.sequence, "source_r_ohm": sc.supply.source_r_ohm, "source_x_ohm": sc.supply.source_x_ohm,
                   "harmonics": [{"order": h.order, "percent": h.percent, "angle_deg": h.angle_deg} for h in sc.supply.harmonics]},
        "machine": sc.machine.to_dict(),
        "nameplate": None if sc.nameplate is None else sc.nameplate.to_dict(),
        "load": {"kind": sc.load.kind, "torque_n_m": sc.load.torque_n_m, "reference_speed_rpm": sc.load.reference_speed_rad_s * 60 / (2 * math.pi),
                 "breakaway_n_m": sc.load.breakaway_n_m, "steps": [{"time_s": s.time_s, "torque_n_m": s.torque_n_m} for s in sc.load.steps],
                 "jam": None if sc.load.jam is None else {"time_s": sc.load.jam.time_s, "torque_n_m": sc.load.jam.torque_n_m}},
        "switching": {
            "closed_at_start": "".join(c for c, on in zip("ABC", sc.closed_at_start, strict=True) if on),
            "interruptions": [{"line": line, "commanded_s": _f(cmd), "current_zero_s": _f(act)} for line, cmd, act in sim.trajectory.interruptions],
            "closings": [{"line": line, "time_s": _f(tc)} for line, tc in sim.trajectory.closings],
        },
        "signatures": {"eccentricity_db": sc.signatures.eccentricity_db, "eccentricity_order": sc.signatures.eccentricity_order,
                       "slot_db": sc.signatures.slot_db, "rotor_bars": sc.signatures.rotor_bars},
        "logger": {"adc_bits": sc.logger.adc_bits, "voltage_range_v": sc.logger.voltage_range_v, "current_range_a": sc.logger.current_range_a,
                   "noise_v": sc.logger.noise_v, "noise_a": sc.logger.noise_a, "storage": sc.logger.storage,
                   "channel_errors": {k: {"gain": v.gain, "offset": v.offset, "phase_deg": v.phase_deg} for k, v in sc.logger.channel_errors.items()},
                   "clipped_samples": dict(sim.clipped)},
        "definitions": {"stall_speed_pu": STALL_SPEED_PU, "stall_min_s": STALL_MIN_S, "start_max_speed_pu": START_MAX_SPEED_PU,
                        "start_end_speed_pu": START_END_SPEED_PU, "speed_track_step_s": TRACK_STEP_S},
        **({"site": _site_truth(sim)} if sim.site is not None else {}),
        "events": events(sim),
        "windows": [window(sim, w.name, w.start_s, w.end_s) for w in wins],
        "speed_track": speed_track(sim),
    }


def _neutral(sc: Any) -> str:
    """What the line-to-neutral voltages are referred to."""
    site = sc.site
    if site is not None and site.grounding is not None and site.grounding.kind != "solid":
        return "ground (the source neutral's shift included)"
    if site is not None and site.transformer is not None:
        return "transformer secondary neutral"
    return "source neutral"


def _site_truth(sim: Simulation) -> dict[str, Any]:
    """What the site is, where the logger is, which currents it sees, and where the open points are."""
    site = sim.scenario.site
    assert site is not None
    tr = site.transformer
    f_nom = sim.scenario.supply.frequency_hz
    v_bus = tr.secondary_voltage_ll_v if tr is not None else sim.scenario.supply.voltage_ll_v
    banks = [{"at": b.at, "connection": b.connection, "unit_capacitance_uf": _f(b.capacitance_f * 1e6, 4),
              "star_equivalent_uf": _f(b.star_equivalent_f * 1e6, 4),
              "line_current_at_rated_a": _f(v_bus / math.sqrt(3) * 2 * math.pi * f_nom * b.star_equivalent_f, 4),
              "kvar_at_rated": _f(v_bus**2 * 2 * math.pi * f_nom * b.star_equivalent_f / 1e3, 4)} for b in site.banks]
    out: dict[str, Any] = {
        "logger_at": site.logger_at, "logger_currents": site.logger_sees(),
        "motor_switch": {"between": "bus S and the motor's cable", "seen_from_logger": site.open_point},
        "grounding": None if site.grounding is None else {"kind": site.grounding.kind, "resistance_ohm": site.grounding.resistance_ohm,
                                                           "charging_uf_per_phase": site.grounding.charging_uf_per_phase},
        "voltage_reference": ("ground (line-to-ground: the source neutral's shift included)"
                              if site.grounding is not None and site.grounding.kind != "solid" else "source neutral"),
        "cable_r_ohm": site.cable_r_ohm, "cable_x_ohm": site.cable_x_ohm, "capacitor_banks": banks,
        "stiff_source": tr is None and sim.scenario.supply.source_r_ohm == 0 and sim.scenario.supply.source_x_ohm == 0,
        "second_motor": None if site.second_motor is None else {"name": site.second_motor.name, "machine": site.second_motor.machine.to_dict(),
                                                                "load": {"kind": site.second_motor.load.kind, "torque_n_m": site.second_motor.load.torque_n_m}},
        "transformer": None,
    }
    if tr is not None:
        out["transformer"] = {"kva": tr.kva, "primary_voltage_ll_v": tr.primary_voltage_ll_v, "secondary_voltage_ll_v": tr.secondary_voltage_ll_v,
                              "vector_group": tr.vector_group, "impedance_pct": tr.impedance_pct, "x_over_r": tr.x_over_r,
                              "magnetising_pct": tr.magnetising_pct,
                              "model": "ideal ratio with the vector group's winding connection + leakage impedance referred to the secondary "
                                       "+ linear magnetising inductance at the secondary terminals",
                              "primary_closed_at_start": "".join(c for c, on in zip("ABC", tr.closed_at_start, strict=True) if on),
                              "primary_interruptions": [{"line": ln, "commanded_s": _f(c), "current_zero_s": _f(a)}
                                                        for ln, c, a in sim.trajectory.primary_interruptions],  # type: ignore[attr-defined]
                              "primary_closings": [{"line": ln, "time_s": _f(tc)} for ln, tc in sim.trajectory.primary_closings]}  # type: ignore[attr-defined]
    return out
