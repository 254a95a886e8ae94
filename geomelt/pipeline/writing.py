"""Write computed windows to their GeoTIFFs on a few threads, next to the computation.

GDAL compresses a window while rasterio has released the GIL, so the files of
one window can be written at the same time as each other and as the next
windows are computed. Each file still has a single writer: a GDAL dataset
must not be shared between threads, and writing one file's windows in the
same order on every run keeps its bytes the same from run to run.
"""

from __future__ import annotations

import queue
import threading
from collections.abc import Callable, Mapping

import numpy as np
from rasterio.windows import Window

from geomelt.pipeline.engines import default_workers

__all__ = ["OutputSink", "write_threads"]

_STOP = object()


class OutputSink:
    """Hand each window's output arrays to writer threads.

    Parameters
    ----------
    writers : mapping of str to GeoTiffWriter
        Open writer of every output, by name.
    threads : int
        Writer threads (at least 1). Output ``i`` (in the order of ``writers``) is
        written by thread ``i % threads``, always in the order windows are put.
    inspect : callable, optional
        Called as ``inspect(name, values)`` on the writer thread of output ``name``
        after each window of it is written (running statistics). It is only ever
        called from that one thread for a given name.
    depth : int
        Windows a writer thread may lag behind :meth:`put` before ``put`` waits;
        bounds the memory held by windows waiting to be written.

    Notes
    -----
    The first error of a writer thread (a full disk, say) is raised again by the
    next :meth:`put` or by :meth:`close`; the other threads stop at their next
    window.
    """

    def __init__(
        self,
        writers: Mapping,
        threads: int = 1,
        inspect: Callable[[str, np.ndarray], None] | None = None,
        depth: int = 1,
    ):
        self._writers = dict(writers)
        self._inspect = inspect
        n = max(1, min(int(threads), max(1, len(self._writers))))
        names = list(self._writers)
        self._shares = [names[i::n] for i in range(n)]
        self._queues: list[queue.Queue] = [queue.Queue(maxsize=max(1, depth)) for _ in range(n)]
        self._error: BaseException | None = None
        self._failed = threading.Event()
        self._closed = False
        self._threads = [
            threading.Thread(target=self._drain, args=(i,), name=f"geomelt-write-{i}", daemon=True)
            for i in range(n)
        ]
        for t in self._threads:
            t.start()

    def _drain(self, i: int) -> None:
        share, q = self._shares[i], self._queues[i]
        while True:
            item = q.get()
            try:
                if item is _STOP:
                    return
                if self._failed.is_set():
                    continue  # keep taking windows so put() never blocks on a dead thread
                window, arrays = item
                for name in share:
                    values = arrays.get(name)
                    if values is None:
                        continue
                    self._writers[name].write(values, window)
                    if self._inspect is not None:
                        self._inspect(name, values)
            except BaseException as exc:  # re-raised in the thread that puts windows
                if self._error is None:
                    self._error = exc
                self._failed.set()
            finally:
                q.task_done()
                item = window = arrays = values = None

    def _raise_failure(self) -> None:
        if self._error is not None:
            raise self._error

    def put(self, window: Window, arrays: Mapping[str, np.ndarray]) -> None:
        """Queue one window's arrays (by output name) for writing; names without a
        writer are ignored."""
        self._raise_failure()
        item = (window, arrays)
        for q in self._queues:
            q.put(item)

    def flush(self) -> None:
        """Wait until every window put so far is written (the threads keep running);
        raise the first writer error."""
        for q in self._queues:
            q.join()
        self._raise_failure()

    def close(self) -> None:
        """Wait until every queued window is written; raise the first writer error."""
        self._closed = True
        for q in self._queues:
            q.put(_STOP)
        for t in self._threads:
            t.join()
        self._raise_failure()

    def abandon(self) -> None:
        """Stop the threads without raising (on the way out of a failed run); nothing to do
        after :meth:`close`."""
        if self._closed:
            return
        self._closed = True
        self._failed.set()
        for q in self._queues:
            try:
                q.put(_STOP, timeout=5.0)
            except queue.Full:
                pass
        for t in self._threads:
            t.join(timeout=30.0)


def write_threads(workers: int = 0) -> int:
    """Writer threads for a run with ``workers`` compute workers (0: one per core): as
    many as there are workers, since compressing runs outside the GIL."""
    return max(1, int(workers or 0) or default_workers())
