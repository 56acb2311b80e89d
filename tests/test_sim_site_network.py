"""Internal consistency of the site network solver (waveforms.sim.network); no external source.

The solver's right-hand side (matrices built once per stretch) must equal the vectorised derivative
used for the post-processing, and the phasor steady state at t = 0 must be a periodic solution of the
equations (one cycle later the electrical states return to their values).
"""

from __future__ import annotations

import numpy as np
import pytest

from _site_support import SAMPLES, scenario_dict, simulate_site
from waveforms.sim.network import Network, Segment
from waveforms.sim.scenario import scenario_from_dict

SITES = {
    "everything": ({"logger_at": "feeder", "cable_r_ohm": 0.01, "cable_x_ohm": 0.03,
                    "capacitor": [{"at": "bus", "kvar": 10}, {"at": "motor", "connection": "star", "kvar": 5}],
                    "second_motor": {"machine": "sludge4.machine.toml", "load": {"kind": "constant", "torque_n_m": 100.0}},
                    "transformer": {"kva": 300, "secondary_voltage_ll_v": 460}}, {"voltage_ll_v": 4160}),
    "bank_at_motor": ({"logger_at": "motor", "cable_x_ohm": 0.03, "capacitor": [{"at": "motor", "kvar": 10}]}, {"source_x_ohm": 0.05}),
}


@pytest.mark.parametrize("name", sorted(SITES))
@pytest.mark.parametrize("closed", [(True, True, True), (True, False, True), (False, False, False)])
def test_solver_rhs_equals_the_post_processing_derivative(name, closed):
    site, supply = SITES[name]
    sc = scenario_from_dict(scenario_dict(site, supply=supply), "x.toml", SAMPLES)
    net = Network(sc.site, sc.supply, sc.machine, sc.load)
    seg = Segment(net, 0.0, closed, (False, True, True) if sc.site.transformer else (True, True, True))
    f = seg.rhs()
    rng = np.random.default_rng(7)
    for t in (0.0, 0.0123, 0.5):
        y = rng.normal(size=net.ny) * 20
        y[net.i_w[0]] = 170.0
        want = seg.derivative(np.array([t]), y[:, None])[:, 0]
        assert np.allclose(f(t, y), want, rtol=1e-12, atol=1e-9 * np.abs(want).max())


def test_phasor_steady_state_is_periodic():
    site, supply = SITES["everything"]
    sim = simulate_site(site, duration_s=0.05, supply=supply, rate_hz=6000.0)
    n = 100  # one 60 Hz cycle at 6 kS/s
    x0, x1 = sim.trajectory.states[:, 0], sim.trajectory.states[:, n]
    net_states = slice(0, sim.trajectory.states.shape[0] - 4 * 2)  # currents, bank voltages, fluxes (not speed, angle)
    scale = np.abs(sim.trajectory.states[net_states]).max()
    assert np.allclose(x0[net_states], x1[net_states], atol=2e-4 * scale)
