"""Commands ``supplydesign parts`` (list and check catalogs) and ``supplydesign rate``.

Registered by :mod:`supplydesign.cli`; heavy imports stay inside the commands.
"""

from __future__ import annotations

import os
import sys

PARTS_HELP = "list the parts catalog in use, or check a catalog of your own"
RATE_HELP = "choose the cheapest adequate part ratings of a design and write it anew"


def add_parsers(sub) -> None:
    """Add the ``parts`` and ``rate`` subcommands to an argparse subparsers object."""
    pa = sub.add_parser("parts", help=PARTS_HELP, description=PARTS_HELP + ". The built-in "
                        "catalogs are invented demo data.")
    pa.add_argument("--catalog", metavar="DIR", help="your catalog directory, laid over the "
                    "built-in one (same id: replaced; new id: added)")
    pa.add_argument("--family", metavar="F", help="only this family: capacitors, chokes, "
                    "resistors, transformers or rectifiers")
    pa.add_argument("--kind", choices=("valve", "silicon"), help="only rectifiers of this kind")
    pa.add_argument("--value", metavar="Q", help='only parts with this value, such as "47 uF" '
                    'or "450 V"')
    pa.add_argument("--check", metavar="DIR", help="validate the catalog in DIR (over the "
                    "built-in one) and print a one-line summary")

    ra = sub.add_parser("rate", help=RATE_HELP, description=RATE_HELP + " (reasons as comments).")
    ra.add_argument("design", metavar="DESIGN.toml")
    ra.add_argument("--out", metavar="NEW.toml", required=True, help="the rated design file")
    ra.add_argument("--catalog", metavar="DIR", help="parts catalog directory to add (default: "
                    "the design's catalog key, if any)")
    ra.add_argument("--margin", default="10 %", help="capacitor voltage margin over the worst "
                    "case (default 10 %%)")
    ra.add_argument("--catalog-only", action="store_true",
                    help="leave out the E-series parts of the demo price model")
    ra.add_argument("--steps", type=int, default=512, help="solver steps per mains period")
    ra.add_argument("--force", action="store_true", help="overwrite an existing output file")
    ra.add_argument("--quiet", action="store_true", help="no console report")


def _family_name(text: str | None) -> str | None:
    from ..errors import UserError
    from ..parts.schema import FAMILIES, family

    if text is None:
        return None
    try:
        return family(text.strip().lower()).name
    except KeyError:
        names = ", ".join(f.filename.removesuffix(".csv") for f in FAMILIES.values())
        raise UserError(f"expected one of {names}; got {text!r}", key="--family") from None


def cmd_parts(args) -> int:
    from ..parts import describe_catalog, load_catalog
    from ..parts.query import check_user_catalog, with_value

    if args.check:
        print(check_user_catalog(args.check))
        return 0
    from rich.console import Console

    from ..report.layout import print_sheet

    fam = _family_name(args.family)
    if args.kind is not None:
        if fam not in (None, "rectifier"):
            from ..errors import UserError

            raise UserError("applies to rectifiers only; drop --kind or use --family "
                            "rectifiers", key="--kind")
        fam = "rectifier"
    catalog = load_catalog(extra=args.catalog)
    if args.value:
        catalog = with_value(catalog, args.value)
    console = Console()
    source = "built-in catalogs (invented demo data)"
    if args.catalog:
        source += f" + {args.catalog}"
    console.print(f"Parts catalog: {source}")
    listings = [x for x in describe_catalog(catalog, fam, args.kind) if x.rows]
    for listing in listings:
        print_sheet(console, _sheet(listing))
    if not listings:
        console.print("No parts match.")
    console.print("Demo data is invented: check every rating against the data sheet of the "
                  "part you buy.")
    return 0


def _sheet(listing):
    """A catalog listing as a sheet: the id repeated in every table a narrow terminal
    needs, the description folding at spaces, every value whole on its line."""
    from ..report.layout import Column, Sheet

    cols = [Column(h, "left", key=j == 0, text=h == "description")
            for j, h in enumerate(listing.headers)]
    sheet = Sheet(f"{listing.family}s ({len(listing.rows)})", cols)
    for cells in listing.rows:
        sheet.add_row(*cells)
    return sheet


def _rate_header(source: str, margin: float) -> str:
    from ..cautions import CAUTION_LINES
    from ..io.tomlwrite import SIGNIFICANT_FIGURES

    return "\n".join((
        f"Ratings chosen by `supplydesign rate` from {source}: the cheapest adequate parts, "
        f"capacitors rated {100 * margin:g} % above their worst voltage (high mains, no load "
        "included), resistors at twice their dissipation, chokes for their full-load DC "
        f"current. Values to {SIGNIFICANT_FIGURES} significant figures.",
        "", "CAUTION:", *CAUTION_LINES))


def cmd_rate(args) -> int:
    from dataclasses import replace

    from ..errors import UserError
    from ..io.designfile import load_design, read_catalog_setting
    from ..io.tomlwrite import save_design
    from ..parts import load_catalog
    from ..parts.rating import RatingRules, candidate_pool
    from ..synth.rate import rate_evaluated
    from ..units import parse_quantity

    margin = parse_quantity(args.margin, "fraction", key="--margin")
    if not 0 <= margin < 1:
        raise UserError(f"expected a margin from 0 % to below 100 %, got {args.margin!r}",
                        key="--margin")
    if args.steps < 64:
        raise UserError("expected at least 64 steps per period", key="--steps")
    if os.path.exists(args.out) and not args.force:
        raise UserError("exists already; give --force to overwrite it", file=args.out)
    extra = args.catalog or read_catalog_setting(args.design)
    catalog = load_catalog(extra=extra)
    design = load_design(args.design, catalog=catalog)
    if extra is not None and design.catalog is None:
        design = replace(design, catalog=os.path.abspath(extra))
    rules = RatingRules(voltage_margin=margin, model_parts=not args.catalog_only)
    rated, nominal, _ = rate_evaluated(design, candidate_pool(catalog, rules), rules,
                                       steps=args.steps)
    save_design(rated.design, args.out, force=args.force, comments=rated.comments(),
                header=_rate_header(os.path.basename(args.design), margin))
    if not args.quiet:
        _print_rated(rated)
    for rail, element in rated.unmet:
        print(f"supplydesign: rail {rail!r} {element}: {rated.reasons[(rail, element)]}; "
              "left as given", file=sys.stderr)
    return 1 if rated.unmet or not nominal.converged else 0


def _print_rated(rated) -> None:
    from rich.console import Console

    from ..report.layout import Column, Sheet, print_sheet

    sheet = Sheet("Chosen ratings", [Column("rail", "left", key=True), Column("part", "left"),
                                     Column("why", "left", text=True)])
    for (rail, element), text in rated.reasons.items():
        sheet.add_row(rail, element, text)
    console = Console()
    print_sheet(console, sheet)
    console.print(f"Chosen parts: {rated.price:.2f} {rated.currency or ''}".rstrip())


COMMANDS = {"parts": cmd_parts, "rate": cmd_rate}
