"""Command line: ``supplydesign evaluate|spread|parts|rate|bom|synth|demo``, one module per
group.

Heavy imports (numpy, scipy, pint, rich, pymoo) happen inside the commands so
that ``supplydesign --help`` answers at once.
"""

from __future__ import annotations

import argparse
import sys

from . import evaluate as cli_evaluate
from . import export as cli_export
from . import parts as cli_parts
from . import spread as cli_spread
from . import synth as cli_synth

EXIT_USER = 2


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="supplydesign",
        description="Design and check the HT (B+) supply of valve amplifiers.",
        epilog="HT supplies carry lethal voltages; no figure from this tool makes a design safe.",
    )
    p.add_argument("--debug", action="store_true", help="show tracebacks for every error")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    cli_evaluate.add_parsers(sub)
    cli_spread.add_parsers(sub)
    cli_parts.add_parsers(sub)
    cli_export.add_parsers(sub)
    cli_synth.add_parsers(sub)
    return p


COMMANDS = {**cli_evaluate.COMMANDS, **cli_spread.COMMANDS, **cli_parts.COMMANDS,
            **cli_export.COMMANDS, **cli_synth.COMMANDS}


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
