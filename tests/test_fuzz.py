"""Fuzzing: random valid designs never crash the evaluator or give silent NaN; random
corruptions of valid files never escape as anything but a one-line user error."""

from __future__ import annotations

import math
import os
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from strategies import designs

from supplydesign.errors import UserError
from supplydesign.evaluation.analysis import evaluate
from supplydesign.io.designfile import load_design

#: multiplies the number of examples (SUPPLYDESIGN_FUZZ_SCALE=10 for a deeper run by hand)
SCALE = max(1, int(os.environ.get("SUPPLYDESIGN_FUZZ_SCALE", "1")))

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = sorted((ROOT / "examples").glob("*.toml"))
#: the demo's brief, read as a brief (a design file with targets and "choose" left open)
BRIEFS = [ROOT / "supplydesign" / "data" / "demo-brief.toml"]


def _finite(fig) -> bool:
    values = [fig.rectifier.peak_a, fig.rectifier.rms_a, fig.transformer.rms_a]
    for r in fig.rails:
        values += [r.dc_v, r.ripple_rms_v, r.ripple_pp_v, r.peak_v]
    return all(math.isfinite(v) for v in values)


@settings(max_examples=40 * SCALE, deadline=None, suppress_health_check=[HealthCheck.too_slow])
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


@pytest.mark.parametrize("path,brief", [(p, False) for p in EXAMPLES] + [(p, True) for p in BRIEFS],
                         ids=[p.stem for p in EXAMPLES + BRIEFS])
def test_corrupted_files_fail_only_as_user_errors(path, brief, tmp_path):
    text = path.read_text()

    @settings(max_examples=60 * SCALE, deadline=None,
              suppress_health_check=[HealthCheck.function_scoped_fixture])
    @given(_mutations(text))
    def run(mutated):
        f = tmp_path / "mutated.toml"
        f.write_text(mutated, encoding="utf-8", errors="surrogateescape")
        try:
            load_design(f, brief=brief)
        except UserError as err:
            line = err.line()
            assert "\n" not in line and str(f) in line
    run()
