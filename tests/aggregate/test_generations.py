"""The Norton-Bass model of successive generations: closed form against its flows solved by scipy.

Sources: Norton & Bass (1987, "A diffusion theory model of adoption and substitution for successive
generations of high-technology products", Management Science) for the closed form; Bass (1969,
Management Science) for one generation; scipy's solve_ivp as the outside solver of the flows.
"""

from __future__ import annotations

import numpy as np
import pytest

from womlab.aggregate import bass_share, norton_bass, norton_bass_ode

T = np.linspace(0, 40, 161)


@pytest.mark.parametrize(
    "launch,p,q,m",
    [
        ([0.0, 8.0], [0.02, 0.02], [0.4, 0.4], [1000.0, 500.0]),  # Norton & Bass's own case: one p and q
        ([0.0, 6.0, 14.5], [0.01, 0.03, 0.05], [0.5, 0.35, 0.6], [800.0, 400.0, 300.0]),  # three, own p and q each
        ([0.0, 0.0], [0.02, 0.01], [0.3, 0.5], [100.0, 100.0]),  # launched together
    ],
)
def test_closed_form_is_the_flows_solved_by_scipy(launch, p, q, m):
    args = [np.array(x) for x in (launch, p, q, m)]
    closed, flows = norton_bass(T, *args), norton_bass_ode(T, *args)
    assert np.max(np.abs(closed - flows)) < 1e-4 * sum(m)


def test_one_generation_is_bass_and_the_last_takes_everyone():
    S = norton_bass(T, np.array([0.0]), np.array([0.03]), np.array([0.38]), np.array([250.0]))
    assert np.allclose(S[:, 0], 250 * bass_share(T, 0.03, 0.38), atol=1e-9)
    # Norton & Bass (1987): every earlier generation's customers end up on the newest generation
    S = norton_bass(
        np.array([200.0]), np.array([0.0, 5.0, 9.0]), np.full(3, 0.03), np.full(3, 0.4), np.array([300.0, 200.0, 100.0])
    )
    assert np.allclose(S, [[0.0, 0.0, 600.0]], atol=1e-6)


def test_before_the_second_launch_the_first_generation_is_bass():
    S = norton_bass(T, np.array([0.0, 12.0]), np.array([0.02, 0.05]), np.array([0.45, 0.5]), np.array([1000.0, 400.0]))
    early = T <= 12
    assert np.allclose(S[early, 0], 1000 * bass_share(T[early], 0.02, 0.45)) and np.all(S[early, 1] == 0)
    # substitution: generation 1 peaks and falls once generation 2 spreads
    assert S[-1, 0] < 0.05 * S[:, 0].max()
