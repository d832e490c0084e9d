"""Command ``supplydesign bom`` and the picture and report options of evaluate and synth.

Registered by :mod:`supplydesign.cli`; heavy imports (matplotlib above all) stay
inside the functions.
"""

from __future__ import annotations

import os
import sys

BOM_HELP = "write the bill of materials of complete designs as CSV"
FORMATS = ("png", "svg")


def add_parsers(sub) -> None:
    """Add the ``bom`` subcommand to an argparse subparsers object."""
    bo = sub.add_parser("bom", help=BOM_HELP, description=BOM_HELP + ": part ids, values, "
                        "ratings, quantities, unit and total prices, currency; the fuses "
                        "suggested for each design close its list (a worst-case evaluation "
                        "of each design, a few seconds).")
    bo.add_argument("designs", nargs="+", metavar="DESIGN.toml")
    bo.add_argument("--out", metavar="BOM.csv", help="the CSV file (default: print it)")
    bo.add_argument("--catalog", metavar="DIR", help="parts catalog directory to add")
    bo.add_argument("--force", action="store_true", help="overwrite an existing output file")
    bo.add_argument("--no-fuses", action="store_true",
                    help="leave out the fuses (no evaluation: instant)")


def _plot_options(p) -> None:
    p.add_argument("--plots", metavar="DIR", help="write pictures into DIR (created if missing)")
    p.add_argument("--plot-format", choices=FORMATS, default="png",
                   help="picture file format (default png)")


def add_evaluate_options(ev) -> None:
    """``--plots DIR`` and ``--plot-format`` of evaluate."""
    _plot_options(ev)


def add_synth_options(sp) -> None:
    """``--plots DIR``, ``--plot-format``, ``--no-report`` and ``--worst-cases`` of synth."""
    _plot_options(sp)
    sp.add_argument("--no-report", action="store_true",
                    help="leave out report.html (the page with tables and pictures)")
    sp.add_argument("--worst-cases", action="store_true",
                    help="switch-on and output impedance pictures of every picked design, not "
                         "only the balanced pick (runs their worst-case analysis: slower)")


def cmd_bom(args) -> int:
    from ..io.designfile import load_design
    from ..report.bom import bom_csv
    from ..report.runfiles import unique_labels

    catalog = None
    if args.catalog:
        from ..parts import load_catalog

        catalog = load_catalog(extra=args.catalog)
    designs = [load_design(path, catalog=catalog) for path in args.designs]
    labels = [os.path.basename(p) for p in args.designs]
    if len(set(labels)) < len(labels):
        labels = unique_labels(args.designs)
    fuses = None
    if not args.no_fuses:
        from ..evaluation.heatlife import fuses_of
        from ..evaluation.worstcase import analyse
        from ..report.heatlife import bom_fuses

        fs = fuses_of(analyse(designs))
        fuses = [bom_fuses(d, fs, b) for b, d in enumerate(designs)]
    if not args.out and sys.stdout.isatty():  # a person reads it: tables for the width
        from rich.console import Console

        from ..report.bom import bom_sheet
        from ..report.layout import print_sheet

        console = Console()
        for b, (label, design) in enumerate(zip(labels, designs, strict=True)):
            print_sheet(console, bom_sheet(label, design, None if fuses is None else fuses[b]))
        console.print("[dim]As CSV: give --out FILE, or send the output to a pipe or file.[/]")
        return 0
    text = bom_csv(list(zip(labels, designs, strict=True)), fuses)
    if args.out:
        from ..writefiles import write_text_atomic

        write_text_atomic(args.out, text, force=args.force)
    else:
        sys.stdout.write(text)
    return 0


def evaluate_plots(args, designs, wc=None) -> list[str]:
    """The pictures of ``evaluate --plots``: ripple and rectifier current of every design,
    and switch-on and output impedance where the worst cases ``wc`` were analysed."""
    from ..report.pictures import worst_case_pictures
    from ..report.runfiles import unique_labels, write_design_plots

    switch_on = impedance = None
    if wc is not None:
        switch_on, impedance = worst_case_pictures(designs, wc=wc)
    return write_design_plots(designs, unique_labels(args.designs), args.plots,
                              plot_format=args.plot_format, force=args.force,
                              steps=args.steps, switch_on=switch_on, impedance=impedance)


def synth_outputs(args, result, console=None) -> list[str]:
    """The files of a synthesis beyond the design files: ``bom.csv`` and ``report.html``
    in ``--out`` and the pictures in ``--plots``."""
    from ..report.pictures import picked, worst_case_pictures
    from ..report.runfiles import write_synth_outputs

    switch_on = impedance = None
    report = bool(args.out) and not args.no_report
    if (report or args.plots) and result.designs:
        # the balanced pick always; every pick on request (a worst-case analysis each)
        idx = picked(result) if args.worst_cases else [result.picks["balanced"][0]]
        traces, curves = worst_case_pictures([result.designs[i].design for i in idx])
        switch_on, impedance = dict(zip(idx, traces, strict=True)), dict(zip(idx, curves,
                                                                            strict=True))
    written = write_synth_outputs(result, args.out, plot_dir=args.plots,
                                  plot_format=args.plot_format, report=report,
                                  force=args.force, seed=args.seed, switch_on=switch_on,
                                  impedance=impedance)
    if console is not None and written:
        names = sorted({os.path.basename(p) for p in written if not p.endswith(FORMATS)})
        pics = sum(p.endswith(FORMATS) for p in written)
        console.print(f"wrote {', '.join(names) or 'no report'}"
                      + (f" and {pics} pictures in {os.path.abspath(args.plots)}" if pics
                         else ""))
    return written


COMMANDS = {"bom": cmd_bom}
