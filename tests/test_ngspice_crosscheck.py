"""Our steady-state figures against ngspice, the outside reference simulator.

Source: ngspice (REFERENCES.md, "General-purpose reference simulator") [source:
an independent simulator run on our own netlist of each design]. Every test
circuit of tests/data/spice (invented values) runs once per session from rest
until settled (two windows 0.5 s apart agree; see test_spice_export.py); the
figures are taken over its last ten mains periods.

Tolerances: ngspice at reltol 1e-4 with a 20 us step agrees with a run at
reltol 1e-6 and a 5 us step to 3e-5 on DC and 3e-4 on ripple and peak current
(tests/data/spice/README.md), so the tolerances below are almost all ours to
spend: DC within 0.3 %, ripple rms within 3 % where ripple exceeds 1 mV, and
rectifier peak and rms currents within 3 %.
"""

from __future__ import annotations

import pytest
from spice_support import circuit_names, load_circuit, ngspice_or_skip, spice_references

from supplydesign.circuit.netlist import NOMINAL

try:
    from supplydesign.evaluation.analysis import evaluate
except ImportError:  # the lead engineer removes this guard once the solver has landed
    pytest.skip("solver not yet available", allow_module_level=True)

pytestmark = pytest.mark.ngspice

NAMES = circuit_names()

DC_REL = 3e-3
RIPPLE_REL = 3e-2
RIPPLE_FLOOR_V = 1e-3
CURRENT_REL = 3e-2


@pytest.fixture(scope="module")
def references(request):
    ngspice_or_skip()
    return spice_references(request.config)


@pytest.fixture(scope="module")
def ours():
    """Our figures of every test circuit, evaluated together (one batch per topology)."""
    designs = [load_circuit(name)[0] for name in NAMES]
    return dict(zip(NAMES, evaluate(designs, NOMINAL), strict=True))


@pytest.mark.parametrize("name", NAMES)
def test_rail_dc_and_ripple_match_ngspice(references, ours, name):
    ref, fig = references[name], ours[name]
    assert fig.converged
    for rail in ref["rails"]:
        mine = fig.rail(rail["name"])
        assert mine.dc_v == pytest.approx(rail["dc_v"], rel=DC_REL), rail["name"]
        if rail["ripple_rms_v"] > RIPPLE_FLOOR_V:
            assert mine.ripple_rms_v == pytest.approx(rail["ripple_rms_v"], rel=RIPPLE_REL), \
                rail["name"]


@pytest.mark.parametrize("name", NAMES)
def test_rectifier_currents_match_ngspice(references, ours, name):
    ref, fig = references[name], ours[name]
    assert fig.rectifier.peak_a == pytest.approx(ref["rectifier"]["peak_a"], rel=CURRENT_REL)
    assert fig.rectifier.rms_a == pytest.approx(ref["rectifier"]["rms_a"], rel=CURRENT_REL)
    assert fig.transformer.rms_a == pytest.approx(ref["transformer"]["rms_a"], rel=CURRENT_REL)
