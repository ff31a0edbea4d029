"""Peak memory of streaming a large catalogue through hrstage, against the chunk size.

For a synthetic Parquet file of ``--rows`` rows (default 2 M; invented stars: ``teff`` in K,
``lum`` in Lsun, ``feh``, an integer id and a few pass-through float columns), each measurement runs
in a fresh process and reports the growth of its peak resident set (``ru_maxrss`` after the work
minus before it, imports done first):

* ``read whole``  — :func:`hrstage.catalog.read_table` of the whole file (the reference);
* ``stream N``    — :func:`hrstage.engine.classify_file` with ``chunk_rows=N`` (read, classify,
  write Parquet), for each N of ``--chunks``.

Printed: MiB per run (median of ``--repeats``) and the ratios stream / whole-read. Memory should
follow the chunk size, not the catalogue size. Numbers depend on the machine and allocator: read the
ratios. ``python benchmarks/bench_streaming.py --rows 500000`` for a quick pass.
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

_CHILD = r"""
import resource, sys
import numpy as np, pyarrow, pyarrow.parquet, pyarrow.compute, astropy.table
import hrstage.engine, hrstage.catalog, hrstage.classifier, hrstage.derive
mode, src, dst, chunk = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
if mode == "whole":
    t = hrstage.catalog.read_table(src)
else:
    hrstage.engine.classify_file(src, dst, chunk_rows=chunk, overwrite=True)
after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
print(after - before)
"""


def make_catalogue(path: Path, rows: int, seed: int = 7, group: int = 250_000) -> None:
    """Invented population written in row groups (little memory needed to generate it)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(seed)
    writer = None
    done = 0
    while done < rows:
        n = min(group, rows - done)
        dwarf = rng.random(n) < 0.8
        teff = np.where(dwarf, rng.uniform(3500, 7500, n), rng.uniform(3800, 5200, n))
        lum = np.where(dwarf, (teff / 5772.0) ** 5.5, 10 ** rng.uniform(0.5, 3.0, n))
        data = pa.table({"star_id": np.arange(done, done + n, dtype=np.int64), "teff": teff, "lum": lum,
                         "feh": rng.normal(-0.1, 0.25, n), "ra": rng.uniform(0, 360, n),
                         "dec": rng.uniform(-90, 90, n), "pm": rng.normal(0, 10, n)})
        if writer is None:
            writer = pq.ParquetWriter(path, data.schema)
        writer.write_table(data)
        done += n
    writer.close()


def measure(mode: str, src: Path, dst: Path, chunk: int) -> tuple[float, float]:
    t0 = time.perf_counter()
    out = subprocess.run([sys.executable, "-c", _CHILD, mode, str(src), str(dst), str(chunk)],
                         capture_output=True, text=True)
    if out.returncode != 0:
        raise RuntimeError(out.stderr.strip().splitlines()[-1] if out.stderr else "child failed")
    return int(out.stdout.strip().splitlines()[-1]) / 1024.0, time.perf_counter() - t0   # KiB -> MiB


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--rows", type=lambda s: int(float(s)), default=2_000_000)
    p.add_argument("--chunks", type=lambda s: [int(float(x)) for x in s.split(",")], default=[50_000, 200_000])
    p.add_argument("--repeats", type=int, default=1)
    p.add_argument("--workdir", default=None)
    args = p.parse_args(argv)
    print(f"machine: {platform.machine()} {platform.processor() or ''} cpus={os.cpu_count()} "
          f"python {platform.python_version()}")
    with tempfile.TemporaryDirectory(prefix="bench_streaming_", dir=args.workdir) as work:
        work = Path(work)
        src = work / "catalogue.parquet"
        make_catalogue(src, args.rows)
        print(f"catalogue: {args.rows:,} rows, {src.stat().st_size / 2**20:.1f} MiB on disk")
        whole = [measure("whole", src, work / "x.parquet", 0)[0] for _ in range(args.repeats)]
        w = statistics.median(whole)
        print(f"  read whole file        peak growth {w:8.1f} MiB")
        for chunk in args.chunks:
            runs = [measure("stream", src, work / "out.parquet", chunk) for _ in range(args.repeats)]
            mem = statistics.median(r[0] for r in runs)
            sec = statistics.median(r[1] for r in runs)
            print(f"  classify --chunk-rows {chunk:>9,}  peak growth {mem:8.1f} MiB  "
                  f"(x{mem / w:.2f} of whole read)  {sec:6.1f} s  {args.rows / sec:,.0f} rows/s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
