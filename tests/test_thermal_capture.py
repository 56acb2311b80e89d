"""Thermal verdict built on the capture (issue 18 item 4) and the declared voltage (item 3).

Each case of the issue's table for these items is a test here.  References are named beside each check;
the independent reference computations use scipy.integrate.solve_ivp (a general ODE library, not the
tool's closed form or its lfilter discretisation).
"""

from __future__ import annotations

import math
import tomllib
from functools import cache
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy.integrate import solve_ivp

from waveforms.analysis import analyze
from waveforms.detect import DetectParams
from waveforms.io import read_capture
from waveforms.measure.declared import nearest_standard_voltage, resolve_declared_voltage
from waveforms.motor import thermal as th
from waveforms.motor.terminal import terminal_voltage_check

SAMPLES = Path(__file__).resolve().parent.parent / "sample_captures"


@cache
def _res(name: str, initial_state: str = "capture"):
    return analyze(read_capture(SAMPLES / f"{name}.h5"), speed=False, thermal_params=th.ThermalParams(initial_state=initial_state))


def _ode_crossing(t_s: np.ndarray, u: np.ndarray, tau_s: float, theta0: float, level: float, t_extra_s: float = 0.0) -> float | None:
    """First time the IEC 60255-149 first-order state d theta/dt = (u - theta)/tau reaches ``level``.

    ``u`` is piecewise constant on the cycle ends ``t_s``; after the last one it is held at its last
    value for ``t_extra_s`` more.  Integrated with scipy's solve_ivp (RK45, event location), independently
    of the tool's exact discretisation.
    """
    edges = np.r_[t_s[0] - (t_s[1] - t_s[0]), t_s]

    def f(t, y):
        k = min(int(np.searchsorted(edges, t, side="right")) - 1, u.size - 1)
        return [(u[max(k, 0)] - y[0]) / tau_s]

    def hit(t, y):
        return y[0] - level
    hit.terminal, hit.direction = True, 1
    sol = solve_ivp(f, (edges[0], t_s[-1] + t_extra_s), [theta0], events=hit, max_step=0.02, rtol=1e-9, atol=1e-12)
    return float(sol.t_events[0][0]) if sol.t_events[0].size else None


class TestInitialState:
    def test_open_phase_stall_from_the_pre_event_load_trips_near_the_hot_figure(self):
        # issue 18 table: cold "no model relay would have tripped"; hot class 10 at 10.33 s.  The capture begins
        # with the motor running steadily (0.93 x FLA): from that state the class-10 model must trip, later than hot
        # (less heat stored) and within 2 s of it (no external source: ordering of the IEC 60255-149 solutions)
        cold = _res("open_phase_stall", "cold").thermal.summary["relays"]["10"]["trip_s"]
        hot = _res("open_phase_stall", "hot").thermal.summary["relays"]["10"]["trip_s"]
        cap = _res("open_phase_stall").thermal.summary
        assert cold is None and hot == pytest.approx(10.33, abs=0.01)
        assert cap["initial_state"]["mode"] == "capture" and 0.85 < cap["initial_state"]["pre_event_heating_pu"] < 1.0
        assert hot < cap["relays"]["10"]["trip_s"] < hot + 2.0
        assert "pre-event load" in _res("open_phase_stall").verdict

    def test_pre_event_state_matches_an_independent_ode_solution(self):
        # IEC 60255-149 cl. 5 first-order model, integrated with scipy from the steady state at the first
        # second's median relay current: the class-10 trip instant agrees to 0.05 s
        res = _res("open_phase_stall")
        c = res.cycles
        i_max = c[["Ia_rms", "Ib_rms", "Ic_rms"]].max(axis=1).to_numpy() / res.nameplate.fla_a
        u = i_max**2
        t_end = c["t_end_s"].to_numpy()
        u0 = float(np.median(u[c["t_s"].to_numpy() <= c["t_s"].iloc[0] + 1.0]))
        ref = _ode_crossing(t_end, u, th.class_tau_s("10"), u0, th.RELAY_PICKUP_PU**2)
        assert ref is not None
        assert res.thermal.summary["relays"]["10"]["trip_s"] == pytest.approx(ref, abs=0.05)

    def test_a_capture_beginning_de_energised_starts_cold(self):
        s = _res("dol_start").thermal.summary  # energised at about 0.2 s: nothing in the capture says how warm it was
        assert s["initial_state"]["theta_motor_pct"] == 0.0 and "de-energised" in s["initial_state"]["basis"]

    def test_hot_start_option_still_works(self):
        p = th.ThermalParams(hot_start=True)
        assert p.start_state == "hot"
        with pytest.raises(Exception, match="contradicts"):
            th.ThermalParams(hot_start=True, initial_state="cold")


class TestStandstill:
    def test_single_phased_stall_heats_less_than_the_three_phase_jam(self):
        # issue 18 table: a single-phased stall at 5.4 x FLA was rated hotter (7.19 pu) than the three-phase jam
        # at 6.2 x FLA (6.17 pu).  At standstill the rotor sees both sequence fields at supply frequency (slip 1
        # for both: machines textbook, e.g. Fitzgerald & Kingsley, Electric Machinery, unbalanced operation --
        # from memory), so no negative-sequence premium: the single-phased stall must rate below the jam
        ops = _res("open_phase_stall").thermal.summary["max_heating_pu"]
        jam = _res("jam").thermal.summary["max_heating_pu"]
        assert ops < jam
        assert ops == pytest.approx(5.42, abs=0.05) and jam == pytest.approx(6.2, abs=0.05)

    def test_standstill_heating_is_the_mean_square_line_current(self):
        # Fortescue (AIEE 1918) power invariance: |Ia|^2 + |Ib|^2 + |Ic|^2 = 3 (|I0|^2 + |I1|^2 + |I2|^2); with
        # K = 1 at standstill and no I0 (3-wire), I_eq^2 = I1^2 + I2^2 = mean square of the line currents.
        # Line B open, star motor stalled: Ia = -Ic = 5 pu -> I_eq = 5 sqrt(2/3) = 4.08 pu (the winding at 5 pu rules)
        a = np.exp(2j * np.pi / 3)
        ia, ib, ic = 50.0 + 0j, 0j, -50.0 + 0j
        i1 = abs(ia + a * ib + a * a * ic) / 3
        i2 = abs(ia + a * a * ib + a * ic) / 3
        n = 200
        cyc = pd.DataFrame({"t_s": (np.arange(n) + 0.5) / 50, "t_start_s": np.arange(n) / 50, "t_end_s": (np.arange(n) + 1) / 50,
                            "Ia_rms": np.full(n, 50.0), "Ib_rms": np.zeros(n), "Ic_rms": np.full(n, 50.0),
                            "I1": np.full(n, i1), "I2": np.full(n, i2)})
        r = th.assess_thermal(cyc, fla_a=10.0, locked_rotor_a=60.0, standstill=np.ones(n, bool))
        assert r.track["i_eq_pu"].to_numpy() == pytest.approx(np.full(n, 5.0 * math.sqrt(2.0 / 3.0)), rel=1e-9)
        run = th.assess_thermal(cyc, fla_a=10.0, locked_rotor_a=60.0, standstill=np.zeros(n, bool))
        # running: the K = 175/36 premium (IEEE C37.96 rule of thumb, from memory) makes it hotter than standstill
        assert (run.track["i_eq_pu"] > r.track["i_eq_pu"]).all()

    def test_standstill_cools_slower_than_it_heats(self):
        # stated assumption (common practice 2-4 x, no source): after the current stops, the motor state decays
        # with 3 tau; checked against an ODE solution of d theta/dt = -theta / (3 tau) (scipy solve_ivp)
        n_on, n_off, f = 3000, 3000, 50.0
        i = np.r_[np.full(n_on, 20.0), np.zeros(n_off)]
        t0 = np.arange(i.size) / f
        cyc = pd.DataFrame({"t_s": t0 + 0.5 / f, "t_start_s": t0, "t_end_s": t0 + 1 / f, "Ia_rms": i, "Ib_rms": i, "Ic_rms": i})
        p = th.ThermalParams(motor_tau_s=60.0, initial_state="cold")
        s = th.assess_thermal(cyc, fla_a=10.0, params=p).track["theta_motor_pct"].to_numpy() / 100.0
        sol = solve_ivp(lambda t, y: [-y[0] / (3 * 60.0)], (0, n_off / f), [s[n_on - 1]], t_eval=[n_off / f], rtol=1e-10)
        assert s[-1] == pytest.approx(sol.y[0][-1], rel=1e-6)
        assert s[-1] > s[n_on - 1] * math.exp(-(n_off / f) / 60.0)  # slower than the running constant


class TestProjection:
    def test_open_phase_50hz_projected_trip_from_cold_matches_an_ode(self):
        # issue 18 table: at 1.77 x FLA "not within the capture"; the tool's own model (cold) trips the class-10
        # relay at about 158 s.  Independent: scipy solve_ivp of the IEC 60255-149 model over the capture's
        # largest line current, held at the last second's median afterwards (5 % tolerance: the median vs
        # the last value)
        res = _res("open_phase_50hz", "cold")
        s = res.thermal.summary
        c = res.cycles
        i = c[["Ia_rms", "Ib_rms", "Ic_rms"]].max(axis=1).to_numpy() / s["relay_setting_a"]
        ref = _ode_crossing(c["t_end_s"].to_numpy(), i**2, th.class_tau_s("10"), 0.0, th.RELAY_PICKUP_PU**2, t_extra_s=600.0)
        assert s["relays"]["10"]["trip_s"] is None and ref is not None and ref > c["t_end_s"].iloc[-1]
        assert s["relays"]["10"]["trip_projected_s"] == pytest.approx(ref, rel=0.05)
        assert 140 < s["relays"]["10"]["trip_projected_s"] < 180
        assert s["projection"]["motor_100pct_s"] is not None
        assert "past the end of the capture" in res.verdict and "class 10 trips at about" in res.verdict

    def test_no_projection_after_de_energisation(self):
        s = _res("jam").thermal.summary
        assert s["projection"]["heating_pu"] is None and "de-energised" in s["projection"]["basis"]


class TestSensitivity:
    def test_tau_halved_and_doubled_bracket_the_verdict(self):
        # property of the first-order model (no external source): a shorter time constant heats faster, so the
        # capacity used with tau/2 >= the base >= with 2 tau; the class-10 relay at the band's fast edge (4 s at
        # 7.2 x, IEC 60947-4-1) trips no later than at the slow edge (10 s)
        s = _res("open_phase_stall").thermal.summary
        sens = {(r["parameter"], r["value"]): r for r in s["sensitivity"]}
        base = s["thermal_capacity_used_pct"]
        assert sens[("motor_tau_s", 300.0)]["capacity_used_pct"] >= base >= sens[("motor_tau_s", 1200.0)]["capacity_used_pct"]
        fast, slow = sens[("class10_trip_at_7_2x_s", 4.0)], sens[("class10_trip_at_7_2x_s", 10.0)]
        assert fast["trip_s"] is not None and (slow["trip_s"] is None or fast["trip_s"] <= slow["trip_s"])
        assert any(r["parameter"] == "locked_rotor_a" for r in s["sensitivity"])  # from the NEMA code-letter range
        assert any("rule of thumb" in n for n in s["notes"])


class TestTripClassesOutside:
    @pytest.mark.parametrize(("cls", "limit_s"), [("10A", 120.0), ("10", 240.0), ("20", 480.0), ("30", 720.0)])
    def test_1_5x_from_hot_within_the_class_limit(self, cls, limit_s):
        # IEC 60947-4-1 limits of operation (from memory, REFERENCES.md [mem]): at 1.5 x setting from the hot
        # state the relay trips within 2 min (10A), 4 min (10), 8 min (20), 12 min (30).  The model relays are
        # tuned at 7.2 x only, so this check is not met by construction.  Hot = steady state at 1.0 x.
        tau = th.class_tau_s(cls)
        t = float(th.trip_time_s(1.5, tau, k=th.RELAY_PICKUP_PU, ip_pu=1.0))
        assert 0 < t <= limit_s

    @pytest.mark.parametrize("cls", ["10A", "10", "20", "30"])
    def test_7_2x_cold_trip_from_an_independent_ode(self, cls):
        # IEC 60947-4-1: cold trip time at 7.2 x setting inside the class band (10A 2-10 s, 10 4-10 s, 20 6-20 s,
        # 30 9-30 s).  The trip time is found by scipy solve_ivp of the IEC 60255-149 model, not the closed form
        lo, hi = th.TRIP_CLASS_BAND_S[cls]
        t = np.arange(1, 60 * 50 + 1) / 50.0
        ref = _ode_crossing(t, np.full(t.size, 7.2**2), th.class_tau_s(cls), 0.0, th.RELAY_PICKUP_PU**2)
        assert ref is not None and lo < ref - (t[0] - 0.02) <= hi


class TestDeclaredVoltage:
    @staticmethod
    @cache
    def _healthy_512():
        # issue 18 table: healthy_run at about 508 V line-to-line with no declared voltage and a 460 V nameplate
        # was reported as a "temporary swell or longer" with declared_source "declared".  Simulated at 512 V
        # supply (about 508 V at the terminals), 2 s, the file's nominal voltage removed
        from waveforms.sim.scenario import scenario_from_dict
        from waveforms.sim.simulate import simulate

        d = tomllib.loads((SAMPLES / "healthy_run.scenario.toml").read_text(encoding="utf-8"))
        d["supply"]["voltage_ll_v"] = 512.0
        d["scenario"]["duration_s"] = 2.0
        d.pop("truth", None)
        cap, _ = simulate(scenario_from_dict(d, "healthy_512", base=SAMPLES))
        return cap.replace(nominal_voltage_v=None)

    def test_healthy_run_at_508_v_is_no_swell_and_the_motor_band_is_reported(self):
        cap = self._healthy_512()
        res = analyze(cap, speed=False)
        assert not res.events_of("swell")
        v = res.voltage
        # ANSI C84.1 (from memory): 480 V is the nominal system voltage nearest 508 V
        assert v["declared"] == {"ll_v": 480.0, "source": "inferred", "basis": v["declared"]["basis"]}
        assert "inferred" in v["declared"]["basis"] and "ANSI C84.1" in v["declared"]["basis"]
        # NEMA MG 1 (from memory): +/-10 % of the 460 V rating, 414-506 V; the terminals are above it
        assert 506.0 < v["measured_ll_v"] < 512.0 and v["motor_terminal"]["within_nema_mg1"] is False
        assert "NEMA MG 1" in res.verdict
        assert any("inferred" in n for n in res.notes)

    def test_the_users_declared_voltage_is_used_and_named(self):
        cap = self._healthy_512()
        res = analyze(cap, speed=False, detect_params=DetectParams(declared_voltage_v=460.0))
        (sw,) = res.events_of("swell")  # 508 V on a declared 460 V system is above 110 % (IEC 61000-4-30 5.4.2)
        assert sw.figures["declared_source"] == "user" and sw.figures["declared_v"] == pytest.approx(460 / math.sqrt(3))

    @pytest.mark.parametrize(("measured", "f_hz", "expected"), [
        (508.0, 60.0, 480.0), (585.0, 60.0, 600.0), (4080.0, 60.0, 4160.0), (395.0, 50.0, 400.0), (11300.0, 50.0, 11000.0)])
    def test_nearest_standard_voltage(self, measured, f_hz, expected):
        # ANSI C84.1 / IEC 60038 Tables 1 and 3 nominal system voltages (from memory); motors rated 460, 575,
        # 4000 V (NEMA MG 1 utilization voltages) run on 480, 600, 4160 V systems
        assert nearest_standard_voltage(measured, f_hz)[0] == expected

    def test_never_the_motor_rating(self):
        d = resolve_declared_voltage(None, None, 457.0, 60.0)
        assert d.ll_v == 480.0 and d.source == "inferred"

    def test_terminal_band_edges(self):
        # NEMA MG 1 +/-10 %, IEC 60034-1 zone A +/-5 %, zone B +/-10 % (from memory)
        assert terminal_voltage_check(460 * 1.04, 460)["iec_60034_1_zone"] == "A"
        assert terminal_voltage_check(460 * 0.93, 460)["iec_60034_1_zone"] == "B"
        assert terminal_voltage_check(460 * 1.11, 460)["iec_60034_1_zone"] == "outside B"


def test_single_phased_space_vector_rms_is_sqrt_two_thirds_of_the_line_rms():
    # Clarke (amplitude-invariant space vector 2/3 (ia + a ib + a^2 ic), common practice): ia = -ib, ic = 0 gives
    # |i_s| = (2/3) sqrt(3) |ia|, so sqrt(mean |i_s|^2 / 2) = sqrt(2/3) x the line RMS = 0.816 (docs/speed.md)
    from waveforms.speed.spectrum import space_vector

    t = np.arange(6000) / 6000.0
    ia = 10.0 * math.sqrt(2.0) * np.sin(2 * np.pi * 60.0 * t)
    sv = space_vector(ia, -ia, np.zeros_like(ia))
    assert math.sqrt(np.mean(np.abs(sv) ** 2) / 2.0) == pytest.approx(10.0 * math.sqrt(2.0 / 3.0), rel=1e-9)
