"""Command line: ``supplydesign evaluate|synth|demo|parts``.

Heavy imports (numpy, scipy, pint, rich, pymoo) happen inside the commands so
that ``supplydesign --help`` answers at once.
"""

from __future__ import annotations

import argparse
import sys

EXIT_USER = 2


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="supplydesign",
        description="Design and check the HT (B+) supply of valve amplifiers.",
        epilog="HT supplies carry lethal voltages; no figure from this tool makes a design safe.",
    )
    p.add_argument("--debug", action="store_true", help="show tracebacks for every error")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    ev = sub.add_parser("evaluate", help="compute the figures of complete design files")
    ev.add_argument("designs", nargs="+", metavar="DESIGN.toml")
    ev.add_argument("--json", metavar="OUT.json", help="write the figures as JSON")
    ev.add_argument("--spice", metavar="OUT.cir",
                    help="write a SPICE netlist of the (first) design for cross-checking")
    ev.add_argument("--catalog", metavar="DIR", help="parts catalog directory to add")
    ev.add_argument("--steps", type=int, default=512, help="solver steps per mains period")
    ev.add_argument("--force", action="store_true", help="overwrite existing output files")
    ev.add_argument("--quiet", action="store_true", help="no console report")
    return p


def _cmd_evaluate(args) -> int:
    import json

    from .analysis import IDLE, evaluate
    from .errors import UserError
    from .io.designfile import load_design
    from .report.export import evaluation_json
    from .writefiles import write_text_atomic

    catalog = None
    if args.catalog:
        from .parts import load_catalog

        catalog = load_catalog(extra=args.catalog)
    designs = []
    for path in args.designs:
        designs.append(load_design(path, catalog=catalog))
    if args.steps < 64:
        raise UserError("expected at least 64 steps per period", key="--steps")
    full = evaluate(designs, steps=args.steps)
    idle = evaluate(designs, IDLE, steps=args.steps)
    if not args.quiet:
        from rich.console import Console

        from .report.console import render_evaluation

        console = Console()
        for d, f, i in zip(designs, full, idle, strict=True):
            render_evaluation(console, d, f, i)
    if args.json:
        objs = [evaluation_json(f, i) for f, i in zip(full, idle, strict=True)]
        data = objs[0] if len(objs) == 1 else objs
        write_text_atomic(args.json, json.dumps(data, indent=2) + "\n", force=args.force)
    if args.spice:
        from .circuit.spice import write_spice

        write_spice(designs[0], args.spice, force=args.force)
    return 1 if not all(f.converged for f in full) else 0


COMMANDS = {"evaluate": _cmd_evaluate}


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    from .errors import UserError

    try:
        return COMMANDS[args.command](args)
    except UserError as err:
        if args.debug:
            raise
        print(f"supplydesign: {err.line()}", file=sys.stderr)
        return EXIT_USER
    except KeyboardInterrupt:
        print("supplydesign: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
