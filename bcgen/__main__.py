"""``python -m bcgen`` and the ``bcgen`` console script.

:func:`console` notes SIGINT and SIGTERM before anything else is imported, so that a
Ctrl-C in the first moments of a command is a clean stop too (see :mod:`bcgen.cli.stop`).
"""

import signal


def console() -> None:
    """Entry point of the ``bcgen`` console script."""

    def note(signum, frame) -> None:
        note.noted.append(signum)

    note.noted = []
    for signum in (signal.SIGINT, signal.SIGTERM):
        if signal.getsignal(signum) in (signal.default_int_handler, signal.SIG_DFL):
            signal.signal(signum, note)
    from bcgen.cli import console_main, stop

    stop.hold_at_start(note)
    console_main()


if __name__ == "__main__":
    console()
