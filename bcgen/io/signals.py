"""Signals that wait: SIGINT and SIGTERM are held while the netCDF library is mid-call.

Python runs a signal handler between two bytecodes of the main thread. Were the
handler to raise while the netCDF/HDF5 library is half-way through a write on that
thread, the clean-up that follows (closing and deleting the file) would tear down the
library's state under it, which can end in a crash (SIGSEGV, "free(): invalid
pointer") after the clean message. :func:`held_signals` instead notes a signal that
arrives inside its block and delivers it when the block ends, once the library call
has returned; the previous handler then runs as it would have (raising
``KeyboardInterrupt``, or the command line's ``Terminated``).

Outside the main thread signals cannot arrive (Python delivers them to the main
thread only), so the block does nothing there.
"""

from __future__ import annotations

import contextlib
import signal
import threading
from collections.abc import Iterator

_HELD = (signal.SIGINT, signal.SIGTERM)


@contextlib.contextmanager
def held_signals() -> Iterator[None]:
    """Hold SIGINT and SIGTERM for the duration of the block; deliver them after it."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    pending: list[int] = []
    previous = {}

    def note(signum, frame) -> None:
        if signum not in pending:
            pending.append(signum)

    try:
        for signum in _HELD:
            previous[signum] = signal.signal(signum, note)
    except ValueError:  # pragma: no cover - no signals here (an embedded interpreter)
        for signum, handler in previous.items():
            signal.signal(signum, handler)
        yield
        return
    try:
        yield
    finally:
        for signum, handler in previous.items():
            signal.signal(signum, handler)
        for signum in pending:
            handler = previous[signum]
            if callable(handler):
                handler(signum, None)
            elif handler == signal.SIG_DFL and signum == signal.SIGINT:
                raise KeyboardInterrupt
            elif handler == signal.SIG_DFL:
                signal.raise_signal(signum)
