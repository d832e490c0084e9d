"""The batched matrix exponential behind the exact discretisation."""

from __future__ import annotations

import mpmath
import numpy as np
from scipy.linalg import expm

from supplydesign.circuit.netlist import build
from supplydesign.circuit.statespace import build_state_space, expm_batched
from supplydesign.design import Capacitor, Design, Link, Mains, Rail, Rectifier, Transformer


def test_expm_batched_is_scipys_on_ordinary_matrices():
    """scipy.linalg.expm [source: an independent implementation] on random matrices of
    moderate norm, where both are accurate to round-off."""
    rng = np.random.default_rng(4)
    M = rng.normal(size=(20, 7, 7)) * rng.uniform(0.01, 1.0, size=(20, 1, 1))
    np.testing.assert_allclose(expm_batched(M), expm(M), rtol=1e-12, atol=1e-14)


def test_expm_batched_keeps_the_slow_decays_of_a_stiff_network():
    """The network of a valve supply over one step of 1/512 period (invented values):
    100 pF junctions behind 60 ohm beside 47 uF behind 22 kohm, a 1-norm of 5e5.
    Against mpmath's exponential at 30 digits [source: an independent arbitrary-
    precision implementation], every entry within 1e-13: the slow decays
    1 - e^(-h/tau) of about 1e-5 keep 8 digits. Squaring e^A itself (as
    scipy.linalg.expm does) is 1e-10 off here."""
    design = Design(
        "stiff", Mains(50.0),
        Transformer(open_circuit_v=300.0, resistance_ohm=60.0, leakage_h=4e-3),
        Rectifier(kind="valve", drop_v=20.0, drop_current_a=0.2),
        (Rail("a", None, Link("wire"), Capacitor(47e-6, esr_ohm=0.5), current_a=0.1),
         Rail("b", "a", Link("resistor", resistance_ohm=22000.0), Capacitor(47e-6),
              current_a=0.002)))
    M = build_state_space(build([design])).A[0] / (50.0 * 512)
    assert np.linalg.norm(M, 1) > 1e5
    with mpmath.workdps(30):
        ref = np.array(mpmath.expm(mpmath.matrix(M.tolist())).tolist(), dtype=float)
    assert np.max(np.abs(expm_batched(M[None])[0] - ref)) < 1e-13
