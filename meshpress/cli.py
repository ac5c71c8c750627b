"""Command-line entry point: ``meshpress COMMAND ...``.

Each command lives in :mod:`meshpress.commands` as a module with
``add_parser(subparsers)`` and ``run(args) -> int``; add new ones to
:data:`COMMANDS`.  A user's mistake (:class:`InputError`) prints one line
``meshpress: error: ...`` and exits with status 2, never a traceback.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from . import __version__
from .errors import InputError

COMMANDS = ["loads", "compare", "uncertainty", "plan", "demo", "run", "diff", "view"]


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, status 2, like every other input error
        sys.stderr.write(f"meshpress: error: {message} (see '{self.prog} --help')\n")
        raise SystemExit(2)


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="meshpress",
        description="Pressure taps on a 3D car body -> lift, drag, pitching moment and axle split.",
        epilog="Signed axes: write --forward=-z (with '=') so the value is not read as an option.",
    )
    parser.add_argument("--version", action="version", version=f"meshpress {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMANDS:
        importlib.import_module(f".commands.{name}", __package__).add_parser(sub)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return 2
    try:
        return int(args.run(args) or 0)
    except InputError as exc:
        sys.stderr.write(f"meshpress: error: {exc}\n")
        return 2
    except BrokenPipeError:  # output piped into e.g. head
        return 0
    except KeyboardInterrupt:
        sys.stderr.write("meshpress: interrupted\n")
        return 130


if __name__ == "__main__":
    raise SystemExit(main())
