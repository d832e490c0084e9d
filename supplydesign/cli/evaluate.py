"""Command ``supplydesign evaluate``: the figures of complete design files.

Registered by :mod:`supplydesign.cli`; heavy imports stay inside the command.
"""

from __future__ import annotations

from . import export as cli_export


def add_parsers(sub) -> None:
    """Add the ``evaluate`` subcommand to an argparse subparsers object."""
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
    ev.add_argument("--details", action="store_true",
                    help="the full tables of every design also when there are more than "
                         "three (otherwise a summary of one row per design)")
    ev.add_argument("--nominal-only", action="store_true",
                    help="skip the worst cases, switch-on and discharge (faster)")
    cli_export.add_evaluate_options(ev)


def cmd_evaluate(args) -> int:
    import json

    from ..errors import UserError
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
    from ..evaluation.cases import HIGH_MAINS_FULL_LOAD, IDLE, NOMINAL, solve_cases
    from ..evaluation.heatlife import fuses_of, heat_life, suggest_fuses

    wc = None
    if args.nominal_only:
        cases = solve_cases(designs, (NOMINAL, IDLE, HIGH_MAINS_FULL_LOAD), args.steps)
        full, idle = cases[NOMINAL.name].figures(), cases[IDLE.name].figures()
        hl = heat_life(designs, cases[NOMINAL.name].arrays)
        fs = suggest_fuses(designs, cases[HIGH_MAINS_FULL_LOAD.name].arrays)
    else:
        from ..evaluation.worstcase import analyse

        wc = analyse(designs, steps=args.steps)
        full, idle = wc.cases["nominal"].figures(), wc.cases["idle"].figures()
        hl, fs = heat_life(designs, wc.cases["nominal"].arrays), fuses_of(wc)
    if not args.quiet:
        from functools import partial

        from rich.console import Console

        from ..report import heatlife as heat_report
        from ..report.console import render_evaluation
        from ..report.summary_console import SUMMARY_ABOVE, render_summary
        from ..report.worstcase_console import render_worst_cases

        console = Console()
        if len(designs) > SUMMARY_ABOVE and not args.details:
            from ..evaluation.stress import checks

            render_summary(console, designs, full,
                           None if wc is None else partial(checks, wc))
        else:
            for b, (d, f, i) in enumerate(zip(designs, full, idle, strict=True)):
                worst = None if wc is None else partial(render_worst_cases, wc=wc, b=b)
                heat = partial(heat_report.render, design=d, hl=hl, b=b, fs=fs)
                render_evaluation(console, d, f, i, worst=worst, heat=heat)
    if args.json:
        from ..report.heatlife import heat_life_json
        from ..report.worstcase_json import worst_case_json

        objs = [evaluation_json(f, i, None if wc is None else worst_case_json(wc, b),
                                heat=heat_life_json(d, hl, fs, b))
                for b, (d, f, i) in enumerate(zip(designs, full, idle, strict=True))]
        if len(objs) == 1:
            text = json.dumps(objs[0], indent=2)
        else:  # a list, one design per line (indenting many designs costs more than solving)
            text = "[\n" + ",\n".join(json.dumps(o) for o in objs) + "\n]"
        write_text_atomic(args.json, text + "\n", force=args.force)
    if args.spice:
        from ..circuit.spice import write_spice

        write_spice(designs[0], args.spice, force=args.force)
    if args.plots:
        cli_export.evaluate_plots(args, designs, wc)
    return 1 if not all(f.converged for f in full) else 0


COMMANDS = {"evaluate": cmd_evaluate}
