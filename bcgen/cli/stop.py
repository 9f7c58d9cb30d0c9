"""One clean stop of the ``bcgen`` command on SIGINT or SIGTERM, whatever the moment.

The first SIGINT (Ctrl-C) or SIGTERM (a batch scheduler's time limit) is turned into an
exception in the main thread: ``KeyboardInterrupt``, or :class:`Terminated` for SIGTERM,
so that the clean-up of the command runs (temporary files deleted, the folder's lock
released) and it exits with 130 or 143 after one line. Four moments would spoil that
if the exception were raised there, and the stop waits for the next safe one instead:

- **an import in progress** (the first Ctrl-C usually lands in one: the command imports
  numpy, xarray and the netCDF library as it goes). An exception inside a C extension's
  initialisation comes out as another error (numpy's "Importing the numpy C-extensions
  failed") or leaves a half-initialised module; the stop waits until the import is done;
- **a destructor** (``__del__``, such as a NetCDF reader's file manager closing its file)
  or a weakref callback: Python prints an exception raised there as "Exception ignored
  in ..." with a traceback and drops it, so the stop would be lost. The stop waits
  until the destructor has returned; should an exception escape into one anyway (a
  callback found by no frame), :func:`_unraisable` catches it, prints nothing and stops
  again a moment later;
- **a call into the file-reading libraries** (xarray's backends, netCDF4, h5py): an
  exception there can leave a half-built object, such as a file manager without its
  reference counter, whose destructor later prints a traceback, or a file half closed;
  the stop waits until the call has returned to bcgen (the same rule as
  :func:`bcgen.io.signals.held_signals` for writes);
- **a signal already ignored**: CPython prints "Signal 15 ignored due to race
  condition" when a signal that arrived before its handler became ``SIG_IGN`` is run
  afterwards. The handler therefore stays installed for the whole command and is
  deaf (does nothing) after the first stop, rather than being replaced by ``SIG_IGN``;
  :func:`ignore_until_exit` sets ``SIG_IGN`` only once every arrived signal has run.

Waiting is done by a timer thread that sends the stop again to the main thread
(``_thread.interrupt_main``) every :data:`RETRY_SECONDS` until it is raised at a safe
moment. Blocks that hold signals (:func:`bcgen.io.signals.held_signals`, around calls
into the netCDF library) call the handler once they end.
"""

from __future__ import annotations

import _thread
import signal
import sys
import threading

#: How often a stop that waits for a safe moment is tried again, seconds.
RETRY_SECONDS = 0.01


class Terminated(KeyboardInterrupt):
    """SIGTERM arrived: raised in the main thread so that Ctrl-C's clean-up runs too."""


class _State:
    signum: int | None = None  # the signal of the stop (the first one handled)
    armed = False  # the command's clean-up is in place: a stop may be raised
    raised = False  # the stop is on its way up the stack as an exception
    caught = False  # the command line has caught it (or the command has returned)
    retrying = False
    hook = None  # sys.unraisablehook before the command began


_STATE = _State()


#: Modules whose code opens, reads and closes files through the netCDF/HDF5 libraries.
LIBRARY_IO = ("xarray.backends", "netCDF4", "h5netcdf", "h5py")


def _unsafe(frame) -> bool:
    """Tell whether raising in ``frame`` would be lost, break an import or a file object."""
    while frame is not None:
        code = frame.f_code
        if code.co_name == "__del__" or code.co_filename.startswith("<frozen importlib"):
            return True
        if str(frame.f_globals.get("__name__", "")).startswith(LIBRARY_IO):
            return True
        frame = frame.f_back
    return False


def _retry() -> None:
    _STATE.retrying = False
    if not _STATE.caught and _STATE.signum is not None:
        _thread.interrupt_main(_STATE.signum)


def _retry_soon() -> None:
    if _STATE.retrying:
        return
    _STATE.retrying = True
    timer = threading.Timer(RETRY_SECONDS, _retry)
    timer.daemon = True
    timer.start()


def on_signal(signum, frame) -> None:
    """Handle SIGINT and SIGTERM during a command (see the module's notes)."""
    if _STATE.caught or _STATE.raised:
        return  # deaf: the first stop is being cleaned up, or the command is done
    if _STATE.signum is None:
        _STATE.signum = signum
    if not _STATE.armed:
        return  # still starting: raised by arm()
    if _unsafe(frame if frame is not None else sys._getframe(1)):
        _retry_soon()
        return
    _STATE.raised = True
    raise Terminated if _STATE.signum == signal.SIGTERM else KeyboardInterrupt


def _unraisable(unraisable) -> None:
    """Stop again when the stop was dropped in a destructor or a callback; print nothing."""
    if isinstance(unraisable.exc_value, KeyboardInterrupt) and _STATE.raised:
        if not _STATE.caught:
            _STATE.raised = False
            _retry_soon()
        return
    (_STATE.hook or sys.__unraisablehook__)(unraisable)


def begin() -> None:
    """Start a fresh stop for one command: signals are noted, not yet raised (see :func:`arm`)."""
    _STATE.signum, _STATE.armed, _STATE.raised = None, False, False
    _STATE.caught = _STATE.retrying = False
    if sys.unraisablehook is not _unraisable:
        _STATE.hook = sys.unraisablehook
    sys.unraisablehook = _unraisable


def started() -> bool:
    """Tell whether :func:`begin` ran and the command has not ended yet."""
    return sys.unraisablehook is _unraisable and not _STATE.caught


def arm() -> None:
    """Let stops be raised from now on; raise one noted while the command was starting."""
    _STATE.armed = True
    if _STATE.signum is not None and not _STATE.raised:
        _STATE.raised = True
        raise Terminated if _STATE.signum == signal.SIGTERM else KeyboardInterrupt


def end() -> None:
    """End the command (in-process use): deaf from now on, the unraisable hook given back."""
    caught()
    if sys.unraisablehook is _unraisable:
        sys.unraisablehook = _STATE.hook or sys.__unraisablehook__


def caught() -> None:
    """Mark the stop (or the command's own end) as reached: later signals do nothing."""
    _STATE.caught = True


def hold_at_start(early=None) -> None:
    """Note SIGINT and SIGTERM from the first moment of the console script on.

    Installed before the command's modules are imported, so that a signal landing
    during those imports is not Python's default (a traceback, or death by SIGTERM):
    it is raised as a clean stop once the command's clean-up is in place (:func:`arm`).

    Parameters
    ----------
    early : callable, optional
        A handler installed earlier still (by :func:`bcgen.__main__.console`, before this
        module was imported), with the signals it noted in its ``noted`` list.
    """
    if threading.current_thread() is not threading.main_thread() or started():
        return
    begin()
    noted = list(getattr(early, "noted", ()))
    if noted:
        _STATE.signum = noted[0]
    for signum in (signal.SIGINT, signal.SIGTERM):
        if signal.getsignal(signum) in (signal.default_int_handler, signal.SIG_DFL, early):
            signal.signal(signum, on_signal)
    if early is not None and early.noted[len(noted):] and _STATE.signum is None:
        _STATE.signum = early.noted[0]  # arrived while the handlers were being swapped


def _run_pending() -> None:
    """Do nothing: entering a Python function, CPython runs the handlers of arrived signals."""


def ignore_until_exit() -> None:
    """Ignore SIGINT and SIGTERM for the rest of the process (its exit), without a race.

    The signals are blocked, any that arrived before are run (by :func:`on_signal`,
    which is deaf by now), then set to ``SIG_IGN`` (which drops blocked ones, POSIX)
    and unblocked: none can reach the interpreter's shutdown.
    """
    caught()
    held = {signal.SIGINT, signal.SIGTERM}
    signal.pthread_sigmask(signal.SIG_BLOCK, held)
    _run_pending()
    for signum in held:
        if signal.getsignal(signum) is on_signal:
            signal.signal(signum, signal.SIG_IGN)
    signal.pthread_sigmask(signal.SIG_UNBLOCK, held)
