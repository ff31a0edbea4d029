"""Cost of our CSV text: :func:`hrstage.catalog.formats.arrow_csv` on a classified catalogue.

The table is hrstage's own output for ``--rows`` invented stars (the population of
``bench_pipeline.py``, with errors, so the stars get Monte Carlo probabilities; classified once,
into a temporary Parquet file), or the Parquet file given with ``--input``. Timed single-threaded,
in this process: medians over ``--repeats`` of CPU time (``time.process_time``) and wall time.

* default: ``arrow_csv`` beside pyarrow's own CSV writer on the same table (a floor: its text is
  not ours — numbers laid out otherwise, text always quoted);
* ``--before REV``: ``arrow_csv`` of ``hrstage/catalog/formats.py`` at git revision REV (loaded as
  a second module) beside the working tree's, repeats interleaved (before, after, before, ...),
  with the ratios and whether the two texts are byte-identical.

``python benchmarks/bench_csv.py --rows 100000 --before HEAD~1``
"""

from __future__ import annotations

import argparse
import io
import os
import tempfile
import time
from pathlib import Path

for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[var] = "1"

import numpy as np  # noqa: E402
from _bench_util import exec_module, git_show  # noqa: E402


def classified_table(rows: int, seed: int = 11):
    """hrstage's output (a pyarrow Table) for ``rows`` invented stars."""
    import pyarrow.parquet as pq
    from bench_pipeline import write_synthetic

    from hrstage.engine import classify_file

    with tempfile.TemporaryDirectory(prefix="bench_csv_") as tmp:
        src, dst = Path(tmp) / "in.parquet", Path(tmp) / "out.parquet"
        write_synthetic(src, rows, "parquet", seed=seed)
        classify_file(src, dst, overwrite=True)
        return pq.read_table(dst).combine_chunks()


def _timed(fn):
    c0, w0 = time.process_time(), time.perf_counter()
    out = fn()
    return out, time.process_time() - c0, time.perf_counter() - w0


def _line(label, cpu, wall, rows):
    c, w = float(np.median(cpu)), float(np.median(wall))
    print(f"  {label:32s} CPU {c:7.3f} s  wall {w:7.3f} s  ({c / rows * 1e5:.3f} CPU s per 100 000 rows)")
    return c, w


def side_by_side(data, rev: str, repeats: int) -> None:
    from hrstage.catalog import formats as after

    before = exec_module("hrstage.catalog._formats_before", git_show(rev, "hrstage/catalog/formats.py"),
                         f"{rev}:formats.py", "hrstage.catalog")
    rows = data.num_rows
    before.arrow_csv(data.slice(0, 2000))           # warm both (imports, compiled patterns)
    after.arrow_csv(data.slice(0, 2000))
    times = {"before": ([], []), "after": ([], [])}
    same = True
    for _ in range(repeats):
        a, c, w = _timed(lambda: before.arrow_csv(data))
        times["before"][0].append(c)
        times["before"][1].append(w)
        b, c, w = _timed(lambda: after.arrow_csv(data))
        times["after"][0].append(c)
        times["after"][1].append(w)
        same &= a == b
        del a, b
    print(f"arrow_csv, {rows} rows x {data.num_columns} columns, {repeats} repeats interleaved:")
    c0, w0 = _line(f"before ({rev})", *times["before"], rows)
    c1, w1 = _line("after (working tree)", *times["after"], rows)
    print(f"  ratio before/after: CPU x{c0 / c1:.2f}, wall x{w0 / w1:.2f}")
    print(f"  identical text: {'yes' if same else 'NO'}")


def against_pyarrow(data, repeats: int) -> None:
    import pyarrow.csv as pacsv

    from hrstage.catalog.formats import arrow_csv

    def theirs():
        buf = io.BytesIO()
        pacsv.write_csv(data, buf)
        return buf.getvalue()

    arrow_csv(data.slice(0, 2000))
    ours, ref = ([], []), ([], [])
    for _ in range(repeats):
        for fn, acc in ((arrow_csv, ours), (theirs, ref)):
            _, c, w = _timed(lambda: fn(data) if fn is arrow_csv else fn())
            acc[0].append(c)
            acc[1].append(w)
    rows = data.num_rows
    print(f"{rows} rows x {data.num_columns} columns, {repeats} repeats interleaved:")
    c0, w0 = _line("arrow_csv (our text)", *ours, rows)
    c1, w1 = _line("pyarrow write_csv (its text)", *ref, rows)
    print(f"  ratio ours/pyarrow: CPU x{c0 / c1:.2f}, wall x{w0 / w1:.2f}")


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--rows", type=lambda s: int(float(s)), default=100_000)
    p.add_argument("--repeats", type=int, default=5)
    p.add_argument("--input", type=Path, help="a Parquet file to format instead of a classified invented catalogue")
    p.add_argument("--before", metavar="REV", help="time formats.py at git revision REV beside the working tree")
    args = p.parse_args(argv)
    if args.input is not None:
        import pyarrow.parquet as pq

        data = pq.read_table(args.input).slice(0, args.rows).combine_chunks()
    else:
        data = classified_table(args.rows)
    if args.before:
        side_by_side(data, args.before, args.repeats)
    else:
        against_pyarrow(data, args.repeats)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
