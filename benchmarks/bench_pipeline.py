"""End-to-end benchmarks of hrstage against plain pyarrow I/O, in one run.

What is measured, side by side (each pair interleaved, median of ``--repeats`` runs):

1. **Parquet**: ``hrstage classify IN.parquet -o OUT.parquet`` (a fresh process: start-up,
   import, read, classify, write) against a fresh process that only reads the same file with
   pyarrow and writes it back. The ratio CLI / pyarrow is the project's bar (design: <= 3x).
   The CLI runs once per ``--workers`` value (default 1 and 2 worker processes) and per
   ``--add-columns`` set (default ``all``, every column, and ``brief``), interleaved. Then pyarrow
   reads and writes hrstage's own output of each set: the time just moving the output costs, a
   floor under the CLI's time whatever the classification costs.
2. **CSV**: the same with a CSV input and a CSV output (pyarrow.csv reading and writing).
3. **Streaming memory**: peak resident memory (``ru_maxrss`` of the child, from ``os.wait4``) of
   ``hrstage classify --chunk-rows N`` on a ``--stream-rows`` Parquet file (default 20 M rows), for
   several chunk sizes, next to the peak of pyarrow reading the whole file at once. Memory should
   follow the chunk size, not the catalogue size.
4. **Dask**: ``hrstage.distributed.classify_parquet_dataset`` on a Parquet dataset (one file per
   partition) on a ``distributed.LocalCluster`` with 1 worker process and with 2 worker processes
   (one thread each); the speed-up is t(1 worker) / t(2 workers). Cluster start-up is not timed.

The synthetic catalogue is an invented population (no real stars): main-sequence stars from a
power-law mass function, red giants, a clump, white dwarfs and a sprinkling of stars anywhere in the
diagram, with ``teff`` in K, ``lum`` in Lsun, ``feh`` in dex and an integer ``star_id``. It is written
in row groups, so generating 20 M rows needs little memory. Files go to ``benchmarks/_work/``
(git-ignored) unless ``--workdir`` says otherwise, and are removed at the end unless ``--keep``.

Run ``python benchmarks/bench_pipeline.py --rows 1000000`` for a quick pass. Wall-clock numbers
depend on the machine and on what else runs on it: read the ratios, not the seconds, and quote the
machine block printed at the top.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent

# Code run in child processes. The CLI is reached through its documented entry point
# (``hrstage.cli:main``, the console script of pyproject.toml) with sys.argv set as the shell would.
# Every child writes its peak resident memory (VmHWM of /proc/self/status: the high-water mark of
# its own address space, reset by exec) at exit to the file named by BENCH_HWM_FILE. ``ru_maxrss``
# from wait4 is not used where VmHWM exists: Linux carries it over from the parent through fork and
# exec, so a child of a large parent would report at least the parent's size.
_HWM = (
    "import atexit, os\n"
    "def _hwm():\n"
    "    path = os.environ.get('BENCH_HWM_FILE')\n"
    "    if path:\n"
    "        for line in open('/proc/self/status'):\n"
    "            if line.startswith('VmHWM:'):\n"
    "                open(path, 'w').write(line.split()[1])\n"
    "atexit.register(_hwm)\n"
)
_CLI_CHILD = _HWM + "import sys; sys.argv = ['hrstage'] + sys.argv[1:]; from hrstage.cli import main; sys.exit(main())"

_PYARROW_CHILD = _HWM + r"""
import sys
kind, src, dst = sys.argv[1:4]
if kind == "parquet":
    import pyarrow.parquet as pq
    pq.write_table(pq.read_table(src), dst)
elif kind == "csv":
    import pyarrow.csv as pc
    pc.write_csv(pc.read_csv(src), dst)
elif kind in ("parquet-same-output", "csv-same-output"):
    # read the input, write hrstage's output table: the I/O the CLI cannot avoid. hrstage's output
    # (argv[4]) is read first and that time written to argv[5], to be taken off the wall time.
    import time
    t0 = time.perf_counter()
    if kind == "parquet-same-output":
        import pyarrow.parquet as pq
        out = pq.read_table(sys.argv[4])
        t1 = time.perf_counter()
        pq.read_table(src)
        pq.write_table(out, dst)
    else:
        import pyarrow.csv as pc
        out = pc.read_csv(sys.argv[4])
        t1 = time.perf_counter()
        pc.read_csv(src)
        pc.write_csv(out, dst)
    with open(sys.argv[5], "w") as fh:
        fh.write(repr(t1 - t0))
elif kind == "astropy":
    from astropy.table import Table
    Table.read(src).write(dst, overwrite=True)
elif kind == "parquet-read":
    import pyarrow.parquet as pq
    t = pq.read_table(src)
    print(t.num_rows)
elif kind == "csv-read":
    import pyarrow.csv as pc
    t = pc.read_csv(src)
    print(t.num_rows)
else:
    raise SystemExit("unknown kind " + kind)
"""


# --------------------------------------------------------------------------------------------
# machine description
# --------------------------------------------------------------------------------------------
def machine_description() -> dict:
    """What the numbers were measured on: CPU, cores, memory, Python and library versions."""
    info = {"platform": platform.platform(), "nproc": os.cpu_count()}
    try:
        info["nproc_usable"] = len(os.sched_getaffinity(0))
    except AttributeError:  # not Linux
        pass
    try:
        with open("/proc/cpuinfo") as fh:
            for line in fh:
                if line.startswith("model name"):
                    info["cpu"] = line.split(":", 1)[1].strip()
                    break
    except OSError:
        info["cpu"] = platform.processor() or "unknown"
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemTotal"):
                    info["mem_total_GiB"] = round(int(line.split()[1]) / 2**20, 1)
                    break
    except OSError:
        pass
    info["python"] = platform.python_version()
    for mod in ("numpy", "astropy", "pyarrow", "dask", "distributed", "pandas", "hrstage"):
        try:
            info[mod] = __import__(mod).__version__
        except Exception:  # noqa: BLE001 - an absent optional library is simply reported
            info[mod] = "not installed"
    return info


# --------------------------------------------------------------------------------------------
# synthetic catalogue
# --------------------------------------------------------------------------------------------
def synthetic_batch(n: int, rng: np.random.Generator, start_id: int = 0):
    """One pyarrow RecordBatch of ``n`` invented stars (columns star_id, teff, teff_err, lum,
    lum_err, feh).

    The mixture is rough on purpose: it only has to put stars in every region of the diagram in
    proportions of the order of a magnitude-limited catalogue (mostly dwarfs, some giants).
    """
    import pyarrow as pa

    kind = rng.choice(5, size=n, p=[0.70, 0.14, 0.06, 0.04, 0.06])
    logt = np.empty(n)
    logl = np.empty(n)
    # 0: main sequence, masses 0.1-20 Msun from a Salpeter-like power law, with the textbook
    # mass-luminosity and mass-radius power laws (common practice, rough): L = 0.23 M^2.3 below
    # 0.43 Msun, M^4 up to 2 Msun, 1.4 M^3.5 above; R = M^0.8 below 1 Msun, M^0.57 above.
    m0 = kind == 0
    u = rng.random(m0.sum())
    a = -1.35
    mass = (0.1 ** a + u * (20.0 ** a - 0.1 ** a)) ** (1 / a)
    lm = np.log10(mass)
    ms_logl = np.where(mass < 0.43, np.log10(0.23) + 2.3 * lm, np.where(mass < 2.0, 4.0 * lm, np.log10(1.4) + 3.5 * lm))
    ms_logr = np.where(mass < 1.0, 0.8 * lm, 0.57 * lm)
    logl[m0] = ms_logl + rng.normal(0, 0.1, m0.sum())
    logt[m0] = np.log10(5772.0) + 0.25 * (ms_logl - 2.0 * ms_logr) + rng.normal(0, 0.01, m0.sum())
    # 1: red-giant branch
    m1 = kind == 1
    logl[m1] = rng.uniform(0.8, 3.2, m1.sum())
    logt[m1] = 3.72 - 0.05 * (logl[m1] - 0.8) + rng.normal(0, 0.015, m1.sum())
    # 2: red clump
    m2 = kind == 2
    logl[m2] = rng.normal(1.7, 0.1, m2.sum())
    logt[m2] = rng.normal(3.675, 0.01, m2.sum())
    # 3: white dwarfs
    m3 = kind == 3
    logt[m3] = rng.uniform(3.7, 4.6, m3.sum())
    logl[m3] = -2.6 + 4.0 * (logt[m3] - 4.0) + rng.normal(0, 0.2, m3.sum())
    # 4: anywhere in the diagram (supergiants, subdwarfs, oddities)
    m4 = kind == 4
    logt[m4] = rng.uniform(3.45, 4.7, m4.sum())
    logl[m4] = rng.uniform(-4.0, 6.0, m4.sum())
    feh = np.clip(rng.normal(-0.1, 0.3, n), -2.5, 0.5)
    teff = np.round(10.0 ** logt, 1)
    lum = 10.0 ** logl
    # 1-sigma errors: 1-3 % in Teff, 5-20 % in L (typical of spectroscopic Teff and Gaia-era L)
    return pa.record_batch(
        {
            "star_id": pa.array(np.arange(start_id, start_id + n, dtype=np.int64)),
            "teff": pa.array(teff),
            "teff_err": pa.array(np.round(teff * rng.uniform(0.01, 0.03, n), 1)),
            "lum": pa.array(lum),
            "lum_err": pa.array(lum * rng.uniform(0.05, 0.20, n)),
            "feh": pa.array(np.round(feh, 3)),
        }
    )


def write_synthetic(path: Path, rows: int, kind: str, seed: int = 20240611, batch_rows: int = 1_000_000) -> Path:
    """Write ``rows`` synthetic stars to ``path`` as Parquet or CSV, batch by batch."""
    import pyarrow.csv as pc
    import pyarrow.parquet as pq

    rng = np.random.default_rng(seed)
    writer = None
    try:
        done = 0
        while done < rows:
            n = min(batch_rows, rows - done)
            batch = synthetic_batch(n, rng, start_id=done)
            if writer is None:
                if kind == "parquet":
                    writer = pq.ParquetWriter(str(path), batch.schema)
                else:
                    writer = pc.CSVWriter(str(path), batch.schema)
            if kind == "parquet":
                writer.write_batch(batch, row_group_size=n)
            else:
                writer.write_batch(batch)
            done += n
    finally:
        if writer is not None:
            writer.close()
    return path


def write_dataset(folder: Path, rows: int, parts: int, seed: int = 7) -> Path:
    """A Parquet dataset: ``parts`` files of synthetic stars in ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    per = -(-rows // parts)
    start = 0
    for i in range(parts):
        n = min(per, rows - start)
        if n <= 0:
            break
        import pyarrow as pa
        import pyarrow.parquet as pq

        batch = synthetic_batch(n, np.random.default_rng(seed + i), start_id=start)
        pq.write_table(pa.Table.from_batches([batch]), str(folder / f"part.{i:04d}.parquet"))
        start += n
    return folder


# --------------------------------------------------------------------------------------------
# running and timing children
# --------------------------------------------------------------------------------------------
#: CPU seconds (user + system, the child and the processes it waited for) of the last run_child:
#: on a busy machine wall-clock times stretch with the load, CPU times much less
LAST_CPU_S = 0.0


def run_child(args: list[str], env: dict | None = None) -> tuple[float, float]:
    """Run ``python args...`` in a fresh process; return (wall seconds, peak RSS in MiB).

    The peak resident set size is the child's own high-water mark (VmHWM, written by the child at
    exit; ``ru_maxrss`` from ``os.wait4`` where /proc is missing), so it does not mix with this
    process or with other children.
    """
    cmd = [sys.executable, *args]
    fd, hwm_file = tempfile.mkstemp(prefix="bench-hwm-")
    os.close(fd)
    env = dict(os.environ if env is None else env, BENCH_HWM_FILE=hwm_file)
    t0 = time.perf_counter()
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env)
    _, status, usage = os.wait4(proc.pid, 0)
    elapsed = time.perf_counter() - t0
    proc.returncode = os.waitstatus_to_exitcode(status)
    err = proc.stderr.read().decode(errors="replace") if proc.stderr else ""
    if proc.stderr:
        proc.stderr.close()
    if proc.returncode != 0:
        raise RuntimeError(f"command failed (exit {proc.returncode}): {' '.join(cmd)}\n{err[-2000:]}")
    global LAST_CPU_S
    LAST_CPU_S = usage.ru_utime + usage.ru_stime
    hwm = Path(hwm_file).read_text().strip()
    os.unlink(hwm_file)
    if hwm:
        return elapsed, int(hwm) / 1024
    # Linux reports ru_maxrss in KiB, macOS in bytes
    scale = 1.0 / 1024 if sys.platform != "darwin" else 1.0 / 2**20
    return elapsed, usage.ru_maxrss * scale


def cli(src: Path, dst: Path, *extra: str) -> list[str]:
    return ["-c", _CLI_CHILD, "classify", str(src), "-o", str(dst), "--overwrite", *extra]


def pyarrow_copy(kind: str, src: Path, dst: Path) -> list[str]:
    return ["-c", _PYARROW_CHILD, kind, str(src), str(dst)]


def side_by_side(a: list[str], b: list[str], repeats: int, outputs: tuple[Path, Path]) -> tuple[list, list]:
    """Interleave runs of ``a`` and ``b`` (a, b, a, b, ...); return their (time, rss) lists.

    Each command's own output file is removed before it runs, so both always write a new file.
    """
    ra, rb = [], []
    for _ in range(repeats):
        for cmd, res, out in ((a, ra, outputs[0]), (b, rb, outputs[1])):
            if out.exists():
                out.unlink()
            res.append(run_child(cmd))
    return ra, rb


def med(values) -> float:
    return float(statistics.median(values))


# --------------------------------------------------------------------------------------------
# the four measurements
# --------------------------------------------------------------------------------------------
def bench_format(work: Path, rows: int, kind: str, repeats: int, workers=(1,), column_sets=("all",)) -> dict:
    """CLI (one run per worker count and ``--add-columns`` set) and pyarrow, interleaved:
    cli w1, cli w2, ..., pyarrow, repeat. Results of the sets other than ``all`` are keyed
    ``"<workers>:<set>"``."""
    src = write_synthetic(work / f"in_{rows}.{kind}", rows, kind)
    out_pa = work / f"out_pyarrow.{kind}"
    cmds = []
    for cs in column_sets:
        for w in workers:
            name = f"w{w}" if cs == "all" else f"w{w}:{cs}"
            out = work / f"out_cli_w{w}_{cs}.{kind}"
            cmds.append((name, cli(src, out, "--workers", str(w), "--add-columns", cs), out))
    cmds.append(("pyarrow", pyarrow_copy(kind, src, out_pa), out_pa))
    out_same = work / f"out_pyarrow_same.{kind}"
    excluded = work / "excluded_s.txt"
    ref_out = cmds[0][2]
    cmds.append(("same_output", pyarrow_copy(f"{kind}-same-output", src, out_same) + [str(ref_out), str(excluded)],
                 out_same))
    runs: dict = {name: [] for name, _, _ in cmds}
    cpu: dict = {name: [] for name, _, _ in cmds}
    for _ in range(repeats):
        for name, cmd, out in cmds:
            if out.exists():
                out.unlink()
            t, rss = run_child(cmd)
            if name == "same_output":      # minus the time reading hrstage's output
                t -= float(excluded.read_text())
            runs[name].append((t, rss))
            cpu[name].append(LAST_CPU_S)
    first_out = cmds[0][2]
    res = {
        "rows": rows,
        "input_MiB": round(src.stat().st_size / 2**20, 1),
        "output_MiB": round(first_out.stat().st_size / 2**20, 1) if first_out.exists() else None,
        "pyarrow_s": [round(t, 3) for t, _ in runs["pyarrow"]],
        "pyarrow_median_s": round(med(t for t, _ in runs["pyarrow"]), 3),
        "workers": {},
    }
    same = [t for t, _ in runs["same_output"]]
    res["pyarrow_same_output_s"] = [round(t, 3) for t in same]
    res["pyarrow_same_output_median_s"] = round(med(same), 3)
    res["pyarrow_cpu_median_s"] = round(med(cpu["pyarrow"]), 2)
    for name, _, out in cmds:
        if name in ("pyarrow", "same_output"):
            continue
        times = [t for t, _ in runs[name]]
        m = round(med(times), 3)
        key = int(name[1:]) if ":" not in name else name[1:]
        res["workers"][key] = {"cli_s": [round(t, 3) for t in times], "cli_median_s": m,
                               "cli_cpu_median_s": round(med(cpu[name]), 2),
                               "ratio_cli_over_pyarrow": round(m / res["pyarrow_median_s"], 2),
                               "ratio_cli_over_same_output": round(m / res["pyarrow_same_output_median_s"], 2),
                               "cli_rows_per_s": round(rows / m)}
    # a floor: pyarrow alone copying (reading and writing) hrstage's output of each column set
    res["pyarrow_copy_of_output"] = {}
    for cs in column_sets:
        out = work / f"out_cli_w{workers[0]}_{cs}.{kind}"
        if not out.exists():
            continue
        copy = work / f"copy_of_output_{cs}.{kind}"
        times = []
        for _ in range(repeats):
            if copy.exists():
                copy.unlink()
            times.append(run_child(pyarrow_copy(kind, out, copy))[0])
        copy.unlink(missing_ok=True)
        m = round(med(times), 3)
        res["pyarrow_copy_of_output"][cs] = {"s": [round(t, 3) for t in times], "median_s": m,
                                             "ratio_over_pyarrow": round(m / res["pyarrow_median_s"], 2)}
    # the first worker count keeps the flat keys of earlier versions of this script
    base = res["workers"][next(iter(res["workers"]))]
    res.update(cli_s=base["cli_s"], cli_median_s=base["cli_median_s"],
               ratio_cli_over_pyarrow=base["ratio_cli_over_pyarrow"], cli_rows_per_s=base["cli_rows_per_s"])
    src.unlink()
    for _, _, out in cmds:
        if out.exists():
            out.unlink()
    return res


def _print_format(title: str, r: dict, bar: str) -> None:
    print(f"\n{title}, {r['rows']:,} rows ({r['input_MiB']} MiB in, {r['output_MiB']} MiB out):")
    for w, x in r["workers"].items():
        label = f"--workers {w}" if not isinstance(w, str) else "--workers {} --add-columns {}".format(*w.split(":"))
        print(f"  hrstage classify {label:<32} median {x['cli_median_s']:8.2f} s   {x['cli_s']}"
              f"   ratio CLI / pyarrow = {x['ratio_cli_over_pyarrow']:.2f}, CLI / pyarrow same output = "
              f"{x['ratio_cli_over_same_output']:.2f}{bar}   CPU {x['cli_cpu_median_s']:.1f} s")
    ws = [w for w in r["workers"] if not isinstance(w, str)]
    for w in ws[1:]:     # the worker counts against the first, measured in the same interleaved rounds
        print(f"  speed-up --workers {w} over --workers {ws[0]} = "
              f"{r['workers'][ws[0]]['cli_median_s'] / r['workers'][w]['cli_median_s']:.2f}"
              f"   (bar: >= 1.7 on an idle 2-core machine)")
    print(f"  pyarrow read+write           median {r['pyarrow_median_s']:8.2f} s   {r['pyarrow_s']}   CPU "
          f"{r['pyarrow_cpu_median_s']:.1f} s")
    print(f"  pyarrow reading the input and writing hrstage's output table (all columns, --workers "
          f"{next(iter(r['workers']))}): median {r['pyarrow_same_output_median_s']:8.2f} s   {r['pyarrow_same_output_s']}")
    for cs, x in r.get("pyarrow_copy_of_output", {}).items():
        print(f"  pyarrow read+write of hrstage's output ({cs}): median {x['median_s']:8.2f} s   {x['s']}"
              f"   ratio to pyarrow read+write of the input = {x['ratio_over_pyarrow']:.2f}  (a floor for the CLI)")


DEMO = HERE.parent / "data" / "demo" / "kestrel_targets.ecsv"


def bench_demo(work: Path, repeats: int) -> dict:
    """The demo ECSV (3035 rows): ``hrstage classify`` (defaults: 128 draws, all columns, ECSV out)
    against astropy reading and writing the same file, interleaved; time and peak RSS. The stage
    maps come from the on-disk cache (warmed before); one run with an empty cache folder and one
    with the cache off show the cost without it."""
    out_cli, out_ap = work / "demo_cli.ecsv", work / "demo_astropy.ecsv"
    runs = side_by_side(cli(DEMO, out_cli), pyarrow_copy("astropy", DEMO, out_ap), repeats, (out_cli, out_ap))
    cold_dir = work / "empty_map_cache"
    cold = run_child(cli(DEMO, out_cli), env=dict(os.environ, HRSTAGE_CACHE_DIR=str(cold_dir)))
    shutil.rmtree(cold_dir, ignore_errors=True)
    off = run_child(cli(DEMO, out_cli), env=dict(os.environ, HRSTAGE_MAP_CACHE="0"))
    from astropy.table import Table

    res = {"rows": len(Table.read(DEMO, format="ascii.ecsv"))}
    for name, r in zip(("cli", "astropy"), runs):
        res[name] = {"s": [round(t, 3) for t, _ in r], "median_s": round(med(t for t, _ in r), 3),
                     "peak_MiB": [round(m) for _, m in r], "median_peak_MiB": round(med(m for _, m in r))}
    res["ratio_cli_over_astropy"] = round(res["cli"]["median_s"] / res["astropy"]["median_s"], 2)
    res["cold_cache"] = {"s": round(cold[0], 3), "peak_MiB": round(cold[1])}
    res["cache_off"] = {"s": round(off[0], 3), "peak_MiB": round(off[1])}
    return res


def bench_streaming(work: Path, rows: int, chunk_sizes: list[int], kind: str = "parquet") -> dict:
    src = write_synthetic(work / f"stream_{rows}.{kind}", rows, kind)
    out = work / f"stream_out.{kind}"
    whole_t, whole_rss = run_child(pyarrow_copy(f"{kind}-read", src, out))
    res = {
        "format": kind,
        "rows": rows,
        "input_MiB": round(src.stat().st_size / 2**20, 1),
        "pyarrow_read_whole_file_peak_MiB": round(whole_rss),
        "chunks": [],
    }
    for n in chunk_sizes:
        if out.exists():
            out.unlink()
        t, rss = run_child(cli(src, out, "--chunk-rows", str(n)))
        res["chunks"].append({"chunk_rows": n, "peak_MiB": round(rss), "wall_s": round(t, 2)})
    src.unlink()
    if out.exists():
        out.unlink()
    return res


def _dask_run(src: Path, dst: Path, n_workers: int, repeats: int) -> list[float]:
    from distributed import Client, LocalCluster

    from hrstage.distributed import classify_parquet_dataset

    times = []
    with LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True, dashboard_address=None) as cluster:
        with Client(cluster):
            # one untimed warm-up: imports hrstage and builds the stage maps in each worker
            classify_parquet_dataset(src, dst, overwrite=True)
            for _ in range(repeats):
                t0 = time.perf_counter()
                classify_parquet_dataset(src, dst, overwrite=True)
                times.append(time.perf_counter() - t0)
    return times


def bench_dask(work: Path, rows: int, parts: int, repeats: int) -> dict:
    src = write_dataset(work / "dask_in", rows, parts)
    dst = work / "dask_out"
    t1 = _dask_run(src, dst, 1, repeats)
    t2 = _dask_run(src, dst, 2, repeats)
    res = {
        "rows": rows,
        "partitions": parts,
        "one_worker_s": [round(t, 3) for t in t1],
        "two_workers_s": [round(t, 3) for t in t2],
        "speedup_2_over_1": round(med(t1) / med(t2), 2),
    }
    shutil.rmtree(src, ignore_errors=True)
    shutil.rmtree(dst, ignore_errors=True)
    return res


# --------------------------------------------------------------------------------------------
# command line
# --------------------------------------------------------------------------------------------
def _int_list(text: str) -> list[int]:
    return [int(float(x)) for x in text.split(",") if x.strip()]


def parse_args(argv=None):
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0], formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--rows", type=lambda s: int(float(s)), default=10_000_000,
                   help="rows of the Parquet and CSV catalogues (default 10 M; scientific notation ok)")
    p.add_argument("--csv-rows", type=lambda s: int(float(s)), default=None,
                   help="rows of the CSV catalogue (default: --rows)")
    p.add_argument("--stream-rows", type=lambda s: int(float(s)), default=None,
                   help="rows of the streaming-memory catalogue (default 2 x --rows, i.e. 20 M)")
    p.add_argument("--stream-format", choices=("parquet", "csv"), default="parquet",
                   help="file format of the streaming-memory part (default parquet)")
    p.add_argument("--chunk-rows", type=_int_list, default=None,
                   help="comma-separated chunk sizes for the memory measurement (default: rows/80, rows/20, rows/5)")
    p.add_argument("--dask-rows", type=lambda s: int(float(s)), default=None,
                   help="rows of the Dask dataset (default: --rows)")
    p.add_argument("--workers", type=_int_list, default=[1, 2],
                   help="comma-separated --workers values of the CLI runs (default 1,2)")
    p.add_argument("--add-columns", type=lambda t: [x.strip() for x in t.split(",") if x.strip()],
                   default=["all", "brief"],
                   help="comma-separated --add-columns sets of the CLI runs (default all,brief)")
    p.add_argument("--dask-partitions", type=int, default=16, help="files in the Dask dataset (default 16)")
    p.add_argument("--repeats", type=int, default=3, help="repeats per timing; the median is reported (default 3)")
    p.add_argument("--skip", default="", help="comma-separated parts to skip: demo,parquet,csv,stream,dask")
    p.add_argument("--workdir", type=Path, default=None,
                   help="scratch folder (default benchmarks/_work/, git-ignored)")
    p.add_argument("--keep", action="store_true", help="keep the scratch folder")
    p.add_argument("--user-cache", action="store_true",
                   help="use the user's stage-map cache folder (default: a folder of this run, warmed first)")
    p.add_argument("--json", type=Path, default=None, help="also write the results to this JSON file")
    return p.parse_args(argv)


def _print_machine(info: dict) -> None:
    print("machine:")
    for k, v in info.items():
        print(f"  {k:>14}: {v}")


def main(argv=None) -> int:
    args = parse_args(argv)
    skip = {s.strip() for s in args.skip.split(",") if s.strip()}
    unknown = skip - {"demo", "parquet", "csv", "stream", "dask"}
    if unknown:
        print(f"bench_pipeline: unknown part(s) in --skip: {', '.join(sorted(unknown))}", file=sys.stderr)
        return 2
    stream_rows = args.stream_rows or 2 * args.rows
    chunks = args.chunk_rows or [max(1000, stream_rows // 80), max(1000, stream_rows // 20), max(1000, stream_rows // 5)]
    base = args.workdir or HERE / "_work"
    base.mkdir(parents=True, exist_ok=True)
    work = Path(tempfile.mkdtemp(prefix="bench_pipeline_", dir=base))
    info = machine_description()
    _print_machine(info)
    results: dict = {"machine": info}
    t_start = time.perf_counter()
    if not args.user_cache:   # the stage maps' on-disk cache of this run, warmed before any timing
        os.environ["HRSTAGE_CACHE_DIR"] = str(work / "map_cache")
    run_child(cli(DEMO, work / "warm_up.ecsv"))
    # and the maps and giant-branch grids of the synthetic catalogues' [Fe/H] spread, so that no
    # timed run builds them
    warm = write_synthetic(work / "warm_up.parquet", 20_000, "parquet")
    run_child(cli(warm, work / "warm_up_out.parquet"))
    print(f"  map cache: {os.environ.get('HRSTAGE_CACHE_DIR', 'the user cache folder')} (warm)")
    try:
        if "demo" not in skip:
            r = results["demo"] = bench_demo(work, max(args.repeats, 5))
            print(f"\nDemo ECSV, {r['rows']:,} rows ({DEMO.name}), defaults (128 draws), ECSV out:")
            print(f"  hrstage classify      median {r['cli']['median_s']:6.2f} s  peak {r['cli']['median_peak_MiB']:4d} MiB"
                  f"   {r['cli']['s']}   ratio CLI / astropy = {r['ratio_cli_over_astropy']:.2f}   (bar: <= 1.5, <= 150 MB)")
            print(f"  astropy read+write    median {r['astropy']['median_s']:6.2f} s  peak "
                  f"{r['astropy']['median_peak_MiB']:4d} MiB   {r['astropy']['s']}")
            print(f"  hrstage, empty map cache (builds and stores the maps): {r['cold_cache']['s']:.2f} s, peak "
                  f"{r['cold_cache']['peak_MiB']} MiB; cache off: {r['cache_off']['s']:.2f} s, peak {r['cache_off']['peak_MiB']} MiB")
        if "parquet" not in skip:
            r = results["parquet"] = bench_format(work, args.rows, "parquet", args.repeats, args.workers,
                                                  args.add_columns)
            _print_format("Parquet", r, "   (bar: same output <= 1.5)")
        if "csv" not in skip:
            r = results["csv"] = bench_format(work, args.csv_rows or args.rows, "csv", args.repeats, args.workers,
                                              args.add_columns)
            _print_format("CSV", r, "")
        if "stream" not in skip:
            r = results["stream"] = bench_streaming(work, stream_rows, chunks, args.stream_format)
            print(f"\nStreaming, {r['rows']:,} rows of {args.stream_format} ({r['input_MiB']} MiB):")
            print(f"  pyarrow reading the whole file: peak RSS {r['pyarrow_read_whole_file_peak_MiB']} MiB")
            for c in r["chunks"]:
                print(f"  hrstage classify --chunk-rows {c['chunk_rows']:>10,}: peak RSS {c['peak_MiB']:6d} MiB"
                      f"   ({c['wall_s']} s)")
        if "dask" not in skip:
            r = results["dask"] = bench_dask(work, args.dask_rows or args.rows, args.dask_partitions, args.repeats)
            print(f"\nDask LocalCluster, {r['rows']:,} rows in {r['partitions']} Parquet files:")
            print(f"  1 worker  median {med(r['one_worker_s']):8.2f} s   {r['one_worker_s']}")
            print(f"  2 workers median {med(r['two_workers_s']):8.2f} s   {r['two_workers_s']}")
            print(f"  speed-up 2 workers / 1 worker = {r['speedup_2_over_1']:.2f}   (ideal: 2)")
    finally:
        if not args.keep:
            shutil.rmtree(work, ignore_errors=True)
    results["total_wall_s"] = round(time.perf_counter() - t_start, 1)
    print(f"\ntotal {results['total_wall_s']} s")
    if args.json:
        args.json.write_text(json.dumps(results, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
