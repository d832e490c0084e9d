"""The package's layers: imports point down only, and ``import supplydesign`` stays light.

Every ``import`` and ``from ... import`` of every module is read with :mod:`ast`,
including those inside functions (the lazy imports that keep the command line
fast are imports all the same), and resolved to the module it names.
"""

from __future__ import annotations

import ast
import os
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = "supplydesign"
ROOT = Path(__file__).resolve().parent.parent / PACKAGE

#: The layers, bottom first: a module may import its own layer and those below it.
#: The package's ``__init__`` imports nothing by statement (its API is lazy) and
#: is the bottom; ``__main__`` only starts the command line and is the top.
LAYERS: tuple[tuple[str, ...], ...] = (
    ("", "errors", "units", "writefiles", "cautions", "design"),
    ("io",),
    ("parts",),
    ("circuit",),
    ("evaluation",),
    ("synth",),
    ("report",),
    ("cli",),
    ("__main__",),
)
LAYER_OF = {name: depth for depth, names in enumerate(LAYERS) for name in names}

#: Heavy packages that ``import supplydesign`` must not load (the command line's
#: ``--help`` answers at once; each command imports what it needs).
HEAVY = ("numpy", "scipy", "matplotlib", "pymoo", "pint", "rich", "numba")


def module_name(path: Path, root: Path = ROOT) -> tuple[str, bool]:
    """Dotted module name of a file under the package, and whether it is a package."""
    parts = list(path.relative_to(root.parent).with_suffix("").parts)
    is_package = parts[-1] == "__init__"
    if is_package:
        parts.pop()
    return ".".join(parts), is_package


def is_module(dotted: str, root: Path) -> bool:
    """Whether a dotted name of the package is a module or package file under ``root``."""
    path = root.parent.joinpath(*dotted.split("."))
    return path.with_suffix(".py").is_file() or (path / "__init__.py").is_file()


def imported_modules(path: Path, root: Path = ROOT) -> list[tuple[int, str]]:
    """(line, dotted module) of every import of the package's own modules in a file."""
    name, is_package = module_name(path, root)
    here = name.split(".") if is_package else name.split(".")[:-1]
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = here[: len(here) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            for a in node.names:  # ``from . import plots`` names a module
                sub = f"{target}.{a.name}"
                found.append((node.lineno, sub if is_module(sub, root) else target))
    return [(line, m) for line, m in found if m == PACKAGE or m.startswith(PACKAGE + ".")]


def layer(module: str) -> int:
    """The layer of a dotted module name of the package (its first component)."""
    parts = module.split(".")
    top = parts[1] if len(parts) > 1 else ""
    if top not in LAYER_OF:
        raise KeyError(f"{module}: {top!r} is in no layer of LAYERS; add it there")
    return LAYER_OF[top]


def upward_imports(root: Path = ROOT) -> list[str]:
    """Every import of a module from a higher layer, as 'file:line: a imports b'."""
    bad = []
    for path in sorted(root.rglob("*.py")):
        name, _ = module_name(path, root)
        for line, target in imported_modules(path, root):
            if layer(target) > layer(name):
                bad.append(f"{path.relative_to(root.parent)}:{line}: {name} imports {target}")
    return bad


def test_every_module_belongs_to_a_layer():
    for path in ROOT.rglob("*.py"):
        layer(module_name(path)[0])


def test_no_import_runs_up_the_layers():
    assert upward_imports() == []


def test_an_upward_import_is_caught(tmp_path):
    # The check itself can fail: a small package with one import down the layers
    # and one, inside a function, up them.
    pkg = tmp_path / PACKAGE
    (pkg / "circuit").mkdir(parents=True)
    (pkg / "__init__.py").write_text("")
    (pkg / "design.py").write_text("")
    (pkg / "circuit" / "__init__.py").write_text("")
    (pkg / "circuit" / "steady.py").write_text(
        "from ..design import Design\n\n\ndef f():\n    from ..synth.run import x\n")
    assert upward_imports(pkg) == [
        f"{PACKAGE}/circuit/steady.py:5: {PACKAGE}.circuit.steady imports {PACKAGE}.synth.run"]


@pytest.mark.parametrize("source, expected", [
    ("from ..parts.eseries import next_down", "supplydesign.parts.eseries"),
    ("from . import cases", "supplydesign.evaluation.cases"),
    ("from . import cases, stress", "supplydesign.evaluation.stress"),
    ("from .. import __version__", "supplydesign"),
    ("import supplydesign.units", "supplydesign.units"),
    ("import numpy", None),
])
def test_imports_resolve_to_modules(tmp_path, source, expected):
    root = tmp_path / PACKAGE
    pkg = root / "evaluation"
    pkg.mkdir(parents=True)
    for name in ("cases", "stress"):
        (pkg / f"{name}.py").write_text("")
    (pkg / "worstcase.py").write_text(source + "\n")
    found = imported_modules(pkg / "worstcase.py", root)
    assert (found[-1] if found else (1, None)) == (1, expected)


def test_import_supplydesign_stays_light():
    code = ("import sys, supplydesign, supplydesign.cli; "
            f"print(','.join(m for m in {HEAVY!r} if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, cwd=ROOT.parent)
    assert out.stdout.strip() == ""


def test_help_stays_light():
    """`supplydesign --help` (and a command's --help) loads none of the heavy modules,
    the compiler of the solver's inner loop (numba) least of all."""
    for args in (["--help"], ["evaluate", "--help"]):
        code = ("import sys, contextlib, io\n"
                "from supplydesign.cli import main\n"
                "with contextlib.redirect_stdout(io.StringIO()):\n"
                "    try:\n"
                f"        main({args!r})\n"
                "    except SystemExit:\n"
                "        pass\n"
                f"print(','.join(m for m in {HEAVY!r} if m in sys.modules))")
        out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                             check=True, cwd=ROOT.parent)
        assert out.stdout.strip() == "", args


def test_public_api_names_resolve():
    import supplydesign

    for name in supplydesign.__all__:
        assert getattr(supplydesign, name) is not None, name
    assert supplydesign.synthesize.__name__ == "synthesize"
    assert "designs" in supplydesign.SynthResult.__dataclass_fields__


def test_one_blas_thread_unless_the_environment_says_otherwise():
    code = ("import os, supplydesign, numpy; "
            "print(os.environ['OPENBLAS_NUM_THREADS'], os.environ['OMP_NUM_THREADS'])")
    env = {k: v for k, v in os.environ.items()
           if k not in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS")}
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True,
                         check=True).stdout.split()
    assert out == ["1", "1"]
    env["OPENBLAS_NUM_THREADS"] = "2"
    out = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True,
                         check=True).stdout.split()
    assert out == ["2", "1"]
