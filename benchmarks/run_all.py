"""Run every benchmark script of this folder, one after another.

``python benchmarks/run_all.py`` runs, in this order, ``bench_classify.py`` (classifier speed),
``bench_streaming.py`` (chunked reading and writing) and ``bench_pipeline.py`` (the whole command
line against pyarrow, streaming memory, Dask speed-up), then any other ``bench_*.py`` found here.
A script that is not present is reported and skipped. Each one runs in its own process, so memory
and imports of one do not affect the next; the exit status is non-zero if any script failed.

Options after ``--`` are passed to every script (for instance ``-- --rows 1000000`` for a quick
pass, when all scripts accept ``--rows``); ``--only NAME`` runs only the named scripts.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
PREFERRED_ORDER = ("bench_classify.py", "bench_streaming.py", "bench_pipeline.py")


def scripts_in_order(folder: Path = HERE) -> tuple[list[Path], list[str]]:
    """The benchmark scripts to run, in order, and the names of the expected ones that are absent."""
    present = {p.name: p for p in sorted(folder.glob("bench_*.py"))}
    ordered = [present.pop(name) for name in PREFERRED_ORDER if name in present]
    missing = [name for name in PREFERRED_ORDER if name not in {p.name for p in ordered}]
    return ordered + list(present.values()), missing


def main(argv=None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    passthrough: list[str] = []
    if "--" in argv:
        cut = argv.index("--")
        argv, passthrough = argv[:cut], argv[cut + 1:]
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--only", action="append", default=[],
                        help="run only this script (name with or without .py); may be repeated")
    args = parser.parse_args(argv)
    scripts, missing = scripts_in_order()
    if args.only:
        wanted = {n if n.endswith(".py") else n + ".py" for n in args.only}
        unknown = wanted - {p.name for p in scripts}
        if unknown:
            print(f"run_all: no such benchmark script: {', '.join(sorted(unknown))}", file=sys.stderr)
            return 2
        scripts = [p for p in scripts if p.name in wanted]
        missing = []
    for name in missing:
        print(f"== {name}: not present, skipped")
    failures = []
    t_all = time.perf_counter()
    for script in scripts:
        print(f"\n== {script.name} {' '.join(passthrough)}", flush=True)
        t0 = time.perf_counter()
        rc = subprocess.call([sys.executable, str(script), *passthrough])
        print(f"== {script.name}: exit {rc}, {time.perf_counter() - t0:.1f} s", flush=True)
        if rc != 0:
            failures.append(script.name)
    print(f"\nall benchmarks: {time.perf_counter() - t_all:.1f} s;"
          f" {'failed: ' + ', '.join(failures) if failures else 'all succeeded'}")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
