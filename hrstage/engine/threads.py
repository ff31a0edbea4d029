"""The reader and writer threads of a file run: the next chunk is read, and the previous one
written, while the current one is classified (pyarrow's readers and writers release the GIL).
"""

from __future__ import annotations

class ReadAhead:
    """Iterate ``items`` with the next item fetched in a background thread while the caller works
    on the current one (pyarrow's readers release the GIL). One item ahead, in order; an exception
    of the source is raised, unchanged, where that item would have been handed out."""

    def __init__(self, items, pool):
        self._items = iter(items)
        self._pool = pool
        self._next = None
        self._started = False

    def _fetch(self):
        try:
            return False, next(self._items)
        except StopIteration:
            return True, None

    def __iter__(self):
        return self

    def __next__(self):
        if not self._started:
            self._started = True
            self._next = self._pool.submit(self._fetch)
        if self._next is None:
            raise StopIteration
        future, self._next = self._next, None
        done, item = future.result()
        if done:
            raise StopIteration
        self._next = self._pool.submit(self._fetch)
        return item

    def settle(self) -> None:
        """Wait until the background fetch (if any) has finished; its item is kept."""
        if self._next is not None:
            _wait_quietly(self._next)

    def close(self) -> None:
        """Wait for the fetch in flight, drop its item, close the source."""
        future, self._next = self._next, None
        if future is not None:
            _wait_quietly(future)
        close = getattr(self._items, "close", None)
        if close is not None:
            close()


class WriteBehind:
    """Run calls one at a time, in order, in a background thread; at most one runs while the caller
    prepares the next. :meth:`submit` and :meth:`wait` re-raise the exception of an earlier call
    unchanged (a failed write stops the run; nothing more is written)."""

    def __init__(self, pool):
        self._pool = pool
        self._future = None

    def submit(self, fn, *args) -> None:
        self.wait()
        self._future = self._pool.submit(fn, *args)

    def wait(self) -> None:
        future, self._future = self._future, None
        if future is not None:
            future.result()

    def drain(self) -> None:
        """Wait for the call in flight, ignoring its outcome (used when the run already failed)."""
        future, self._future = self._future, None
        if future is not None:
            _wait_quietly(future)


def _wait_quietly(future) -> None:
    from concurrent.futures import wait

    wait([future])


