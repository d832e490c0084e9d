"""Commands ``supplydesign synth`` and ``supplydesign demo``: search a brief.

Registered by :mod:`supplydesign.cli`; heavy imports (rich, pymoo) stay inside
the commands.
"""

from __future__ import annotations

from . import export as cli_export

#: builds per design when --min-yield is given without --yield
MIN_YIELD_BUILDS = 500


def add_parsers(sub) -> None:
    """Add the ``synth`` and ``demo`` subcommands to an argparse subparsers object."""
    sy = sub.add_parser("synth", help="search a brief for its Pareto set of buildable designs")
    sy.add_argument("brief", metavar="BRIEF.toml")
    _synth_options(sy, out_required=True)
    de = sub.add_parser("demo", help="run synth on a built-in example brief")
    _synth_options(de, out_required=False)


def _synth_options(sp, out_required: bool) -> None:
    sp.add_argument("--out", metavar="DIR", required=out_required,
                    help="folder for pareto.json, pareto.csv and designs/")
    sp.add_argument("--seed", type=int, default=1, help="random seed (same seed, same result)")
    sp.add_argument("--workers", type=int, default=1, help="parallel evaluation processes")
    sp.add_argument("--catalog", metavar="DIR", help="parts catalog directory to add")
    sp.add_argument("--generations", type=int, default=None,
                    help="a fixed number of search generations (default: search until the "
                         "front of designs stops improving)")
    sp.add_argument("--time-limit", type=float, default=None, metavar="SECONDS",
                    help="stop the search after this long (default 45 s when it runs until "
                         "the front settles; none with --generations)")
    sp.add_argument("--population", type=int, default=96, help="candidates per generation")
    sp.add_argument("--objectives", default="hum_db,regulation_pct,peak,cost",
                    help="comma-separated subset of hum_db, regulation_pct, peak, cost")
    sp.add_argument("--force", action="store_true", help="overwrite existing output files")
    sp.add_argument("--show", type=int, default=25, help="designs listed in the console table")
    sp.add_argument("--yield", dest="yield_builds", type=int, default=0, metavar="N",
                    help="draw N builds of every shown design within the parts' tolerances "
                         "and report its yield")
    sp.add_argument("--min-yield", metavar="PERCENT",
                    help='keep only shown designs whose yield reaches this, e.g. "95%%" '
                         f"(with --yield N, else {MIN_YIELD_BUILDS} builds)")
    cli_export.add_synth_options(sp)


def cmd_synth(args, brief_path: str | None = None) -> int:
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
                             ("--population", args.population, 4),
                             ("--time-limit", args.time_limit, 1)):
        if value is not None and value < low:
            raise UserError(f"expected at least {low}", key=name)
    if args.out and not args.force and os.path.exists(os.path.join(args.out, "pareto.json")):
        raise UserError("holds the files of an earlier run; give --force to overwrite them "
                        "or choose another folder", file=args.out, key="--out")
    builds, least = _yield_options(args)
    extra = args.catalog or read_catalog_setting(path)
    catalog = load_catalog(extra=extra) if extra else load_catalog()
    brief = load_design(path, brief=True, catalog=catalog)
    options = SynthOptions(seed=args.seed, pop_size=args.population,
                           generations=args.generations, workers=args.workers,
                           objectives=objectives, time_limit_s=args.time_limit)
    console = Console()
    with Progress(TextColumn("[bold]searching[/]"), BarColumn(bar_width=20),
                  TimeElapsedColumn(), TextColumn("{task.description}"), console=console,
                  transient=True) as bar:
        task = bar.add_task("starting designs", total=1.0)

        def progress(status):
            fraction = status.fraction()
            bar.update(task, completed=fraction if fraction is not None else 0.0,
                       description=status.text())

        result = synthesize(brief, catalog, options, progress=progress)
    if builds:
        result = _yields(args, result, catalog, builds, least, console)
    if result.extra.get("interrupted"):
        console.print("[bold yellow]Interrupted: the designs below are the best found so far.[/]")
    elif result.extra.get("stopped"):
        style = "yellow" if result.extra.get("stop_reason") == "time limit" else "dim"
        console.print(f"[{style}]Search {result.extra['stopped']}.[/]")
    more = None
    if builds:
        from functools import partial

        from ..report.spread_console import render_yields

        more = partial(render_yields, result=result)
    render_synthesis(console, result, limit=args.show, more=more)
    if args.out:
        written = write_run(result, args.out, force=args.force, seed=args.seed)
        console.print(f"wrote {len(written)} files to {os.path.abspath(args.out)}")
    if args.out or args.plots:
        cli_export.synth_outputs(args, result, console)
    return 0 if result.designs else 3


def _yield_options(args) -> tuple[int, float | None]:
    """(builds per shown design, least yield or None) of --yield and --min-yield."""
    from ..errors import UserError
    from ..units import parse_quantity

    least = None
    if args.min_yield is not None:
        least = parse_quantity(args.min_yield, "fraction", key="--min-yield")
        if not 0.0 < least <= 1.0:
            raise UserError(f"expected a yield above 0 % and at most 100 %, got "
                            f"{args.min_yield!r}", key="--min-yield")
    builds = args.yield_builds or (MIN_YIELD_BUILDS if least is not None else 0)
    if args.yield_builds < 0 or 0 < builds < 2:
        raise UserError("expected at least 2 builds", key="--yield")
    return builds, least


def _yields(args, result, catalog, builds: int, least: float | None, console):
    """The yield of every shown design (synth.buildyield), with a progress bar."""
    from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

    from ..synth.buildyield import add_yields, keep_min_yield

    if not result.designs:
        return result
    with Progress(TextColumn("[bold]building[/]"), BarColumn(), TextColumn("{task.description}"),
                  TimeElapsedColumn(), console=console, transient=True) as bar:
        task = bar.add_task("", total=1)

        def progress(stage, done, total):
            bar.update(task, completed=done, total=total,
                       description=f"{builds} builds of every shown design")

        add_yields(result, catalog, builds=builds, seed=args.seed, limit=args.show,
                   progress=progress)
    return keep_min_yield(result, least) if least is not None else result


def cmd_demo(args) -> int:
    from importlib.resources import files

    brief = files("supplydesign") / "data" / "demo-brief.toml"
    return cmd_synth(args, brief_path=str(brief))


COMMANDS = {"synth": cmd_synth, "demo": cmd_demo}
