"""Argument parsing and the subcommands of ``hrstage`` (see :mod:`hrstage.cli`)."""

from __future__ import annotations

import argparse
import sys
import traceback
from pathlib import Path

from .._version import __version__
from ..defaults import DEFAULT_DRAWS, DEFAULT_SEED, FEH_RANGE, check_feh
from ..errors import HrstageInputError
from ..interrupts import catch_interrupts, interrupt_requested

#: Exit status: success, failure of the run, user mistake, interrupted (128 + SIGINT, as shells
#: report a command ended by Ctrl-C).
EXIT_OK, EXIT_FAILURE, EXIT_USAGE, EXIT_INTERRUPTED = 0, 1, 2, 130
#: The reader of standard output went away (``| head``): 128 + SIGPIPE, what a shell reports for a
#: Unix tool stopped by it; no message.
EXIT_BROKEN_PIPE = 141

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


def _feh_value(text: str) -> float:
    try:
        return check_feh(text, "--feh")
    except HrstageInputError as exc:
        raise argparse.ArgumentTypeError(str(exc)) from None


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


FEH_HELP = (f"[Fe/H] in dex ({FEH_RANGE[0]:+g} .. {FEH_RANGE[1]:+g}) for stars without one "
            "(default: solar, flagged)")
DRAWS_HELP = (f"Monte Carlo draws per star over the errors for the stage probabilities (default {DEFAULT_DRAWS}; "
              "0: point labels)")
SEED_HELP = f"seed of the draws (default {DEFAULT_SEED})"


def _add_model_options(p):
    g = p.add_argument_group("classification")
    g.add_argument("--feh", type=_feh_value, default=None, help=FEH_HELP)
    g.add_argument("--draws", type=_nonneg_int, default=DEFAULT_DRAWS, help=DRAWS_HELP)
    g.add_argument("--seed", type=int, default=DEFAULT_SEED, help=SEED_HELP)
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
    width = max(len(v) for v in LABELS.values())
    for stage, count in summary["stages"].items():
        if count:
            lines.append(f"  {LABELS[stage]:<{width}} {count:>9}  ({100.0 * count / max(rows, 1):5.1f} %)")
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
                            check_sptypes=not args.no_type_check, workers=args.workers, threads=args.threads,
                            add_columns=args.add_columns, **opts)
    for line in _summary_lines(summary):
        _say(args, line)
    return EXIT_OK


def _tagged_table(args, detail: bool = False):
    """Read INPUT; classify it in memory when it has no stage column yet (``detail``: with the
    reasons' numbers in ``flag_detail``, for the report)."""
    from ..catalog import read_table
    from ..engine import classify_table

    table = read_table(args.input, args.in_format)
    if "stage" in table.colnames and not args.col and args.profile is None:
        return table
    opts = {k: v for k, v in _options(args).items()}
    columns = opts.pop("columns")
    if detail:
        opts["add_columns"] = "all,flag_detail"
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


def _verdict_lines(verdicts) -> list:
    """Counts per MK-type verdict, most frequent first, in aligned columns."""
    import numpy as np

    names, counts = np.unique(np.asarray(verdicts, dtype=str), return_counts=True)
    order = np.argsort(-counts, kind="stable")
    labels = [str(names[i]).replace("_", " ") or "(no type)" for i in order]
    width = max(len(t) for t in labels) if labels else 0
    digits = max(len(str(int(counts[i]))) for i in order) if labels else 1
    return [f"  {lab:<{width}}  {int(counts[i]):>{digits}}" for lab, i in zip(labels, order)]


def cmd_check_types(args) -> int:
    import numpy as np

    from .. import flags as F
    from ..catalog import write_table
    from ..catalog.atomic import check_output_path
    from ..catalog.formats import describe_columns

    if args.output:
        check_output_path(args.output, overwrite=args.overwrite, inputs=[args.input])
    table = _tagged_table(args)
    if "sptype_verdict" not in table.colnames:
        raise HrstageInputError(f"{Path(args.input).name} has no MK spectral-type column we recognise; "
                                "name it with --col sptype=COLUMN")
    _say(args, f"MK types of {len(table)} stars checked against their HR positions:")
    for line in _verdict_lines(table["sptype_verdict"]):
        _say(args, line)
    if args.list_conflicts:
        idcol = next((c for c in ("id", "name", "star", "target_id") if c in table.colnames), None)
        bad = np.flatnonzero(np.asarray(table["flags"], dtype=np.int64) & F.SPTYPE_CONFLICT)
        for i in bad[: args.list_conflicts]:
            who = table[idcol][i] if idcol else f"row {i}"
            _say(args, f"  {who}: catalogued {table['sptype_parsed'][i]} -> HR position suggests "
                       f"{table['sptype_suggested'][i]} ({table['sptype_nsigma'][i]:.1f} sigma)")
        if bad.size > args.list_conflicts:
            _say(args, f"  ... {bad.size - args.list_conflicts} more (--list-conflicts N shows more)")
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


def _add_branch_curves(table, feh):
    """Append the giant-branch loci (hrstage.classifier._branch.branch_curves) to the boundaries table."""
    import numpy as np
    from astropy.table import Table, vstack

    from ..classifier._branch import branch_curves

    labels = dict(table.meta.get("curve_labels", {}))
    curves = branch_curves(feh)
    extra = Table({
        "curve": np.concatenate([np.full(len(c[1]), n) for n, c in curves.items()]).astype(str),
        "mass": np.concatenate([c[1] for c in curves.values()]),
        "logt": np.concatenate([c[2] for c in curves.values()]),
        "logl": np.concatenate([c[3] for c in curves.values()]),
    })
    labels.update({n: c[0] for n, c in curves.items()})
    joined = vstack([table, extra], metadata_conflicts="silent")
    for col in ("mass", "logt", "logl"):
        joined[col].unit, joined[col].description = table[col].unit, table[col].description
    joined.meta = dict(table.meta)
    joined.meta["curve_labels"] = labels
    return joined


#: What each curve code of ``hrstage boundaries`` is (the ``curve_description`` column), for the
#: codes the stage map's own labels describe too briefly; the others take the map's label.
CURVE_WORDS = {
    "zams": "zero-age main sequence: where stars of each mass start core hydrogen burning",
    "ms_lower": "lower edge of the main-sequence region",
    "ms_upper": "upper edge of the main-sequence region (end of core hydrogen burning, or the age limit)",
    "binary_upper": "top of the band above the main sequence where unresolved binaries lie",
    "tams": "terminal-age main sequence: end of core hydrogen burning",
    "bgb": "base of the giant branch: where the Hertzsprung-gap crossing ends",
    "ehg": "end of the Hertzsprung gap: subgiant / giant boundary",
    "hei": "helium ignition: the tip of the giant branch (with a gap where the tracks change kind)",
    "giant_tip": "giant-branch tip for stars that ignite helium at its top",
    "agb": "asymptotic-giant-branch radius at the helium-ignition luminosity",
    "sg_lower": "lower edge of the supergiant region (the track of the lowest supergiant mass)",
    "bg_lower": "lower edge of the bright-giant region, below the supergiant edge",
    "wd_min": "lower edge of the white-dwarf band (most massive white dwarfs)",
    "wd_max": "upper edge of the white-dwarf band (least massive white dwarfs)",
    "zahb": "zero-age horizontal branch: start of core helium burning of low-mass stars",
    "hb_lower": "lower edge of the core-helium-burning band",
    "hb_upper": "upper edge of the core-helium-burning band",
}


def boundaries_table(feh: float):
    """The stage map's curves at ``feh`` with a ``curve_description`` column (words and source)."""
    import numpy as np

    from ..stagemap import stage_map

    table = _add_branch_curves(stage_map(feh).to_table(), feh)
    labels = table.meta.get("curve_labels", {})
    codes, inverse = np.unique(np.asarray(table["curve"], dtype=str), return_inverse=True)
    words = []
    for code in codes:
        label = labels.get(str(code), "")
        text = CURVE_WORDS.get(str(code))
        words.append(f"{text} [{label}]" if text and label else (text or label or str(code)))
    table.add_column(np.asarray(words, dtype=object)[inverse.reshape(-1)].astype(str), name="curve_description",
                     index=1)
    table["curve"].description = "Curve code (see curve_description and the curve_descriptions metadata)"
    table["curve_description"].description = "What the curve is, and the relation it comes from"
    table.meta["curve_descriptions"] = dict(zip((str(c) for c in codes), words))
    return table


def cmd_boundaries(args) -> int:
    from ..catalog import write_table

    table = boundaries_table(args.feh)
    table.meta["hrstage_caution"] = CAUTION_LINE
    write_table(table, args.output, format=args.out_format, overwrite=args.overwrite)
    _say(args, f"stage boundaries at [Fe/H] = {args.feh:+.2f} ({len(table)} rows) written to {args.output}")
    return EXIT_OK


def _settings_of(table, extra: dict) -> dict:
    """Settings shown in a report: ours plus what the tagged table's metadata says of its run."""
    out = dict(extra)
    for key in ("hrstage_profile", "hrstage_roles", "hrstage_options"):
        if key in table.meta and key.removeprefix("hrstage_") not in out:
            out[key.removeprefix("hrstage_")] = table.meta[key]
    return out


def _figure_and_report(table, *, title: str, figure_path, report_path, settings: dict, feh: float,
                       overwrite: bool, catalogue=None):
    """Draw the HR diagram of a tagged table, write it to ``figure_path`` (if given) and the HTML
    report (the same figure embedded) to ``report_path`` (if given)."""
    from ..plot import hr_diagram, write_figure
    from ..report import write_report

    ax = hr_diagram(feh=feh, title=title, **_plot_arrays(table))
    if figure_path is not None:
        write_figure(ax, figure_path, overwrite=overwrite)
    if report_path is not None:
        write_report(table, report_path, title=title, settings=settings, overwrite=overwrite, figure=ax,
                     catalogue=catalogue)


def _title_of(path) -> str:
    return f"Stage report: {Path(path).name}"


def cmd_report(args) -> int:
    import matplotlib

    matplotlib.use("Agg")
    from ..catalog.atomic import check_output_path

    report = Path(args.output)
    if report.suffix.lower() not in (".html", ".htm"):
        raise HrstageInputError(f"{report.name}: the report is an HTML file; give -o a .html name")
    figure = Path(args.figure) if args.figure else report.with_name(report.stem + "_hr.png")
    if figure.suffix.lower() not in (".png", ".pdf", ".svg"):
        raise HrstageInputError(f"--figure {figure.name}: expected a .png, .pdf or .svg name")
    if figure.resolve() == report.resolve():
        raise HrstageInputError("--figure and -o name the same file")
    for target in (report, figure):     # before any work: nothing is written if one cannot be
        check_output_path(target, overwrite=args.overwrite, inputs=[args.input])
    table = _tagged_table(args, detail=True)
    title = args.title or _title_of(args.input)
    settings = _settings_of(table, {"catalogue": Path(args.input).name, "draws": args.draws, "seed": args.seed})
    _figure_and_report(table, title=title, figure_path=figure, report_path=report, settings=settings,
                       feh=args.feh if args.feh is not None else 0.0, overwrite=args.overwrite)
    _say(args, f"report on {len(table)} stars written to {report}")
    _say(args, f"HR diagram: {figure}")
    _say(args, CAUTION_LINE)
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
    summary = classify_file(src, targets["table"], overwrite=args.overwrite, n_draws=args.draws, add_columns="all,flag_detail",
                            seed=args.seed, progress=_progress_wanted(args))
    from ..catalog import read_table

    tagged = read_table(targets["table"])
    own = args.catalogue is None
    title = "hrstage demo: Kestrel Deep Field target list (invented)" if own else f"hrstage demo: {src.name}"
    settings = {"catalogue": src.name, "draws": args.draws, "seed": args.seed, "columns": summary["mapping"]}
    _figure_and_report(tagged, title=title, figure_path=targets["figure"], report_path=targets["report"],
                       settings=settings, feh=0.0, overwrite=args.overwrite,
                       catalogue=targets["table"])
    print(f"demo catalogue: {src.name}" + (" (an invented target list; no real stars)" if own else ""))
    for line in _summary_lines(summary)[:-1]:
        print(line)
    print(f"HR diagram: {targets['figure']}")
    print(f"report: {targets['report']}")
    print(CAUTION_LINE)
    return EXIT_OK


# ------------------------------------------------------------------------------- parser
FORMAT_NAMES = ["fits", "votable", "ecsv", "csv", "parquet"]
INPUT_HELP = "catalogue (.fits, .vot/.xml, .ecsv, .csv, .parquet), tagged by 'hrstage classify' or not"
QUIET_HELP = "print nothing but errors"


def build_parser() -> argparse.ArgumentParser:
    p = _Parser(prog="hrstage",
                description="Evolutionary-stage labels for catalogue stars from their HR-diagram position. "
                            + CAUTION_LINE,
                epilog="Exit status: 0 success, 1 failure of the run, 2 user mistake (one-line message), "
                       "130 interrupted (Ctrl-C; nothing written, an earlier output left as it was).")
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
    c.add_argument("--out-format", choices=FORMAT_NAMES, help="output format (default: from the suffix)")
    c.add_argument("--chunk-rows", type=_positive_int, default=None,
                   help="rows per chunk; peak memory follows it (default 100000)")
    c.add_argument("--workers", type=_workers, default=1, metavar="N|auto",
                   help="processes classifying chunks in parallel (default 1; 'auto': one per usable core); "
                        "same output as one process, memory grows with N x chunk rows")
    c.add_argument("--threads", type=_workers, default="auto", metavar="N|auto",
                   help="with one process: chunks classified at the same time in threads (default auto: one "
                        "per idle core); same output with any number")
    c.add_argument("--prefix", default="", help="prefix for our column names (when the input already has one)")
    c.add_argument("--no-type-check", action="store_true", help="do not check MK spectral types")
    c.add_argument("--add-columns", default="all", metavar="all|brief|NAMES",
                   help="which of our columns to add: all (default); brief (stage, stage_prob, mass_est, "
                        "teff_used, logl_used, flags, and the MK verdict) for very large catalogues; or "
                        "comma-separated names (stage and flags always come)")
    c.add_argument("-q", "--quiet", action="store_true", help="no summary, no progress bar")
    _add_column_options(c)
    _add_model_options(c)
    c.set_defaults(func=cmd_classify)

    pl = sub.add_parser("plot", help="draw the HR diagram of a catalogue",
                        description="Draw an annotated HR diagram (stage regions, boundaries, flagged stars). "
                                    "An untagged INPUT is classified first, in memory.")
    pl.add_argument("input", help=INPUT_HELP)
    pl.add_argument("-o", "--output", required=True, help="figure file (.png, .pdf, .svg)")
    pl.add_argument("--overwrite", action="store_true", help="replace the figure if it exists")
    pl.add_argument("--color-by", default="stage", metavar="stage|teff|COLUMN",
                    help="fill colour of the points: 'stage' (default), 'teff' (the colour of a blackbody "
                         "at the star's Teff) or the name of any numeric column (colour scale with a "
                         "colour bar); the marker always shows the stage")
    pl.add_argument("--errors", choices=["bars", "ellipse"], default=None,
                    help="draw the 1-sigma uncertainties: error bars in log Teff and log L, or ellipses "
                         "that follow their correlation (default: none)")
    pl.add_argument("--title", default=None, help="title of the figure (default: the input's file name)")
    pl.add_argument("-q", "--quiet", action="store_true", help=QUIET_HELP)
    _add_column_options(pl)
    _add_model_options(pl)
    pl.set_defaults(func=cmd_plot)

    r = sub.add_parser("report", help="write the HTML report and the HR diagram of a catalogue",
                       description="Write an HTML report (stage counts, cautions, flagged stars, settings, "
                                   "the HR diagram) and the HR diagram as a figure file, for a catalogue "
                                   "tagged by 'hrstage classify' or not (an untagged INPUT is classified "
                                   "first, in memory). Titled from INPUT unless --title is given. "
                                   + CAUTION_LINE)
    r.add_argument("input", help=INPUT_HELP)
    r.add_argument("-o", "--output", required=True, metavar="REPORT.html", help="HTML report to write")
    r.add_argument("--figure", default=None, metavar="FILE",
                   help="HR diagram to write as well (.png, .pdf, .svg; default: REPORT_hr.png beside the report)")
    r.add_argument("--title", default=None, help="title of the report and figure (default: from INPUT's file name)")
    r.add_argument("--overwrite", action="store_true", help="replace the report and figure if they exist")
    r.add_argument("-q", "--quiet", action="store_true", help=QUIET_HELP)
    _add_column_options(r)
    _add_model_options(r)
    r.set_defaults(func=cmd_report)

    k = sub.add_parser("check-types", help="check catalogued MK spectral types against HR positions",
                       description="Compare each catalogued MK type (its luminosity class) with the stage "
                                   "of the star's HR position; print the verdict counts.")
    k.add_argument("input", help=INPUT_HELP)
    k.add_argument("-o", "--output", default=None, help="also write the checked catalogue")
    k.add_argument("--overwrite", action="store_true", help="replace OUTPUT if it exists (never the input)")
    k.add_argument("--list-conflicts", type=_nonneg_int, default=10, metavar="N",
                   help="print the first N conflicting stars (default 10, 0 for none)")
    k.add_argument("-q", "--quiet", action="store_true", help=QUIET_HELP)
    _add_column_options(k)
    _add_model_options(k)
    k.set_defaults(func=cmd_check_types)

    e = sub.add_parser("explain", help="explain the label of one star",
                       description="Print, step by step, how one star's Teff and L (or log g) lead to its "
                                   "stage, with the numbers behind each flag.")
    e.add_argument("--teff", type=float, required=True, help="effective temperature (K)")
    e.add_argument("--lum", type=float, default=None, help="luminosity (Lsun)")
    e.add_argument("--teff-err", type=float, default=None, help="1-sigma error of Teff (K)")
    e.add_argument("--lum-err", type=float, default=None, help="1-sigma error of the luminosity (Lsun)")
    e.add_argument("--logg", type=float, default=None, help="log g (cgs), used when --lum is not given")
    e.add_argument("--mass", type=float, default=None, help="known mass (Msun)")
    e.add_argument("--feh", type=_feh_value, default=None,
                   help=f"[Fe/H] in dex ({FEH_RANGE[0]:+g} .. {FEH_RANGE[1]:+g}; default: solar, flagged)")
    e.add_argument("--draws", type=_nonneg_int, default=DEFAULT_DRAWS, help=DRAWS_HELP)
    e.add_argument("--seed", type=int, default=DEFAULT_SEED, help=SEED_HELP)
    e.set_defaults(func=cmd_explain)

    b = sub.add_parser("boundaries", help="export the stage boundaries",
                       description="Write the stage-boundary curves at one metallicity as a table: one row "
                                   "per curve point (curve code, what the curve is, initial mass, log Teff, "
                                   "log L).")
    b.add_argument("-o", "--output", required=True, help="table file (.ecsv, .csv, .fits, .vot, .parquet)")
    b.add_argument("--feh", type=_feh_value, default=0.0,
                   help=f"[Fe/H] in dex ({FEH_RANGE[0]:+g} .. {FEH_RANGE[1]:+g}; default 0)")
    b.add_argument("--out-format", choices=FORMAT_NAMES, help="output format (default: from the suffix)")
    b.add_argument("--overwrite", action="store_true", help="replace OUTPUT if it exists")
    b.add_argument("-q", "--quiet", action="store_true", help=QUIET_HELP)
    b.set_defaults(func=cmd_boundaries)

    d = sub.add_parser("demo", help="run the bundled invented demo catalogue",
                       description="Classify the bundled demo catalogue (an invented planet-search target "
                                   "list, no real stars), or the one given with --catalogue, and write "
                                   "DIR/demo_tagged.ecsv, DIR/hr_diagram.png and DIR/report.html.")
    d.add_argument("--out", required=True, metavar="DIR", help="folder for the results (created)")
    d.add_argument("--overwrite", action="store_true", help="replace earlier demo results in DIR")
    d.add_argument("--draws", type=_nonneg_int, default=DEFAULT_DRAWS, help=DRAWS_HELP)
    d.add_argument("--seed", type=int, default=DEFAULT_SEED, help=SEED_HELP)
    d.add_argument("--catalogue", default=None, metavar="PATH",
                   help="use this catalogue instead of the bundled one (the report is titled from it)")
    d.set_defaults(func=cmd_demo)
    return p


#: Characters that are not shown as themselves in a message: control characters (raw bytes of a
#: binary file, terminal escapes) and the bidirectional-text controls (U+202A..U+202E,
#: U+2066..U+2069, U+200E/U+200F, U+061C), which can reorder what a terminal shows.
_BIDI = set("\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u200e\u200f\u061c")


def printable(text: str) -> str:
    """``text`` with every non-printable or bidirectional-control character written as an escape
    (``\\x00``, ``\\u202e``), so a message shows what the file holds, safely, on one line."""
    if text.isprintable() and not (_BIDI & set(text)):
        return text
    out = []
    for ch in text:
        if ch.isprintable() and ch not in _BIDI:
            out.append(ch)
        else:
            code = ord(ch)
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}")
    return "".join(out)


def _error(text: str) -> None:
    print(f"hrstage: error: {printable(text)}", file=sys.stderr)


def _quiet_broken_pipe() -> None:
    """The reader of our standard output went away (``hrstage explain ... | head``): stop quietly,
    as Unix tools do; what is left in Python's buffer goes nowhere instead of raising at exit."""
    import os

    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass


def run(argv) -> int:
    with catch_interrupts():
        try:
            return _run(argv)
        except KeyboardInterrupt:       # e.g. while the modules of the command are imported
            return _interrupted()


def _interrupted() -> int:
    print("hrstage: interrupted; nothing written (an earlier output is left as it was)", file=sys.stderr)
    return EXIT_INTERRUPTED


def _run(argv) -> int:
    parser = build_parser()
    want_tb = "--traceback" in argv
    argv = [a for a in argv if a != "--traceback"]   # accepted anywhere on the line
    try:
        try:
            args = parser.parse_args(argv)
        except _UsageError as exc:
            _error(str(exc))
            return EXIT_USAGE
        except SystemExit as exc:          # --help / --version
            return int(exc.code or 0)
        if not getattr(args, "command", None):
            parser.print_help()
            return EXIT_USAGE
        try:
            code = args.func(args)
            sys.stdout.flush()
            return code
        except HrstageInputError as exc:
            if interrupt_requested():
                return _interrupted()
            _error(exc.cli_message())
            return EXIT_USAGE
        except PermissionError as exc:      # an input we may not read, a folder we may not write in
            if interrupt_requested():
                return _interrupted()
            _error(f"permission denied: {exc.filename or exc}")
            return EXIT_USAGE
    except BrokenPipeError:
        _quiet_broken_pipe()
        return EXIT_BROKEN_PIPE
    except KeyboardInterrupt:
        return _interrupted()
    except Exception as exc:  # a bug or a system problem: one line unless --traceback
        if interrupt_requested():
            # what a Ctrl-C breaks on its way (a half-imported module, a generator left
            # running) is the interrupt, not a failure; no output was put in place after it
            return _interrupted()
        if want_tb:
            traceback.print_exc()
        text = str(exc).strip().splitlines()
        print(f"hrstage: failed: {type(exc).__name__}: {printable(text[0]) if text else ''} "
              "(run again with --traceback for details)", file=sys.stderr)
        return EXIT_FAILURE
