"""Command line: ``supplydesign evaluate|synth|demo|parts``.

Heavy imports (numpy, scipy, pint, rich, pymoo) happen inside the commands so
that ``supplydesign --help`` answers at once.
"""

from __future__ import annotations

import argparse
import sys

from . import export as cli_export
from . import parts as cli_parts

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
    ev.add_argument("--steps", type=int, default=512,
                    help="solver steps per mains period, at least (a fast charging loop gets more)")
    ev.add_argument("--force", action="store_true", help="overwrite existing output files")
    ev.add_argument("--quiet", action="store_true", help="no console report")
    ev.add_argument("--nominal-only", action="store_true",
                    help="skip the worst cases, switch-on and discharge (faster)")
    cli_export.add_evaluate_options(ev)
    cli_parts.add_parsers(sub)
    cli_export.add_parsers(sub)
    sy = sub.add_parser("synth", help="search a brief for its Pareto set of buildable designs")
    sy.add_argument("brief", metavar="BRIEF.toml")
    _synth_options(sy, out_required=True)
    de = sub.add_parser("demo", help="run synth on a built-in example brief")
    _synth_options(de, out_required=False)
    return p


def _synth_options(sp, out_required: bool) -> None:
    sp.add_argument("--out", metavar="DIR", required=out_required,
                    help="folder for pareto.json, pareto.csv and designs/")
    sp.add_argument("--seed", type=int, default=1, help="random seed (same seed, same result)")
    sp.add_argument("--workers", type=int, default=1, help="parallel evaluation processes")
    sp.add_argument("--catalog", metavar="DIR", help="parts catalog directory to add")
    sp.add_argument("--generations", type=int, default=30, help="search generations")
    sp.add_argument("--population", type=int, default=48, help="candidates per generation")
    sp.add_argument("--objectives", default="hum_db,regulation_pct,peak,cost",
                    help="comma-separated subset of hum_db, regulation_pct, peak, cost")
    sp.add_argument("--force", action="store_true", help="overwrite existing output files")
    sp.add_argument("--show", type=int, default=25, help="designs listed in the console table")
    cli_export.add_synth_options(sp)


def _cmd_synth(args, brief_path: str | None = None) -> int:
    import os

    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    from ..errors import UserError
    from ..io.designfile import load_design, read_catalog_setting
    from ..parts import load_catalog
    from ..report.synth_console import render_synthesis
    from ..synth.files import write_run
    from ..synth.run import SynthOptions, synthesize
    from ..synth.score import OBJECTIVES

    path = brief_path or args.brief
    objectives = tuple(o.strip() for o in args.objectives.split(",") if o.strip())
    bad = [o for o in objectives if o not in OBJECTIVES]
    if bad or not objectives:
        raise UserError(f"expected objectives among {', '.join(OBJECTIVES)}, got {bad or 'none'}",
                        key="--objectives")
    for name, value, low in (("--workers", args.workers, 1), ("--generations", args.generations, 1),
                             ("--population", args.population, 4)):
        if value < low:
            raise UserError(f"expected at least {low}", key=name)
    if args.out and not args.force and os.path.exists(os.path.join(args.out, "pareto.json")):
        raise UserError("holds the files of an earlier run; give --force to overwrite them "
                        "or choose another folder", file=args.out, key="--out")
    extra = args.catalog or read_catalog_setting(path)
    catalog = load_catalog(extra=extra) if extra else load_catalog()
    brief = load_design(path, brief=True, catalog=catalog)
    options = SynthOptions(seed=args.seed, pop_size=args.population,
                           generations=args.generations, workers=args.workers,
                           objectives=objectives)
    console = Console()
    with Progress(TextColumn("[bold]searching[/]"), BarColumn(), TextColumn("{task.description}"),
                  TimeElapsedColumn(), console=console, transient=True) as bar:
        task = bar.add_task("", total=options.generations)

        def progress(gen, total, best):
            if best is None:
                text = "no candidate meets the brief yet"
            else:
                text = (f"best: hum margin {-best[0]:.1f} dB, idle→full {best[1]:.1f} %, "
                        f"cost {best[3]:.2f}")
            bar.update(task, completed=gen, description=text)

        result = synthesize(brief, catalog, options, progress=progress)
    if result.extra.get("interrupted"):
        console.print("[bold yellow]Interrupted: the designs below are the best found so far.[/]")
    render_synthesis(console, result, limit=args.show)
    if args.out:
        written = write_run(result, args.out, force=args.force, seed=args.seed)
        console.print(f"wrote {len(written)} files to {os.path.abspath(args.out)}")
    if args.out or args.plots:
        cli_export.synth_outputs(args, result, console)
    return 0 if result.designs else 3


def _cmd_demo(args) -> int:
    from importlib.resources import files

    brief = files("supplydesign") / "data" / "demo-brief.toml"
    return _cmd_synth(args, brief_path=str(brief))


def _cmd_evaluate(args) -> int:
    import json

    from ..errors import UserError
    from ..evaluation.analysis import IDLE, evaluate
    from ..io.designfile import load_design
    from ..report.export import evaluation_json
    from ..writefiles import write_text_atomic

    catalog = None
    if args.catalog:
        from ..parts import load_catalog

        catalog = load_catalog(extra=args.catalog)
    designs = []
    for path in args.designs:
        designs.append(load_design(path, catalog=catalog))
    if args.steps < 64:
        raise UserError("expected at least 64 steps per period", key="--steps")
    wc = None
    if args.nominal_only:
        full = evaluate(designs, steps=args.steps)
        idle = evaluate(designs, IDLE, steps=args.steps)
    else:
        from ..evaluation.worstcase import analyse

        wc = analyse(designs, steps=args.steps)
        full, idle = wc.cases["nominal"].figures(), wc.cases["idle"].figures()
    if not args.quiet:
        from functools import partial

        from rich.console import Console

        from ..report.console import render_evaluation
        from ..report.worstcase_console import render_worst_cases

        console = Console()
        for b, (d, f, i) in enumerate(zip(designs, full, idle, strict=True)):
            worst = None if wc is None else partial(render_worst_cases, wc=wc, b=b)
            render_evaluation(console, d, f, i, worst=worst)
    if args.json:
        from ..report.worstcase_json import worst_case_json

        objs = [evaluation_json(f, i, None if wc is None else worst_case_json(wc, b))
                for b, (f, i) in enumerate(zip(full, idle, strict=True))]
        data = objs[0] if len(objs) == 1 else objs
        write_text_atomic(args.json, json.dumps(data, indent=2) + "\n", force=args.force)
    if args.spice:
        from ..circuit.spice import write_spice

        write_spice(designs[0], args.spice, force=args.force)
    if args.plots:
        cli_export.evaluate_plots(args, designs, wc)
    return 1 if not all(f.converged for f in full) else 0


COMMANDS = {"evaluate": _cmd_evaluate, "synth": _cmd_synth, "demo": _cmd_demo}
COMMANDS.update(cli_parts.COMMANDS)
COMMANDS.update(cli_export.COMMANDS)


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    from ..errors import UserError

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
