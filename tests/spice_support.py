"""Helpers for the tests that run ngspice as an outside reference.

``ngspice_or_skip()`` skips a test when ngspice is missing, unless the
environment sets ``SUPPLYDESIGN_REQUIRE_NGSPICE=1`` (CI does), in which case a
missing ngspice fails the test.

``spice_references(config)`` runs every test circuit of ``tests/data/spice``
through ngspice once (in parallel subprocesses) and returns the measured
figures by circuit name. Results are kept for the session and in the pytest
cache dir, keyed by a hash of the netlist, of the ngspice version and of the
SPICE module's source, so a change of any of them runs ngspice again.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import subprocess
from concurrent.futures import ThreadPoolExecutor
from functools import lru_cache
from pathlib import Path

import pytest

from supplydesign.circuit import ngspice, spice, transient
from supplydesign.circuit.netlist import NOMINAL, Circuit, build
from supplydesign.design import Design
from supplydesign.io.designfile import load_design

REQUIRE_ENV = "SUPPLYDESIGN_REQUIRE_NGSPICE"
SPICE_DATA = Path(__file__).parent / "data" / "spice"

#: the reference run: relative tolerance and largest step (see data/spice/README.md)
REFERENCE_RELTOL = 1e-4
REFERENCE_STEP_S = 20e-6
#: margin kept before the earlier settle window [s]
KEEP_MARGIN_S = 0.05

_SESSION: dict[str, dict] = {}


def ngspice_or_skip() -> None:
    """Skip the calling test if ngspice is missing (fail instead when CI requires it)."""
    if shutil.which("ngspice") is not None:
        return
    if os.environ.get(REQUIRE_ENV) == "1":
        pytest.fail(f"ngspice is not installed, and {REQUIRE_ENV}=1 requires it")
    pytest.skip(f"ngspice is not installed (set {REQUIRE_ENV}=1 to make this a failure)")


def circuit_files() -> list[Path]:
    """The test circuits, sorted by name; an empty directory is an error."""
    files = sorted(SPICE_DATA.glob("*.toml"))
    if not files:
        raise FileNotFoundError(f"no test circuits in {SPICE_DATA}")
    return files


def circuit_names() -> list[str]:
    return [p.stem for p in circuit_files()]


def load_circuit(name: str) -> tuple[Design, Circuit]:
    """The design of test circuit ``name`` and its circuit in the nominal case."""
    design = load_design(SPICE_DATA / f"{name}.toml")
    return design, build([design], NOMINAL)


@lru_cache(maxsize=1)
def _ngspice_version() -> str:
    out = subprocess.run([ngspice.ngspice_path(), "--version"], capture_output=True, text=True,
                         check=False, timeout=30)
    lines = [ln for ln in (out.stdout + out.stderr).splitlines() if "ngspice-" in ln]
    return lines[0].strip() if lines else "unknown"


@lru_cache(maxsize=1)
def _code_hash() -> str:
    code = b"".join(Path(m.__file__).read_bytes() for m in (spice, ngspice))
    return hashlib.sha256(code).hexdigest()[:16]


#: circuits that settle more slowly than transient.settle_time_estimate allows [s of circuit
#: time]: a choke input below its critical inductance is damped only while its rectifier
#: conducts, and at 3.5 s its ringing still moves the peak current by 1.2e-3 (8 s: 4e-9);
#: a small reservoir ringing with its choke (half-wave) at 3 s is 17 % off on the last
#: rail's ripple (10 s: figures move 7e-8)
RUN_AT_LEAST_S = {"si_fw_light_choke": 8.0, "si_hw_small_reservoir_choke": 10.0}


def _plan(name: str) -> dict:
    """Run length, kept span and the cache key of one reference run."""
    design, circuit = load_circuit(name)
    t_stop = max(transient.settle_time_estimate(circuit), RUN_AT_LEAST_S.get(name, 0.0))
    keep = (ngspice.SETTLE_SHIFT_S + ngspice.WINDOW_PERIODS / design.mains.frequency_hz
            + KEEP_MARGIN_S)
    t_save = max(t_stop - keep, 0.0)
    text = spice.netlist(circuit, t_stop_s=t_stop, t_step_s=REFERENCE_STEP_S,
                         reltol=REFERENCE_RELTOL, t_save_s=t_save)
    digest = hashlib.sha256(f"{text}|{_ngspice_version()}|{_code_hash()}".encode()).hexdigest()
    return {"name": name, "circuit": circuit, "frequency_hz": design.mains.frequency_hz,
            "t_stop_s": t_stop, "t_save_s": t_save, "key": digest[:24]}


def _run(plan: dict) -> dict:
    result = ngspice.run_ngspice(plan["circuit"], t_stop_s=plan["t_stop_s"],
                                 t_step_s=REFERENCE_STEP_S, reltol=REFERENCE_RELTOL,
                                 timeout_s=120.0, t_save_s=plan["t_save_s"])
    figures = ngspice.measure_steady(result, plan["frequency_hz"])
    figures["runtime_s"] = result.runtime_s
    figures["t_stop_s"] = plan["t_stop_s"]
    figures["key"] = plan["key"]
    return figures


def spice_references(config: pytest.Config) -> dict[str, dict]:
    """Measured ngspice figures of every test circuit, by circuit name.

    Runs ngspice only for circuits whose result is neither in this session nor
    in the pytest cache under the same key.
    """
    cache = getattr(config, "cache", None)
    plans = [_plan(name) for name in circuit_names()]
    todo = []
    for plan in plans:
        name = plan["name"]
        if name in _SESSION and _SESSION[name]["key"] == plan["key"]:
            continue
        cached = cache.get(f"supplydesign/spice/{name}", None) if cache is not None else None
        if cached is not None and cached.get("key") == plan["key"]:
            _SESSION[name] = cached
        else:
            todo.append(plan)
    if todo:
        with ThreadPoolExecutor(max_workers=max(os.cpu_count() or 1, 1)) as pool:
            for plan, figures in zip(todo, pool.map(_run, todo), strict=True):
                _SESSION[plan["name"]] = figures
                if cache is not None:
                    cache.set(f"supplydesign/spice/{plan['name']}", figures)
    return {plan["name"]: _SESSION[plan["name"]] for plan in plans}
