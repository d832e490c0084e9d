"""Fuzzing: random valid designs never crash the evaluator or give silent NaN; random
corruptions of valid files never escape as anything but a one-line user error."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from strategies import designs

from supplydesign.analysis import evaluate
from supplydesign.errors import UserError
from supplydesign.io.designfile import load_design

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.toml"))


def _finite(fig) -> bool:
    values = [fig.rectifier.peak_a, fig.rectifier.rms_a, fig.transformer.rms_a]
    for r in fig.rails:
        values += [r.dc_v, r.ripple_rms_v, r.ripple_pp_v, r.peak_v]
    return all(math.isfinite(v) for v in values)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(designs())
def test_random_designs_converge_or_say_so(design):
    fig = evaluate([design], steps=128)[0]
    if fig.converged:
        assert _finite(fig), fig
    else:
        # not converged is allowed, but never silent: the figures carry the flag and reason
        assert fig.note, "a design that did not converge must say why"


def _mutations(text: str):
    lines = text.splitlines()
    return st.one_of(
        st.integers(0, len(lines) - 1).map(lambda i: "\n".join(lines[:i] + lines[i + 1:])),
        st.integers(0, len(text)).map(lambda i: text[:i]),
        st.tuples(st.integers(0, len(text)), st.text(min_size=1, max_size=8)).map(
            lambda t: text[:t[0]] + t[1] + text[t[0]:]),
        st.tuples(st.integers(0, len(text) - 1), st.integers(1, 6)).map(
            lambda t: text[:t[0]] + text[t[0] + t[1]:]),
        st.binary(min_size=1, max_size=64).map(lambda b: text + b.decode("latin-1")),
    )


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.stem for p in EXAMPLES])
def test_corrupted_files_fail_only_as_user_errors(path, tmp_path):
    text = path.read_text()

    @settings(max_examples=60, deadline=None,
              suppress_health_check=[HealthCheck.function_scoped_fixture])
    @given(_mutations(text))
    def run(mutated):
        f = tmp_path / "mutated.toml"
        f.write_text(mutated, encoding="utf-8", errors="surrogateescape")
        try:
            load_design(f)
        except UserError as err:
            line = err.line()
            assert "\n" not in line and str(f) in line
    run()
