"""``python -m bcgen`` and the ``bcgen`` console script.

SIGINT and SIGTERM are noted from the moment this module is imported, before anything
else of the command is, so that a Ctrl-C in the first moments of a command is a clean
stop too (see :mod:`bcgen.cli.stop`). Only the command imports this module.
"""

import signal


def _note(signum, frame) -> None:
    _note.noted.append(signum)


_note.noted = []
for _signum in (signal.SIGINT, signal.SIGTERM):
    if signal.getsignal(_signum) in (signal.default_int_handler, signal.SIG_DFL):
        try:
            signal.signal(_signum, _note)
        except ValueError:  # imported outside the main thread: nothing to note there
            break


def console() -> None:
    """Entry point of the ``bcgen`` console script."""
    from bcgen.cli import console_main, stop

    stop.hold_at_start(_note)
    console_main()


if __name__ == "__main__":
    console()
