"""File execution: a catalogue file of any size, chunk by chunk, to a new file written atomically,
with a read-ahead and a write-behind thread and optionally worker processes.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .. import flags as F
from ..catalog.profiles import infos_from_table
from ..stagemap._store import enabled as map_cache_enabled
from ..stages import STAGES
from .chunk import chunk_tally, classify_one, rows_of
from .convert import arrow_infos, writer_columns
from .options import make_options, resolve_options
from .threads import ReadAhead, WriteBehind
from .workers import Received, pool_context, resolve_workers, worker_init, worker_task

def classify_file(input_path, output_path, *, chunk_rows: int | None = None, overwrite: bool = False,
                  progress: bool = False, input_format: str | None = None, output_format: str | None = None,
                  workers=1, threads="auto", **options) -> dict:
    """Classify a catalogue file into a new file, chunk by chunk, atomically.

    Parameters
    ----------
    input_path, output_path : path-like
        Formats from the suffixes unless given. The output may not be the input.
    chunk_rows : int, optional
        Rows per chunk (default :data:`hrstage.catalog.DEFAULT_CHUNK_ROWS`); peak memory follows it
        for Parquet, CSV and FITS input and Parquet or CSV output (``docs/catalog.md``). The next
        chunk is read and the previous one written in background threads while one is classified
        (about three chunks in memory).
    overwrite : bool
        Replace an existing output.
    progress : bool
        Show a progress bar (tqdm) on standard error.
    workers : int or "auto", default 1
        Worker processes classifying chunks in parallel (``"auto"``: one per usable core). This
        process reads, keeps the order and writes; at most two chunks per worker are in flight, so
        memory grows with ``workers x chunk_rows``; Arrow results come back through files in a
        temporary folder (system temporary directory), removed at the end. The result is the same,
        byte for byte, as with one process (the Monte Carlo stream of a chunk depends only on its first row's index). With
        the stage maps' on-disk cache (the default) every chunk is classified by the workers; with
        the cache off the first chunk is classified here before the workers start, so that they
        inherit its stage maps.
    threads : int or "auto", default "auto"
        With one process: chunks classified at the same time in threads of this process (numpy
        releases the interpreter lock in its loops; on an idle 2-core machine two threads classified
        a 2 M-row catalogue's chunks ~1.5x faster). ``"auto"``: one per idle core
        (:func:`~hrstage.engine.workers.idle_cores`), so a busy machine gets one. The first chunk is
        classified alone (it loads the stage maps). One more chunk is held per extra thread. The
        result is the same, byte for byte, with any number of threads.
    **options
        As for :func:`classify_table`.

    Returns
    -------
    dict
        ``rows``, ``stages`` (count per stage), ``flagged`` (rows with a flag other than the
        no-metallicity note), ``sptype_conflicts``, ``mapping`` (text), ``notes``, ``output``,
        ``workers`` (processes used).
    """
    import shutil
    import tempfile
    from collections import deque
    from concurrent.futures import ThreadPoolExecutor

    from ..catalog import DEFAULT_CHUNK_ROWS, ChunkWriter, count_rows, format_of, iter_chunks
    from ..catalog.atomic import check_output_path
    from ..catalog.streaming import iter_arrow_chunks

    inp, out = Path(input_path), Path(output_path)
    in_fmt = format_of(inp, input_format)
    format_of(out, output_format, option="--out-format")
    check_output_path(out, overwrite=overwrite, inputs=[inp])
    chunk_rows = DEFAULT_CHUNK_ROWS if chunk_rows is None else int(chunk_rows)
    n_workers = resolve_workers(workers)
    n_threads = resolve_workers(threads, what="threads") if n_workers == 1 else 1
    opts = make_options(source=inp.name, **options)
    total = count_rows(inp, in_fmt)
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=total, unit="rows", unit_scale=True, desc=f"hrstage {inp.name}", leave=False)
    counts = np.zeros(len(STAGES), dtype=np.int64)
    tally = {"flagged": 0, "conflicts": 0, "rows": 0}
    quiet_bits = F.NO_METALLICITY | F.NO_EXTINCTION
    stage_code = {st: i for i, st in enumerate(STAGES)}
    if in_fmt in ("parquet", "csv"):        # Arrow end to end: no astropy Table per chunk
        attrs, chunks = iter_arrow_chunks(inp, chunk_rows, in_fmt)
    else:
        attrs, chunks = None, iter_chunks(inp, chunk_rows, in_fmt)
    used = 1
    pool = spill = None
    # With the maps' on-disk cache, worker processes map what an earlier run or a sibling built, so
    # every chunk goes to the workers (this process only reads and writes). Without it, the first
    # chunk is classified here, so that the forked workers inherit its maps instead of each
    # building them.
    first_here = not map_cache_enabled()
    io = ThreadPoolExecutor(2, thread_name_prefix="hrstage-io")
    compute = ThreadPoolExecutor(n_threads, thread_name_prefix="hrstage-compute") if n_threads > 1 else None
    computing: deque = deque()    # chunks being classified in the compute threads, in order
    ahead = ReadAhead(chunks, io)
    behind = WriteBehind(io)
    try:
        with ChunkWriter(out, output_format, overwrite=overwrite, inputs=[inp],
                         **writer_columns(opts.prefix)) as writer:

            def count(names, cnt, fl, n):
                for name, c in zip(names, cnt):
                    counts[stage_code[name]] += c
                tally["flagged"] += int(((fl & ~quiet_bits) != 0).sum())
                tally["conflicts"] += int(((fl & F.SPTYPE_CONFLICT) != 0).sum())
                tally["rows"] += n
                if bar is not None:
                    bar.update(n)

            def take(res):          # in the writing thread
                writer.write(res)
                count(*chunk_tally(res, opts.prefix))

            def take_from(async_result):    # in the writing thread: a worker's result, in order
                got = Received(async_result.get())
                try:
                    if got.kind == "csv":
                        text, names, header = got.table
                        writer.write_csv_text(text, names, got.tally[3], header=header)
                    else:
                        writer.write(got.table)
                    count(*got.tally)
                finally:
                    got.release()

            try:
                offset = 0
                pending: deque = deque()
                held = None     # the first chunk, until a second one shows the workers are worth starting
                for chunk in ahead:
                    if opts.mapping is None:
                        infos = arrow_infos(chunk, attrs) if attrs is not None else infos_from_table(chunk)
                        opts = resolve_options(infos, opts)
                    n = rows_of(chunk)
                    if compute is not None and offset > 0:
                        computing.append(compute.submit(classify_one, chunk, opts, offset, attrs))
                        while len(computing) >= n_threads:   # written in order, while others compute
                            behind.submit(take, computing.popleft().result())
                    elif pool is None and (n_workers == 1 or (offset == 0 and first_here)):
                        res = classify_one(chunk, opts, offset, attrs)   # here: builds the maps it needs
                        behind.submit(take, res)     # written while the next chunk is classified
                        del res
                    elif pool is None and held is None and offset == 0:
                        held = (chunk, offset)
                    else:
                        if pool is None:    # start the workers (after the first chunk's maps exist)
                            # no thread of ours may be inside pyarrow while the workers fork
                            behind.wait()
                            ahead.settle()
                            spill = tempfile.mkdtemp(prefix="hrstage-chunks-")
                            pool = pool_context().Pool(n_workers, initializer=worker_init,
                                                        initargs=(opts, attrs, spill, writer.format))
                            used = n_workers
                        if held is not None:
                            pending.append(pool.apply_async(worker_task, held))
                            held = None
                        pending.append(pool.apply_async(worker_task, (chunk, offset)))
                        while len(pending) >= 2 * n_workers:
                            behind.submit(take_from, pending.popleft())
                    offset += n
                    del chunk
                if held is not None:    # one chunk in all: classified here, no workers started
                    behind.submit(take, classify_one(held[0], opts, held[1], attrs))
                    held = None
                while computing:
                    behind.submit(take, computing.popleft().result())
                while pending:
                    behind.submit(take_from, pending.popleft())
                behind.wait()
                if offset == 0:     # no data rows (a header-only file): an empty tagged table
                    from ..catalog import read_table

                    empty = read_table(inp, in_fmt)
                    if opts.mapping is None:
                        opts = resolve_options(infos_from_table(empty), opts)
                    take(classify_one(empty, opts, 0, None))
            except BaseException:
                # let the thread finish the chunk it is writing before the writer is aborted
                behind.drain()
                raise
    finally:
        if compute is not None:    # chunks still being classified are finished, not written
            compute.shutdown(wait=True, cancel_futures=True)
        behind.drain()
        ahead.close()
        io.shutdown(wait=True, cancel_futures=True)
        if pool is not None:
            pool.terminate()
            pool.join()
        if spill is not None:
            shutil.rmtree(spill, ignore_errors=True)
        if bar is not None:
            bar.close()
    return {"rows": tally["rows"], "stages": {s: int(c) for s, c in zip(STAGES, counts)},
            "flagged": tally["flagged"], "sptype_conflicts": tally["conflicts"],
            "mapping": opts.mapping.describe() if opts.mapping else "",
            "notes": list(opts.mapping.notes) if opts.mapping else [], "output": str(out), "workers": used}


