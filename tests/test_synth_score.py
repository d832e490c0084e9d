"""The hum objective: every rail's ripple counts, the worst rail's margin is reported."""

from __future__ import annotations

import numpy as np
import pytest

from supplydesign.synth.score import hum_objective


def test_power_sum_of_the_ratios():
    # two rails each at half their allowance: 10 log10(0.25 + 0.25) = -3.0103 dB, and the
    # worst rail 20 log10(2) = 6.0206 dB below its allowance [derived: arithmetic]
    hum, margin = hum_objective(np.array([[0.5, 0.5]]))
    assert hum[0] == pytest.approx(-3.0103, abs=1e-4)
    assert margin[0] == pytest.approx(6.0206, abs=1e-4)


def test_every_rail_moves_the_objective_but_not_the_margin():
    # the second rail filtered ten times better: the worst rail (the first) is unchanged,
    # the objective falls from 10 log10(0.36 + 0.25) to 10 log10(0.36 + 0.0025)
    before, m_before = hum_objective(np.array([[0.6, 0.5]]))
    after, m_after = hum_objective(np.array([[0.6, 0.05]]))
    assert m_after[0] == pytest.approx(m_before[0])
    assert before[0] - after[0] == pytest.approx(10 * np.log10(0.61 / 0.3625), rel=1e-9)


def test_every_rail_at_its_allowance_gives_ten_log_n():
    hum, margin = hum_objective(np.ones((1, 5)))
    assert hum[0] == pytest.approx(10 * np.log10(5))
    assert margin[0] == pytest.approx(0.0)


def test_an_unsolved_rail_is_the_worst_possible():
    hum, margin = hum_objective(np.array([[np.nan, 0.1]]))
    assert hum[0] == np.inf and margin[0] == -np.inf
