"""The ``bcgen`` command: one entry point, one module per subcommand.

Each subcommand lives in ``bcgen/cli/<name>.py`` and exposes
``register(subparsers) -> argparse.ArgumentParser`` and ``run(args) -> int``.
Errors derived from :class:`bcgen.errors.BcgenError` are printed as one line
``bcgen: error: ...`` with their exit status (2 for bad input, 1 for a check
that failed by design); ``--debug`` shows the traceback instead. An interrupt
(Ctrl-C) prints one line and exits with status 130. SIGTERM, which batch
schedulers send when a job reaches its time limit, is handled the same way
(temporary files deleted, completed files kept) and exits with status 143
(128 + 15, the shell's convention for a process ended by signal 15).

``-q``/``--quiet``, ``-v``/``--verbose`` and ``--debug`` are accepted before and
after the subcommand (``bcgen -q build ...`` and ``bcgen build -q ...``):
``-q`` drops the confirmation lines of commands that write files (``-qq`` also
drops warnings); ``-v`` adds the time taken, on stderr. Results (tables, JSON)
are printed whatever the level. bcgen prints no colour or other terminal
escapes, and progress bars only when stderr is a terminal.
"""

from __future__ import annotations

import argparse
import contextlib
import importlib
import os
import re
import signal
import sys
import threading
import time
import warnings

from bcgen import __version__
from bcgen.cli import stop
from bcgen.cli.stop import Terminated
from bcgen.errors import BcgenError, BcgenWarning, CheckFailed

#: Subcommand modules, in the order ``bcgen --help`` lists them.
COMMANDS = ("build", "orbit", "months", "insolation", "convert", "validate", "plot")

INTERRUPTED = "bcgen: interrupted; no partial output was left"
TERMINATED = "bcgen: terminated; no partial output was left"


@contextlib.contextmanager
def _sigterm_as_interrupt():
    """Turn SIGINT and SIGTERM into one clean stop for the duration of one command.

    See :mod:`bcgen.cli.stop`. SIGINT keeps its meaning when the shell had it ignored (a
    job started with ``&`` or ``nohup``): only a SIGINT handled by Python's default
    handler (or noted since the console script started) is taken over.
    """
    if threading.current_thread() is not threading.main_thread():
        yield  # signal handlers can only be set from the main thread
        return
    if not stop.started():
        stop.begin()
    previous_int = signal.getsignal(signal.SIGINT)
    if previous_int in (signal.default_int_handler, stop.on_signal):
        signal.signal(signal.SIGINT, stop.on_signal)
    previous = signal.signal(signal.SIGTERM, stop.on_signal)
    try:
        stop.arm()  # raises a stop that arrived while starting
        yield
    finally:
        if _CONSOLE:  # the process exits next: its work is done or cleaned up, stay deaf
            stop.ignore_until_exit()
        else:
            stop.end()
            signal.signal(signal.SIGTERM, previous)
            signal.signal(signal.SIGINT, previous_int)


def _interrupted(exc: KeyboardInterrupt) -> int:
    """Print the one line of an interrupt and return its exit status (130 or 143)."""
    stop.caught()  # from now on signals do nothing
    if isinstance(exc, Terminated):
        print(TERMINATED, file=sys.stderr)
        return 128 + signal.SIGTERM
    print(INTERRUPTED, file=sys.stderr)
    return 130


class _Parser(argparse.ArgumentParser):
    """An argument parser whose usage errors are one line and exit with status 2.

    Any word that starts with a minus sign and a digit is a value, not an option
    (bcgen has no option of that shape): ``--lat -60,-30`` and ``-1e3`` reach the
    value checks, and ``-6ka`` the epoch reader, instead of being taken for options.
    """

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self._negative_number_matcher = re.compile(r"^-\.?\d")

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
    _add_common_options(parser, "")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    registered = []
    for name in COMMANDS:
        try:
            module = importlib.import_module(f"bcgen.cli.{name}")
        except ModuleNotFoundError as exc:
            if exc.name == f"bcgen.cli.{name}":
                continue
            raise
        sub_parser = module.register(sub)
        _add_common_options(sub_parser, "sub_")
        sub_parser.set_defaults(_run=module.run)
        registered.append(name)
    parser.commands = tuple(registered)  # the subcommands available, in order
    return parser


def _add_common_options(parser: argparse.ArgumentParser, prefix: str) -> None:
    """``--debug``, ``-q`` and ``-v``; after the subcommand they land in ``sub_*`` (see main)."""
    group = parser.add_argument_group("common options (before or after the command)")
    group.add_argument("-q", "--quiet", dest=f"{prefix}quiet", action="count", default=0,
                       help="print less: no confirmation lines (-qq: no warnings either)")
    group.add_argument("-v", "--verbose", dest=f"{prefix}verbose", action="count", default=0,
                       help="print more: the time taken, on stderr")
    group.add_argument("--debug", dest=f"{prefix}debug", action="store_true",
                       help="show a traceback instead of the one-line error")


#: True when running as the ``bcgen`` console script (:func:`console_main`), which exits
#: right after :func:`main`: once the command has finished (or cleaned up after a stop),
#: signals stay ignored until the process has ended, so that a late Ctrl-C cannot land in
#: the interpreter's own shutdown (a traceback, or death by the signal).
_CONSOLE = False


def console_main() -> None:
    """Entry point of the ``bcgen`` console script: run :func:`main` and exit with its status."""
    global _CONSOLE
    _CONSOLE = True
    stop.hold_at_start()  # (again: the script may not have come through bcgen.__main__)
    status = main()
    if status in (130, 128 + signal.SIGTERM):
        # Interrupted: everything was cleaned up before the message was printed. Leave at
        # once, without the interpreter's shutdown, which would tear down the netCDF/HDF5
        # library under objects the interrupted frames still hold (a crash, SIGSEGV, after
        # the clean message).
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(status)
    sys.exit(status)


def main(argv: list[str] | None = None) -> int:
    """Run the ``bcgen`` command line; return the exit status."""
    status = None
    try:
        with _sigterm_as_interrupt():
            status = _main(argv)
    except KeyboardInterrupt as exc:
        # A signal that lands while the handlers are being reset, after the command has
        # returned: the command's own status stands if it had one (its outputs are complete);
        # otherwise it is the clean stop of any other interrupt.
        if status is None:
            return _interrupted(exc)
    return status


def _main(argv: list[str] | None) -> int:
    started = time.perf_counter()
    try:
        parser = build_parser()
        args = parser.parse_args(argv)
    except KeyboardInterrupt as exc:  # Ctrl-C or SIGTERM while starting up
        return _interrupted(exc)
    # Options given after the subcommand add to those given before it.
    args.quiet += getattr(args, "sub_quiet", 0)
    args.verbose += getattr(args, "sub_verbose", 0)
    args.debug = args.debug or getattr(args, "sub_debug", False)
    if not getattr(args, "_run", None):
        print(f"bcgen: error: no command given; expected one of {', '.join(parser.commands)} "
              "(see 'bcgen --help')", file=sys.stderr)
        return 2
    with warnings.catch_warnings():
        warnings.simplefilter("default", BcgenWarning)
        if args.quiet >= 2:
            warnings.simplefilter("ignore")
        warnings.showwarning = _warning_printer()  # restored when the block ends
        try:
            status = int(args._run(args) or 0)
        except BcgenError as exc:
            if args.debug:
                raise
            prefix = "check failed" if isinstance(exc, CheckFailed) else "error"
            print(f"bcgen: {prefix}: {_one_line(str(exc))}", file=sys.stderr)
            return exc.exit_status
        except KeyboardInterrupt as exc:  # Ctrl-C, or SIGTERM (Terminated)
            if args.debug:
                raise
            return _interrupted(exc)
        except BrokenPipeError:
            # The reader of our output went away (`bcgen orbit ... | head`): not an error.
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            return 0
    if args.verbose:
        print(f"bcgen: {args.command} took {time.perf_counter() - started:.2f} s",
              file=sys.stderr)
    return status


def _one_line(message: str) -> str:
    return " ".join(message.split())


def _warning_printer():
    """Return a ``warnings.showwarning`` that prints each warning's text once per command.

    The same fact can be warned of on several routes in one run (a spec's implausible
    solar constant by the spec reader, then by each insolation function it reaches).
    """
    shown: set[str] = set()

    def show(message, category, filename, lineno, file=None, line=None) -> None:
        text = _one_line(str(message))
        if text not in shown:
            shown.add(text)
            print(f"bcgen: warning: {text}", file=file or sys.stderr)

    return show


if __name__ == "__main__":  # pragma: no cover
    console_main()
