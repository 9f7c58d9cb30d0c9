"""The ``bcgen`` command: one entry point, one module per subcommand.

Each subcommand lives in ``bcgen/cli/<name>.py`` and exposes
``register(subparsers) -> argparse.ArgumentParser`` and ``run(args) -> int``.
Errors derived from :class:`bcgen.errors.BcgenError` are printed as one line
``bcgen: error: ...`` with their exit status (2 for bad input, 1 for a check
that failed by design); ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import warnings

from bcgen import __version__
from bcgen.errors import BcgenError, BcgenWarning

#: Subcommand modules, in the order ``bcgen --help`` lists them.
COMMANDS = ("build", "orbit", "months", "insolation", "convert", "validate", "transient", "plot")


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line and exit with status 2."""

    def error(self, message: str) -> None:  # noqa: D102
        self.exit(2, f"bcgen: error: {self.prog}: {message} (see '{self.prog} --help')\n")


def build_parser() -> argparse.ArgumentParser:
    """Return the top-level parser with every available subcommand registered."""
    parser = _Parser(
        prog="bcgen",
        description="Boundary conditions for paleoclimate model experiments.",
        epilog="example: bcgen build configs/demo.yaml -o out/",
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    parser.add_argument("--version", action="version", version=f"bcgen {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks on errors")
    parser.add_argument("-q", "--quiet", action="count", default=0, help="print less")
    parser.add_argument("-v", "--verbose", action="count", default=0, help="print more")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMANDS:
        try:
            module = importlib.import_module(f"bcgen.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name == f"bcgen.cli.{name}":
                continue
            raise
        sub_parser = module.register(sub)
        sub_parser.set_defaults(_run=module.run)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the ``bcgen`` command line; return the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help(sys.stderr)
        return 2
    with warnings.catch_warnings():
        warnings.simplefilter("default", BcgenWarning)
        warnings.showwarning = _show_warning  # restored when the block ends
        try:
            return int(args._run(args) or 0)
        except BcgenError as exc:
            if args.debug:
                raise
            print(f"bcgen: error: {_one_line(str(exc))}", file=sys.stderr)
            return exc.exit_status
        except KeyboardInterrupt:
            if args.debug:
                raise
            print("bcgen: interrupted; no partial output was left", file=sys.stderr)
            return 130
        except BrokenPipeError:
            # The reader of our output went away (`bcgen orbit ... | head`): not an error.
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            return 0


def _one_line(message: str) -> str:
    return " ".join(message.split())


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    print(f"bcgen: warning: {_one_line(str(message))}", file=file or sys.stderr)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
