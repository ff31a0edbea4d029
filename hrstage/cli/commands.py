"""Argument parsing and the subcommands of ``hrstage`` (see :mod:`hrstage.cli`)."""

from __future__ import annotations

import argparse
import sys
import traceback
from pathlib import Path

from .. import __version__
from ..errors import HrstageInputError

EXIT_OK, EXIT_FAILURE, EXIT_USAGE = 0, 1, 2

CAUTION_LINE = ("Labels are indicative: they come from the HR position and analytic stellar relations "
                "and do not replace a spectroscopic analysis.")


class _UsageError(Exception):
    pass


class _Parser(argparse.ArgumentParser):
    """argparse that reports mistakes in one line (no usage dump) and lets us choose the exit."""

    def error(self, message):
        raise _UsageError(f"{message} (see '{self.prog} --help')")


# ------------------------------------------------------------------------------ options
def _role_pair(text: str):
    if "=" not in text:
        raise argparse.ArgumentTypeError(f"expected ROLE=COLUMN, got {text!r}")
    role, col = text.split("=", 1)
    role, col = role.strip(), col.strip()
    if not role or not col:
        raise argparse.ArgumentTypeError(f"expected ROLE=COLUMN, got {text!r}")
    return role, col


def _positive_int(text: str) -> int:
    try:
        n = int(float(text))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if n < 1:
        raise argparse.ArgumentTypeError(f"expected a positive number, got {text!r}")
    return n


def _nonneg_int(text: str) -> int:
    try:
        n = int(float(text))
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}") from None
    if n < 0:
        raise argparse.ArgumentTypeError(f"expected a number >= 0, got {text!r}")
    return n


def _workers(text: str):
    if text.strip().lower() == "auto":
        return "auto"
    return _positive_int(text)


def _add_column_options(p):
    g = p.add_argument_group("columns")
    g.add_argument("--profile", choices=["direct", "gaia", "johnson", "spectroscopic", "none"],
                   help="column layout to use (default: detected from names, units and UCDs)")
    g.add_argument("--col", action="append", type=_role_pair, default=[], metavar="ROLE=COLUMN",
                   help="use COLUMN for ROLE (teff, lum, logl, radius, logg, feh, g, bp_rp, parallax, "
                        "v, b_v, sptype, ... and their _err); may be repeated")
    g.add_argument("--in-format", choices=["fits", "votable", "ecsv", "csv", "parquet"],
                   help="input format (default: from the suffix)")


def _add_model_options(p, draws_default=0):
    g = p.add_argument_group("classification")
    g.add_argument("--feh", type=float, default=None,
                   help="[Fe/H] for stars without one (default: solar, flagged)")
    g.add_argument("--draws", type=_nonneg_int, default=draws_default,
                   help=f"Monte Carlo draws per star for stage probabilities (default {draws_default})")
    g.add_argument("--seed", type=int, default=20240601, help="seed of the draws (default 20240601)")
    g.add_argument("--min-parallax-snr", type=float, default=5.0,
                   help="parallax/error below which luminosities are flagged unreliable (default 5)")
    g.add_argument("--parallax-zp", type=float, default=0.0,
                   help="parallax zero point in mas, subtracted from the parallaxes (default 0)")
    g.add_argument("--r-v", type=float, default=3.1, help="extinction-curve R_V (default 3.1)")


def _options(args) -> dict:
    return {"profile": args.profile, "columns": dict(args.col), "feh": args.feh, "n_draws": args.draws,
            "seed": args.seed, "min_parallax_snr": args.min_parallax_snr, "parallax_zp": args.parallax_zp,
            "r_v": args.r_v}


def _progress_wanted(args) -> bool:
    return not getattr(args, "quiet", False) and sys.stderr.isatty()


def _say(args, text=""):
    if not getattr(args, "quiet", False):
        print(text)


def _summary_lines(summary: dict) -> list:
    from ..stages import LABELS

    rows = summary["rows"]
    lines = [f"{rows} rows classified into {summary['output']}", f"columns: {summary['mapping']}"]
    lines += [f"note: {n}" for n in summary.get("notes", [])]
    for stage, count in summary["stages"].items():
        if count:
            lines.append(f"  {LABELS[stage]:<15} {count:>9}  ({100.0 * count / max(rows, 1):5.1f} %)")
    lines.append(f"flagged stars: {summary['flagged']}")
    if summary.get("sptype_conflicts"):
        lines.append(f"MK types in conflict with the HR position: {summary['sptype_conflicts']}")
    lines.append(CAUTION_LINE)
    return lines


# ----------------------------------------------------------------------------- commands
def cmd_classify(args) -> int:
    from ..engine import classify_file

    opts = _options(args)
    summary = classify_file(args.input, args.output, chunk_rows=args.chunk_rows, overwrite=args.overwrite,
                            progress=_progress_wanted(args), input_format=args.in_format,
                            output_format=args.out_format, prefix=args.prefix,
                            check_sptypes=not args.no_type_check, workers=args.workers,
                            add_columns=args.add_columns, **opts)
    for line in _summary_lines(summary):
        _say(args, line)
    return EXIT_OK


def _tagged_table(args):
    """Read INPUT; classify it in memory when it has no stage column yet."""
    from ..catalog import read_table
    from ..engine import classify_table

    table = read_table(args.input, args.in_format)
    if "stage" in table.colnames and not args.col and args.profile is None:
        return table
    opts = {k: v for k, v in _options(args).items()}
    columns = opts.pop("columns")
    return classify_table(table, columns=columns, **opts)


def _plot_arrays(table, prefix: str = "") -> dict:
    """The tagged columns as plain float / text arrays for :func:`hrstage.plot.hr_diagram`."""
    import numpy as np

    def num(name):
        col = table[prefix + name]
        return np.ma.filled(np.ma.asarray(np.ma.getdata(col), dtype=float)
                            if not hasattr(col, "mask") else col.astype(float), np.nan)

    out = {"teff": num("teff_used"), "logl": num("logl_used"),
           "stage": np.asarray(table[prefix + "stage"]).astype(str),
           "flags": np.asarray(table[prefix + "flags"], dtype=np.int64)}
    for name, key in (("logt_err", "logt_err"), ("logl_err", "logl_err"), ("logt_logl_corr", "corr")):
        if prefix + name in table.colnames:
            out[key] = num(name)
    return out


def cmd_plot(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    from ..catalog.atomic import check_output_path
    from ..plot import hr_diagram, write_figure

    check_output_path(args.output, overwrite=args.overwrite, inputs=[args.input])
    table = _tagged_table(args)
    feh = args.feh if args.feh is not None else 0.0
    errors = {"bars": True, "ellipse": "ellipse"}.get(args.errors, False)
    ax = hr_diagram(table, feh=feh, color_by=args.color_by, error_bars=errors,
                    title=args.title or Path(args.input).name, **_plot_arrays(table))
    write_figure(ax, args.output, overwrite=args.overwrite)
    _say(args, f"HR diagram of {len(table)} stars written to {args.output}")
    _say(args, CAUTION_LINE)
    return EXIT_OK


def cmd_check_types(args) -> int:
    from ..catalog import write_table
    from ..catalog.atomic import check_output_path
    from ..catalog.formats import describe_columns

    if args.output:
        check_output_path(args.output, overwrite=args.overwrite, inputs=[args.input])
    table = _tagged_table(args)
    if "sptype_verdict" not in table.colnames:
        raise HrstageInputError(f"{Path(args.input).name} has no MK spectral-type column we recognise; "
                                "name it with --col sptype=COLUMN")
    verdict = [str(v) for v in table["sptype_verdict"]]
    counts = {}
    for v in verdict:
        counts[v] = counts.get(v, 0) + 1
    _say(args, f"MK types of {len(table)} stars checked against their HR positions:")
    for v, c in sorted(counts.items(), key=lambda kv: -kv[1]):
        _say(args, f"  {v or '(no type)':<16} {c:>8}")
    if args.list_conflicts:
        from .. import flags as F

        idcol = next((c for c in ("id", "name", "star", "target_id") if c in table.colnames), None)
        bad = [i for i, f in enumerate(table["flags"]) if int(f) & F.SPTYPE_CONFLICT]
        for i in bad[: args.list_conflicts]:
            who = table[idcol][i] if idcol else f"row {i}"
            _say(args, f"  {who}: catalogued {table['sptype_parsed'][i]} -> HR position suggests "
                       f"{table['sptype_suggested'][i]} ({table['sptype_nsigma'][i]:.1f} sigma)")
    if args.output:
        describe_columns(table)
        write_table(table, args.output, overwrite=args.overwrite, inputs=[args.input])
        _say(args, f"checked catalogue written to {args.output}")
    _say(args, CAUTION_LINE)
    return EXIT_OK


def cmd_explain(args) -> int:
    from ..classifier import explain_star

    if args.lum is None and args.logg is None:
        raise HrstageInputError("explain needs --lum (Lsun) or --logg (cgs) besides --teff")
    text = explain_star(args.teff, args.lum, teff_err=args.teff_err, lum_err=args.lum_err, logg=args.logg,
                        feh=args.feh, mass=args.mass, n_draws=args.draws, seed=args.seed)
    print(text)
    if "indicative" not in text.lower():      # explain_star normally carries its own caution
        print(CAUTION_LINE)
    return EXIT_OK


def cmd_boundaries(args) -> int:
    from ..catalog import write_table
    from ..stagemap import stage_map

    table = stage_map(args.feh).to_table()
    table.meta["hrstage_caution"] = CAUTION_LINE
    write_table(table, args.output, format=args.out_format, overwrite=args.overwrite)
    _say(args, f"stage boundaries at [Fe/H] = {args.feh:+.2f} ({len(table)} rows) written to {args.output}")
    return EXIT_OK


DEMO_NAME = "kestrel_targets.ecsv"


def demo_catalogue_path() -> Path:
    """The bundled invented demo catalogue.

    An installed wheel carries it as package data (``hrstage/data/demo/``, copied there at build
    time by ``setup.py``); a source checkout reads it from ``data/demo/``, its one copy in git.
    """
    packaged = Path(__file__).resolve().parents[1] / "data" / "demo" / DEMO_NAME
    if packaged.is_file():
        return packaged
    return Path(__file__).resolve().parents[2] / "data" / "demo" / DEMO_NAME


def cmd_demo(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    from ..engine import classify_file

    src = Path(args.catalogue) if args.catalogue else demo_catalogue_path()
    if not src.is_file():
        raise HrstageInputError(f"demo catalogue {src} not found; regenerate it with "
                                "data/demo/make_demo_catalogue.py or pass --catalogue PATH")
    out = Path(args.out)
    if out.exists() and not out.is_dir():
        raise HrstageInputError(f"--out {out} exists and is not a folder")
    targets = {"table": out / "demo_tagged.ecsv", "figure": out / "hr_diagram.png", "report": out / "report.html"}
    if not args.overwrite:
        present = [str(p) for p in targets.values() if p.exists()]
        if present:
            raise HrstageInputError(f"{', '.join(present)} already exist(s); pass --overwrite to replace")
    out.mkdir(parents=True, exist_ok=True)
    summary = classify_file(src, targets["table"], overwrite=args.overwrite, n_draws=args.draws,
                            seed=args.seed, progress=_progress_wanted(args))
    from ..catalog import read_table
    from ..plot import hr_diagram, write_figure
    from ..report import write_report

    tagged = read_table(targets["table"])
    ax = hr_diagram(feh=0.0, title="Kestrel Deep Field targets (invented demo)", **_plot_arrays(tagged))
    write_figure(ax, targets["figure"], overwrite=args.overwrite)
    settings = {"catalogue": src.name, "draws": args.draws, "seed": args.seed, "columns": summary["mapping"]}
    write_report(tagged, targets["report"], title="hrstage demo: Kestrel Deep Field target list (invented)",
                 settings=settings, overwrite=args.overwrite, catalogue=targets["table"])
    print(f"demo catalogue: {src.name} (an invented target list; no real stars)")
    for line in _summary_lines(summary)[:-1]:
        print(line)
    print(f"HR diagram: {targets['figure']}")
    print(f"report: {targets['report']}")
    print(CAUTION_LINE)
    return EXIT_OK


# ------------------------------------------------------------------------------- parser
def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="hrstage",
                description="Evolutionary-stage labels for catalogue stars from their HR-diagram position. "
                            + CAUTION_LINE,
                epilog="Exit status: 0 success, 1 failure of the run, 2 user mistake (one-line message).")
    p.add_argument("--version", action="version", version=f"hrstage {__version__}")
    p.add_argument("--traceback", action="store_true", help="show the full traceback of a failure")
    sub = p.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    c = sub.add_parser("classify", help="tag a catalogue with evolutionary stages",
                       description="Read INPUT, add stage columns to every row (input columns and order "
                                   "untouched) and write OUTPUT (format from its suffix). Large files are "
                                   "processed in chunks. " + CAUTION_LINE)
    c.add_argument("input", help="catalogue (.fits, .vot/.xml, .ecsv, .csv, .parquet)")
    c.add_argument("-o", "--output", required=True, help="tagged catalogue to write")
    c.add_argument("--overwrite", action="store_true", help="replace OUTPUT if it exists (never the input)")
    c.add_argument("--out-format", choices=["fits", "votable", "ecsv", "csv", "parquet"],
                   help="output format (default: from the suffix)")
    c.add_argument("--chunk-rows", type=_positive_int, default=None,
                   help="rows per chunk; peak memory follows it (default 100000)")
    c.add_argument("--workers", type=_workers, default=1, metavar="N|auto",
                   help="processes classifying chunks in parallel (default 1; 'auto': one per usable core); "
                        "same output as one process, memory grows with N x chunk rows")
    c.add_argument("--prefix", default="", help="prefix for our column names (when the input already has one)")
    c.add_argument("--no-type-check", action="store_true", help="do not check MK spectral types")
    c.add_argument("--add-columns", default="all", metavar="all|brief|NAMES",
                   help="which of our columns to add: all (default); brief (stage, stage_prob, mass_est, "
                        "teff_used, logl_used, flags, and the MK verdict) for very large catalogues; or "
                        "comma-separated names (stage and flags always come)")
    c.add_argument("-q", "--quiet", action="store_true", help="no summary, no progress bar")
    _add_column_options(c)
    _add_model_options(c, draws_default=128)
    c.set_defaults(func=cmd_classify)

    pl = sub.add_parser("plot", help="draw the HR diagram of a catalogue",
                        description="Draw an annotated HR diagram (stage regions, boundaries, flagged stars). "
                                    "An untagged INPUT is classified first, in memory.")
    pl.add_argument("input")
    pl.add_argument("-o", "--output", required=True, help="figure file (.png, .pdf, .svg)")
    pl.add_argument("--overwrite", action="store_true")
    pl.add_argument("--color-by", default="stage", metavar="stage|teff|COLUMN",
                    help="fill colour of the points: 'stage' (default), 'teff' (the colour of a blackbody "
                         "at the star's Teff) or the name of any numeric column (colour scale with a "
                         "colour bar); the marker always shows the stage")
    pl.add_argument("--errors", choices=["bars", "ellipse"], default=None,
                    help="draw the 1-sigma uncertainties: error bars in log Teff and log L, or ellipses "
                         "that follow their correlation (default: none)")
    pl.add_argument("--title", default=None)
    pl.add_argument("-q", "--quiet", action="store_true")
    _add_column_options(pl)
    _add_model_options(pl)
    pl.set_defaults(func=cmd_plot)

    k = sub.add_parser("check-types", help="check catalogued MK spectral types against HR positions",
                       description="Compare each catalogued MK type (its luminosity class) with the stage "
                                   "of the star's HR position; print the verdict counts.")
    k.add_argument("input")
    k.add_argument("-o", "--output", default=None, help="also write the checked catalogue")
    k.add_argument("--overwrite", action="store_true")
    k.add_argument("--list-conflicts", type=_nonneg_int, default=10, metavar="N",
                   help="print the first N conflicting stars (default 10, 0 for none)")
    k.add_argument("-q", "--quiet", action="store_true")
    _add_column_options(k)
    _add_model_options(k)
    k.set_defaults(func=cmd_check_types)

    e = sub.add_parser("explain", help="explain the label of one star",
                       description="Print, step by step, how one star's Teff and L (or log g) lead to its "
                                   "stage, with the numbers behind each flag.")
    e.add_argument("--teff", type=float, required=True, help="effective temperature (K)")
    e.add_argument("--lum", type=float, default=None, help="luminosity (Lsun)")
    e.add_argument("--teff-err", type=float, default=None)
    e.add_argument("--lum-err", type=float, default=None)
    e.add_argument("--logg", type=float, default=None, help="log g (cgs), used when --lum is not given")
    e.add_argument("--mass", type=float, default=None, help="known mass (Msun)")
    e.add_argument("--feh", type=float, default=None, help="[Fe/H] (default solar)")
    e.add_argument("--draws", type=_nonneg_int, default=1000, help="Monte Carlo draws (default 1000)")
    e.add_argument("--seed", type=int, default=20240601)
    e.set_defaults(func=cmd_explain)

    b = sub.add_parser("boundaries", help="export the stage boundaries",
                       description="Write the stage-boundary curves at one metallicity as a table.")
    b.add_argument("-o", "--output", required=True, help="table file (.ecsv, .csv, .fits, .vot, .parquet)")
    b.add_argument("--feh", type=float, default=0.0, help="[Fe/H] (default 0)")
    b.add_argument("--out-format", choices=["fits", "votable", "ecsv", "csv", "parquet"])
    b.add_argument("--overwrite", action="store_true")
    b.add_argument("-q", "--quiet", action="store_true")
    b.set_defaults(func=cmd_boundaries)

    d = sub.add_parser("demo", help="run the bundled invented demo catalogue",
                       description="Classify the bundled demo catalogue (an invented planet-search target "
                                   "list, no real stars) and write DIR/demo_tagged.ecsv, DIR/hr_diagram.png "
                                   "and DIR/report.html.")
    d.add_argument("--out", required=True, metavar="DIR", help="folder for the results (created)")
    d.add_argument("--overwrite", action="store_true", help="replace earlier demo results in DIR")
    d.add_argument("--draws", type=_nonneg_int, default=200, help="Monte Carlo draws per star (default 200)")
    d.add_argument("--seed", type=int, default=20240601)
    d.add_argument("--catalogue", default=None, help="use this catalogue instead of the bundled one")
    d.set_defaults(func=cmd_demo)
    return p


def run(argv) -> int:
    parser = build_parser()
    want_tb = "--traceback" in argv
    argv = [a for a in argv if a != "--traceback"]   # accepted anywhere on the line
    try:
        args = parser.parse_args(argv)
    except _UsageError as exc:
        print(f"hrstage: error: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except SystemExit as exc:          # --help / --version
        return int(exc.code or 0)
    if not getattr(args, "command", None):
        parser.print_help()
        return EXIT_USAGE
    try:
        return args.func(args)
    except HrstageInputError as exc:
        print(f"hrstage: error: {exc}", file=sys.stderr)
        return EXIT_USAGE
    except KeyboardInterrupt:
        print("hrstage: interrupted; no output written", file=sys.stderr)
        return EXIT_FAILURE
    except Exception as exc:  # a bug or a system problem: one line unless --traceback
        if want_tb:
            traceback.print_exc()
        text = str(exc).strip().splitlines()
        print(f"hrstage: failed: {type(exc).__name__}: {text[0] if text else ''} "
              "(run again with --traceback for details)", file=sys.stderr)
        return EXIT_FAILURE
