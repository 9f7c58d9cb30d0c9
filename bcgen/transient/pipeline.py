"""Compute the next chunk while the last one is written: a producer thread and a bounded queue.

The values of a transient run are computed (numpy, in a worker thread) while the
main thread writes and compresses the previous chunk through the netCDF
library, which releases the GIL while it works; on two cores a build then takes
about the longer of the two, not their sum.

Rules that keep this safe:

- only the main thread calls the netCDF library (HDF5 is not thread-safe); the
  worker only computes with numpy, and inputs that are files (grids, orbit
  tables) are read before it starts;
- the queue holds at most :data:`QUEUE_SIZE` chunks, so at most
  ``QUEUE_SIZE + 2`` chunks exist at any time (one being computed, the queued
  ones, one being written): the memory stays bounded whatever the run's length;
- Ctrl-C arrives in the main thread; the worker is told to stop, finishes the
  chunk it is on and ends; an error in the worker is raised again in the main
  thread.

Messages, in order, for each file: ``("start", job, n_steps, first_year_bounds)``,
then ``("chunk", n_years, bounds, values)`` for each chunk, then ``("end", job)``.
"""

from __future__ import annotations

import queue
import threading
from collections.abc import Iterator, Sequence

import numpy as np

from bcgen.io.signals import held_signals

#: Chunks that may wait, computed, for the writer.
QUEUE_SIZE = 1
_POLL_S = 0.1


class _Stopped(Exception):
    """The main thread asked the worker to stop."""


class ChunkProducer:
    """Compute the chunks of a list of files in a worker thread; iterate over the messages.

    Parameters
    ----------
    jobs : sequence
        Files to build, each with ``product``, ``first_year`` and ``last_year``.
    series : dict
        Product name → :class:`~bcgen.transient.series.Series`.
    threaded : bool
        False computes in the calling thread, one chunk at a time (same messages).
    """

    def __init__(self, jobs: Sequence, series: dict, *, threaded: bool = True) -> None:
        self.jobs = list(jobs)
        self.series = series
        self.threaded = threaded
        self._queue: queue.Queue = queue.Queue(maxsize=QUEUE_SIZE)
        self._stop = threading.Event()
        self._thread: threading.Thread | None = None

    def _messages(self) -> Iterator[tuple]:
        for job in self.jobs:
            series = self.series[job.product]
            first = np.array([job.first_year])
            yield ("start", job, series.steps(job.first_year, job.last_year), series.bounds(first))
            chunk = series.chunk_years()
            for lo in range(job.first_year, job.last_year + 1, chunk):
                if self._stop.is_set():
                    raise _Stopped
                years = np.arange(lo, min(lo + chunk, job.last_year + 1))
                yield ("chunk", years.size, series.bounds(years), series.compute(years))
            yield ("end", job)

    def _run(self) -> None:
        try:
            for message in self._messages():
                self._put(message)
                del message
            self._put(("done",))
        except _Stopped:
            return
        except BaseException as exc:  # noqa: BLE001 - handed to the main thread and raised there
            try:
                self._put(("error", exc))
            except _Stopped:
                return

    def _put(self, message: tuple) -> None:
        while True:
            if self._stop.is_set():
                raise _Stopped
            try:
                self._queue.put(message, timeout=_POLL_S)
                return
            except queue.Full:
                continue

    def __iter__(self) -> Iterator[tuple]:
        """Yield the messages in order; an error of the worker is raised here."""
        if not self.threaded:
            yield from self._messages()
            return
        self._thread = threading.Thread(
            target=self._run, name="bcgen-transient-compute", daemon=True
        )
        with held_signals():  # an interrupt lands after the start, in the loop below
            self._thread.start()
        while True:
            try:
                message = self._queue.get(timeout=_POLL_S)
            except queue.Empty:
                if not self._thread.is_alive() and self._queue.empty():
                    raise RuntimeError("the compute thread ended without a result") from None
                continue
            if message[0] == "done":
                return
            if message[0] == "error":
                raise message[1]
            yield message
            del message

    def close(self) -> None:
        """Stop the worker and wait for it (it finishes the chunk it is computing)."""
        self._stop.set()
        while True:  # unblock a worker waiting to put
            try:
                self._queue.get_nowait()
            except queue.Empty:
                break
        if self._thread is not None and self._thread.ident is not None:
            while self._thread.is_alive():  # even through a second Ctrl-C
                try:
                    self._thread.join(_POLL_S)
                except KeyboardInterrupt:
                    continue

    def __enter__(self) -> ChunkProducer:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
