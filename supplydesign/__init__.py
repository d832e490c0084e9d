"""supplydesign: design the HT (B+) supply of valve amplifiers.

Public API (imported lazily so that ``import supplydesign`` stays light)::

    from supplydesign import load_design, evaluate, IDLE
    design = load_design("amp.toml")
    full, = evaluate([design])

    from supplydesign import load_catalog, synthesize, SynthOptions
    catalog = load_catalog()
    brief = load_design("brief.toml", brief=True, catalog=catalog)
    result = synthesize(brief, catalog, SynthOptions(seed=1))   # a SynthResult

    from supplydesign import run_spread, summarise_spread
    spread = run_spread(design, catalog, builds=500, seed=1)   # builds within tolerances
    print(summarise_spread(spread).yield_)

HT supplies carry lethal voltages; no figure of this package makes a design safe.
"""

from __future__ import annotations

import os as _os

__version__ = "0.1.0"

# The solver multiplies many small matrices in batches; a BLAS thread pool gains nothing
# there and, on a machine whose cores are busy, its waiting threads made the search
# three to four times slower (measured: a 3000-candidate search took 50 s of CPU with
# OpenBLAS's default threads, 13 s with one). One thread per process, unless the
# environment says otherwise; it takes effect when numpy is first imported after this
# package (the command line always is). Parallel work: ``--workers``.
for _name in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    _os.environ.setdefault(_name, "1")

_LAZY = {
    "load_design": ("supplydesign.io.designfile", "load_design"),
    "dump_design": ("supplydesign.io.tomlwrite", "dump_design"),
    "save_design": ("supplydesign.io.tomlwrite", "save_design"),
    "readable": ("supplydesign.io.tomlwrite", "readable"),
    "evaluate": ("supplydesign.evaluation.analysis", "evaluate"),
    "IDLE": ("supplydesign.evaluation.analysis", "IDLE"),
    "OperatingCase": ("supplydesign.circuit.netlist", "OperatingCase"),
    "NOMINAL": ("supplydesign.circuit.netlist", "NOMINAL"),
    "Design": ("supplydesign.design", "Design"),
    "Figures": ("supplydesign.evaluation.figures", "Figures"),
    "synthesize": ("supplydesign.synth.run", "synthesize"),
    "SynthOptions": ("supplydesign.synth.run", "SynthOptions"),
    "SynthResult": ("supplydesign.synth.run", "SynthResult"),
    "run_spread": ("supplydesign.evaluation.spread", "run_spread"),
    "summarise_spread": ("supplydesign.evaluation.spread", "summarise"),
    "UserError": ("supplydesign.errors", "UserError"),
    "load_catalog": ("supplydesign.parts", "load_catalog"),
}

__all__ = sorted(_LAZY)


def __getattr__(name: str):
    if name in _LAZY:
        import importlib

        module, attr = _LAZY[name]
        return getattr(importlib.import_module(module), attr)
    raise AttributeError(f"module 'supplydesign' has no attribute {name!r}")
