"""Worker processes of a file run: how many, what each inherits, how a classified chunk comes back
(CSV text formatted in the worker, an Arrow IPC file in the run's spill folder, or a table).
"""

from __future__ import annotations

from ..errors import HrstageInputError
from .chunk import chunk_tally, classify_one
from .convert import is_arrow

def resolve_workers(workers, what: str = "workers") -> int:
    """Number of worker processes (or, ``what="threads"``, compute threads) for
    :func:`classify_file`: a positive integer, or ``"auto"`` (:func:`idle_cores`)."""
    if isinstance(workers, str):
        if workers.strip().lower() != "auto":
            try:
                workers = int(workers)
            except ValueError:
                raise HrstageInputError(f"{what} must be a positive whole number or 'auto', got {workers!r}") from None
        else:
            return idle_cores()
    if workers is None:
        return 1
    if isinstance(workers, float) and not workers.is_integer():
        raise HrstageInputError(f"{what} must be a whole number, got {workers}")
    workers = int(workers)
    if workers < 1:
        raise HrstageInputError(f"{what} must be >= 1 (or 'auto'), got {workers}")
    return workers


def idle_cores(busy=None) -> int:
    """The cores this process may run on (``os.sched_getaffinity`` where available) less those
    busy with other work, at least 1. ``busy``: the processes running or ready to run besides this
    one -- by default from ``/proc/loadavg`` (its running count, now), else the 1-minute load
    average (``os.getloadavg``), rounded.

    Worker processes pay only where cores are free: on a 2-core machine with other work running
    (load ~4), 2 workers took ~1.2x the time of one (2 M-row Parquet, benchmarks/bench_pipeline.py),
    since the reading and writing parent then competes with its own workers.
    """
    import os

    try:
        cores = len(os.sched_getaffinity(0))
    except AttributeError:  # pragma: no cover (macOS, Windows)
        cores = os.cpu_count() or 1
    if busy is None:
        busy = _busy_now()
    return max(1, min(cores, cores - int(round(busy))))


def _busy_now() -> float:
    import os

    try:
        with open("/proc/loadavg") as fh:
            running = int(fh.read().split()[3].split("/")[0])
        return max(0, running - 1)          # this process is one of them
    except (OSError, ValueError, IndexError):
        try:
            return os.getloadavg()[0]
        except (AttributeError, OSError):  # pragma: no cover (Windows)
            return 0.0


#: What a worker process of :func:`classify_file` needs: (options, attrs), set by the pool initializer
#: (inherited, not pickled, under the fork start method).
_WORKER_STATE: tuple | None = None


def worker_init(opts, attrs, spill, out_format):
    global _WORKER_STATE
    _WORKER_STATE = (opts, attrs, spill, out_format)


def worker_task(chunk, offset):
    """Classify one chunk in a worker; returns ``(kind, payload, tally)``.

    For a CSV output the worker also formats the rows (``"csv"``: the text, the column names, and
    whether the text starts with the header line, as for the first chunk), the slow part of CSV
    writing. Otherwise an Arrow result goes back as an Arrow IPC
    file in the run's spill folder (``"file"``: the parent memory-maps it; pickling ~300 bytes per
    row through a pipe was measured as the parent's main cost), an astropy Table as it is
    (``"table"``). ``tally`` is :func:`_chunk_tally` of the result.
    """
    import os

    opts, attrs, spill, out_format = _WORKER_STATE
    res = classify_one(chunk, opts, offset, attrs)
    tally = chunk_tally(res, opts.prefix)
    if out_format == "csv":
        from ..catalog.arrow import arrow_to_table
        from ..catalog.formats import arrow_csv, csv_supported, csv_text

        first = offset == 0     # the first chunk brings the header line
        if is_arrow(res) and csv_supported(res.schema):
            return "csv", (arrow_csv(res, header=first), list(res.schema.names), first), tally
        table = arrow_to_table(res) if is_arrow(res) else res
        return "csv", (csv_text(table, header=first), list(table.colnames), first), tally
    if spill is None or not is_arrow(res):
        return "table", res, tally
    import pyarrow as pa

    path = os.path.join(spill, f"chunk-{offset}.arrow")
    with pa.OSFile(path, "wb") as sink, pa.ipc.new_file(sink, res.schema) as ipc:
        ipc.write_table(res)
    return "file", path, tally


class Received:
    """A worker's result in the parent: the table, and the memory map to release after writing."""

    def __init__(self, item):
        kind, value, self.tally = item
        self.kind = kind
        self.path = self.source = None
        if kind in ("table", "csv"):
            self.table = value
            return
        import pyarrow as pa

        self.path = value
        self.source = pa.memory_map(value, "r")
        self.table = pa.ipc.open_file(self.source).read_all()

    def release(self):
        import os

        self.table = None
        if self.source is not None:
            self.source.close()
            os.unlink(self.path)


def pool_context():
    """``fork`` where the platform has it (children inherit the stage maps already built, copy on
    write), else ``spawn`` (each worker builds the maps it needs once)."""
    import multiprocessing as mp

    return mp.get_context("fork" if "fork" in mp.get_all_start_methods() else "spawn")


