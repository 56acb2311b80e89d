"""The open-line constraint as linear algebra: properties that must hold for any switch state."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from waveforms.sim.topology import CLARKE, line_map, projector

STATES = list(itertools.product([True, False], repeat=3))


@pytest.mark.parametrize("connection", ["star", "delta"])
@pytest.mark.parametrize("closed", STATES)
def test_projector_is_orthogonal_and_kills_open_line_currents(connection: str, closed: tuple[bool, bool, bool]) -> None:
    # An orthogonal projector is symmetric and idempotent; every current it allows has zero
    # current in the open lines, and the line currents always sum to zero (Kirchhoff; common
    # practice, no source).
    p = projector(connection, closed)
    m = line_map(connection)
    assert np.allclose(p, p.T) and np.allclose(p @ p, p)
    allowed = m @ p
    for j in range(3):
        if not closed[j]:
            assert np.allclose(allowed[j], 0.0)
    assert np.allclose(m.sum(axis=0), 0.0)
    n_open = 3 - sum(closed)
    assert int(round(np.trace(p))) == {0: 2, 1: 1}.get(n_open, 0)  # dimension of the allowed currents


def test_clarke_is_power_invariant() -> None:
    # Power-invariant Clarke transform: C C^T = I (common practice, no source).
    assert np.allclose(CLARKE @ CLARKE.T, np.eye(2))
    # delta: M^T M = 3 I (a delta winding set seen from the lines is the star equivalent / 3)
    m = line_map("delta")
    assert np.allclose(m.T @ m, 3 * np.eye(2))


@settings(max_examples=50, deadline=None)
@given(st.floats(-1e3, 1e3), st.floats(-1e3, 1e3), st.sampled_from(["star", "delta"]), st.sampled_from("ABC"))
def test_one_line_open_leaves_equal_and_opposite_currents(ia: float, ib: float, connection: str, line: str) -> None:
    closed = tuple(c != line for c in "ABC")
    i_line = line_map(connection) @ projector(connection, closed) @ np.array([ia, ib])  # type: ignore[arg-type]
    j = "ABC".index(line)
    others = [k for k in range(3) if k != j]
    assert abs(i_line[j]) <= 1e-9 * (1 + abs(ia) + abs(ib))
    assert i_line[others[0]] == pytest.approx(-i_line[others[1]], abs=1e-9 * (1 + abs(ia) + abs(ib)))
