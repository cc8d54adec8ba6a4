"""The ``frontshift`` command: the shift products, headless.

Each sub-command lives in its own module of this package with two functions,
``add_parser(subparsers)`` and ``run(args) -> int``; :data:`COMMANDS` lists the
modules in the order ``--help`` shows them. Bad input raises
:class:`kit.errors.FrontshiftError`; :func:`main` turns it into one line
``error: ...`` on stderr and exit status 2, never a traceback.
"""

import argparse
import sys

from kit import CAUTION, __version__
from kit.cli import arrivals, fronts, rerun, section, shift
from kit.errors import FrontshiftError

__all__ = ["COMMANDS", "main", "build_parser"]

#: sub-command modules, in the order --help lists them
COMMANDS = [fronts, arrivals, section, shift, rerun]


class _Parser(argparse.ArgumentParser):
    """argparse, but a usage mistake is one ``error:`` line and exit 2."""

    def error(self, message):
        sys.stderr.write(f"error: {message} (see '{self.prog} --help')\n")
        raise SystemExit(2)


def build_parser():
    """Build the argument parser with every sub-command in :data:`COMMANDS`."""
    parser = _Parser(
        prog="frontshift",
        description="Objective fronts, cross-sections and site arrival tables "
        "from CF NetCDF model runs.",
        epilog=CAUTION,
    )
    parser.add_argument("--version", action="version", version=f"frontshift {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    sub.required = True
    for module in COMMANDS:
        module.add_parser(sub)
    return parser


def main(argv=None):
    """Run the command line; return the exit status (0 ok, 2 bad input)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except FrontshiftError as exc:
        sys.stderr.write(f"error: {exc}\n")
        return 2
    except KeyboardInterrupt:
        sys.stderr.write("error: interrupted; products already written are kept\n")
        return 130
