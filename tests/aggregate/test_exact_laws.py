"""Exact expected adoption on the two-organisation network, the ring and k-regular trees (womlab.aggregate.exact).

Each law is checked against an independent computation: the two-organisation closed form
against the pair's master equation (a three-state Markov chain solved with scipy's matrix
exponential), the ring's against Fibich & Gibori's (2010) closed form, the continuous tree law
at k = 1 against the two-organisation form, and the step recursion against the continuous law
as the step shrinks (its error must fall in proportion to the step: common practice for a
first-order scheme). The engines are held to these laws in tests/studies/test_literature.py.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.linalg import expm

from womlab.aggregate.exact import regular_tree_share, ring_share, two_organisation_share


@pytest.mark.parametrize("p, q", [(0.01, 0.4), (0.05, 0.05), (0.2, 0.1)])
def test_two_organisation_form_solves_the_pair_master_equation(p, q):
    # states: neither adopted, exactly one, both; rates 2p, then p + q
    generator = np.array([[-2 * p, 2 * p, 0.0], [0.0, -(p + q), p + q], [0.0, 0.0, 0.0]])
    for t in (0.5, 3.0, 17.0, 60.0):
        state = expm(generator * t)[0]
        expected_share = 0.5 * state[1] + state[2]  # a member has adopted: half of "one", all of "both"
        assert two_organisation_share(t, p, q) == pytest.approx(expected_share, abs=1e-12)


def test_ring_law_is_the_tree_law_at_degree_two_and_the_pair_at_degree_one():
    t = np.arange(41.0)
    np.testing.assert_allclose(regular_tree_share(40, 2, 0.01, 0.2), ring_share(t, 0.01, 0.4), atol=1e-8)
    np.testing.assert_allclose(regular_tree_share(40, 1, 0.02, 0.3), two_organisation_share(t, 0.02, 0.3), atol=1e-8)


def test_step_law_converges_to_the_continuous_law_in_proportion_to_the_step():
    continuous = regular_tree_share(30, 4, 0.01, 0.1, satisfied_share=0.7, initial_share=0.01)
    errors = [
        np.abs(
            regular_tree_share(30, 4, 0.01, 0.1, satisfied_share=0.7, initial_share=0.01, time_step=dt) - continuous
        ).max()
        for dt in (0.5, 0.25, 0.125)
    ]
    assert errors[0] > errors[1] > errors[2]
    assert errors[0] / errors[1] == pytest.approx(2, rel=0.1) and errors[1] / errors[2] == pytest.approx(2, rel=0.1)


def test_step_law_by_hand_for_one_step():
    # after one step the only neighbours that talk are the initial customers: each organisation
    # not initial survives with e^{-p dt} (1 - s + s (x0 e^{-a dt} + 1 - x0))^k
    p, a, s, x0, k, dt = 0.02, 0.3, 0.6, 0.1, 3, 1.0
    g = 1 - s + s * (x0 * np.exp(-a * dt) + 1 - x0)
    expected = 1 - (1 - x0) * np.exp(-p * dt) * g**k
    f = regular_tree_share(1, k, p, a, satisfied_share=s, initial_share=x0, time_step=dt)
    assert f[0] == pytest.approx(x0) and f[1] == pytest.approx(expected, abs=1e-14)
