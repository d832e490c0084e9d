"""Command ``supplydesign spread``: many builds of one design, each part within its
tolerance; yield, percentiles, drivers and part stresses.

Registered by :mod:`supplydesign.cli`; heavy imports stay inside the command.
"""

from __future__ import annotations

from . import export as cli_export

HELP = "draw many builds of one design within the parts' tolerances: yield and what drives it"


def add_parsers(sub) -> None:
    """Add the ``spread`` subcommand to an argparse subparsers object."""
    sp = sub.add_parser("spread", help=HELP, description=HELP + ". Tolerances come from the "
                        "design file, the catalog, the E-series of a value or a stated "
                        "default; the report says which.")
    sp.add_argument("design", metavar="DESIGN.toml")
    sp.add_argument("--builds", type=int, default=2000, help="builds to draw (default 2000)")
    sp.add_argument("--seed", type=int, default=1, help="random seed (same seed, same builds)")
    sp.add_argument("--fixed-mains", action="store_true",
                    help="hold the mains at nominal: the spread of the parts alone")
    sp.add_argument("--json", metavar="OUT.json", help="write the figures as JSON")
    sp.add_argument("--report", metavar="OUT.html",
                    help="write a self-contained page with tables and pictures")
    sp.add_argument("--catalog", metavar="DIR", help="parts catalog directory to add")
    sp.add_argument("--steps", type=int, default=512,
                    help="solver steps per mains period, at least")
    sp.add_argument("--force", action="store_true", help="overwrite existing output files")
    sp.add_argument("--quiet", action="store_true", help="no console report")
    cli_export.add_evaluate_options(sp)


def _check_outputs(args) -> None:
    """Refuse, before the long run, to overwrite an output without --force."""
    import os

    from ..errors import UserError

    for key, path in (("--json", args.json), ("--report", args.report)):
        if path and os.path.exists(path) and not args.force:
            raise UserError("exists already; give --force to overwrite it", file=path, key=key)


def cmd_spread(args) -> int:
    import json
    import os

    from rich.console import Console
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    from ..errors import UserError
    from ..evaluation.spread import run_spread, summarise
    from ..io.designfile import load_design, read_catalog_setting
    from ..parts import load_catalog
    from ..report.spread_console import render_spread
    from ..report.spread_json import spread_json
    from ..writefiles import write_text_atomic

    if args.builds < 2:
        raise UserError("expected at least 2 builds", key="--builds")
    if args.seed < 0:
        raise UserError("expected a seed of 0 or more", key="--seed")
    if args.steps < 64:
        raise UserError("expected at least 64 steps per period", key="--steps")
    _check_outputs(args)
    extra = args.catalog or read_catalog_setting(args.design)
    catalog = load_catalog(extra=extra) if extra else load_catalog()
    design = load_design(args.design, catalog=catalog)
    console = Console()
    with Progress(TextColumn("[bold]building[/]"), BarColumn(), TextColumn("{task.description}"),
                  TimeElapsedColumn(), console=console, transient=True,
                  disable=args.quiet) as bar:
        task = bar.add_task("", total=args.builds)

        def progress(stage, done, total):
            bar.update(task, completed=done, total=total, description=stage)

        sp = run_spread(design, catalog, builds=args.builds, seed=args.seed, steps=args.steps,
                        fixed_mains=args.fixed_mains, progress=progress)
    summary = summarise(sp)
    if not args.quiet:
        render_spread(console, design, summary)
    if args.json:
        write_text_atomic(args.json, json.dumps(spread_json(summary), indent=2) + "\n",
                          force=args.force)
    figs = None
    if args.plots or args.report:
        from ..report.spread_plots import spread_figures

        label = os.path.splitext(os.path.basename(args.design))[0]
        figs = spread_figures(sp, summary, label)
    written = []
    if args.plots:
        from ..report.pictures import save_all

        written += save_all(figs, args.plots, args.plot_format, force=args.force)
    if args.report:
        from ..report.plots import svg_markup
        from ..report.spread_html import spread_report_html

        svgs = {name: svg_markup(fig, f"f{k}") for k, (name, fig) in enumerate(figs.items())}
        write_text_atomic(args.report, spread_report_html(design, summary, svgs, tuple(figs)),
                          force=args.force)
    if written and not args.quiet:
        console.print(f"wrote {len(written)} pictures in {os.path.abspath(args.plots)}")
    return 0 if summary.converged else 1


COMMANDS = {"spread": cmd_spread}
