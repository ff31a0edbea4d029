"""Issue 16, what a new user meets on the command line: the report command, titles, messages in
command-line words, help on every option, one default number of draws, aligned counts, a closed
pipe, readable ``explain`` output, [Fe/H] checks, boundary descriptions, escaped bytes."""

from __future__ import annotations

import argparse
import inspect
import os
import subprocess
import sys

import numpy as np
import pytest
from astropy.table import Table

from hrstage.catalog import read_table, write_table
from hrstage.cli import main
from hrstage.cli.commands import build_parser, printable
from hrstage.defaults import DEFAULT_DRAWS
from hrstage.errors import HrstageInputError


def run(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def one_line_error(code, err):
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert code == 2 and len(lines) == 1 and lines[0].startswith("hrstage: error: "), (code, err)
    return lines[0]


def catalogue(tmp_path, name="my_targets.ecsv", n=24):
    rng = np.random.default_rng(11)
    t = Table({"star": [f"ZZ-{i:04d}" for i in range(n)], "teff": rng.uniform(3800, 8000, n),
               "teff_err": np.full(n, 80.0), "lum": 10 ** rng.uniform(-1.0, 2.2, n), "lum_err": np.full(n, 0.2),
               "sptype": ["G2V", "K1III", "F5V", "M0III"] * (n // 4)})
    p = tmp_path / name
    write_table(t, p)
    return p


# ------------------------------------------------------------------------ item 1: report
def test_report_for_an_untagged_catalogue_titled_from_it(tmp_path, capsys):
    src = catalogue(tmp_path)
    rep = tmp_path / "out" / "mine.html"
    rep.parent.mkdir()
    code, out, err = run(capsys, "report", src, "-o", rep, "--draws", "16")
    assert code == 0, err
    fig = rep.with_name("mine_hr.png")
    assert rep.is_file() and fig.is_file() and fig.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    html = rep.read_text(encoding="utf-8")
    assert "my_targets.ecsv" in html and "Kestrel" not in html
    assert "indicative" in out
    # nothing replaced without --overwrite, and the figure name can be chosen; a tagged input too
    code, _, err = run(capsys, "report", src, "-o", rep)
    assert "--overwrite" in one_line_error(code, err)
    tagged = tmp_path / "tagged.ecsv"
    assert run(capsys, "classify", src, "-o", tagged, "-q")[0] == 0
    code, _, err = run(capsys, "report", tagged, "-o", tmp_path / "t.html", "--figure", tmp_path / "t.svg",
                       "--title", "Night 3 targets")
    assert code == 0, err
    assert "Night 3 targets" in (tmp_path / "t.html").read_text(encoding="utf-8")
    assert (tmp_path / "t.svg").read_text().lstrip().startswith("<?xml")


def test_report_refuses_a_non_html_name(tmp_path, capsys):
    code, _, err = run(capsys, "report", catalogue(tmp_path), "-o", tmp_path / "r.txt")
    assert ".html" in one_line_error(code, err)
    assert not any(p.name.startswith("r") for p in tmp_path.iterdir())


@pytest.mark.slow
def test_demo_with_own_catalogue_is_titled_from_it(tmp_path, capsys):
    src = catalogue(tmp_path, "field_b.ecsv", n=40)
    code, out, err = run(capsys, "demo", "--out", tmp_path / "d", "--catalogue", src, "--draws", "8")
    assert code == 0, err
    html = (tmp_path / "d" / "report.html").read_text(encoding="utf-8")
    assert "field_b.ecsv" in html and "Kestrel" not in html
    assert "invented target list" not in out


# ------------------------------------------------------------ item 6: words, help, draws
def _all_actions(parser):
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            for name, sub in action.choices.items():
                for a in sub._actions:
                    yield name, a
        else:
            yield "hrstage", action


def test_every_option_has_help():
    missing = [f"{cmd} {a.option_strings or a.dest}" for cmd, a in _all_actions(build_parser())
               if not isinstance(a, argparse._SubParsersAction) and not (a.help or "").strip()]
    assert not missing, missing


def test_one_default_number_of_draws_everywhere():
    from hrstage.classifier import StageClassifier, explain_star
    from hrstage.engine import make_options
    from hrstage.engine.options import ClassifyOptions

    defaults = {cmd: a.default for cmd, a in _all_actions(build_parser()) if a.dest == "draws"}
    assert set(defaults) == {"classify", "plot", "report", "check-types", "explain", "demo"}
    assert set(defaults.values()) == {DEFAULT_DRAWS}
    assert ClassifyOptions().n_draws == make_options().n_draws == DEFAULT_DRAWS
    assert inspect.signature(explain_star).parameters["n_draws"].default == DEFAULT_DRAWS
    assert StageClassifier().n_draws == DEFAULT_DRAWS
    helps = {a.help for cmd, a in _all_actions(build_parser()) if a.dest == "draws"}
    assert all(f"default {DEFAULT_DRAWS}" in h for h in helps)


def test_messages_use_command_line_words(tmp_path, capsys):
    src = catalogue(tmp_path)
    out = tmp_path / "o.ecsv"
    out.write_text("keep")
    line = one_line_error(*run(capsys, "classify", src, "-o", out)[::2])
    assert "--overwrite" in line and "overwrite=True" not in line
    line = one_line_error(*run(capsys, "classify", src, "-o", tmp_path / "o.table")[::2])
    assert "--out-format" in line and "explicitly" not in line
    odd = tmp_path / "odd.dat"
    odd.write_text("a,b\n1,2\n")
    line = one_line_error(*run(capsys, "classify", odd, "-o", tmp_path / "x.csv")[::2])
    assert "--in-format" in line
    # the Python interface keeps its own words
    from hrstage.catalog.atomic import check_output_path

    with pytest.raises(HrstageInputError, match="overwrite=True") as info:
        check_output_path(out)
    assert "--overwrite" in info.value.cli_message()


# ---------------------------------------------------------- item 5: counts, pipe, explain
def test_check_types_counts_are_aligned(tmp_path, capsys):
    code, out, err = run(capsys, "check-types", catalogue(tmp_path), "--list-conflicts", "0", "--draws", "0")
    assert code == 0, err
    rows = [ln for ln in out.splitlines() if ln.startswith("  ")]
    assert len(rows) >= 2
    ends = {len(ln) for ln in rows}                    # right-aligned counts end in one column
    assert len(ends) == 1, rows
    starts = {len(ln) - len(ln.rstrip("0123456789")) for ln in rows}
    assert all(ln.rstrip("0123456789").endswith(" ") for ln in rows)
    assert "_" not in "".join(ln.rstrip("0123456789") for ln in rows), rows   # words, not snake_case
    del starts


def test_closed_pipe_is_quiet(tmp_path):
    env = {**os.environ, "MPLBACKEND": "Agg"}
    proc = subprocess.Popen([sys.executable, "-m", "hrstage.cli", "explain", "--teff", "5000", "--lum", "3"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env)
    proc.stdout.close()                 # the reader has gone before anything is written
    err = proc.stderr.read().decode()
    code = proc.wait(timeout=300)
    assert err == "", err               # was "hrstage: failed: BrokenPipeError ..."
    assert code == 141                  # 128 + SIGPIPE, as a shell reports a tool stopped by it


def test_explain_names_flags_and_describes_the_map(capsys):
    code, out, err = run(capsys, "explain", "--teff", "4750", "--lum", "55")
    assert code == 0, err
    assert "StageMap(" not in out and "Flags 33" not in out
    assert "COOL_BUT_MASSIVE" in out and "NO_METALLICITY" in out and "value 33" in out
    assert "Stage map at [Fe/H] = +0.00" in out and "Msun" in out


# ------------------------------------------------------------------- items 7 and 17: [Fe/H]
@pytest.mark.parametrize("bad", ["nan", "inf", "-inf", "50", "-30", "abc"])
def test_impossible_feh_is_refused(tmp_path, capsys, bad):
    src = catalogue(tmp_path)
    for argv in (("classify", src, "-o", tmp_path / "o.ecsv"), ("explain", "--teff", "5000", "--lum", "2"),
                 ("plot", src, "-o", tmp_path / "o.png"), ("boundaries", "-o", tmp_path / "b.ecsv")):
        code, _, err = run(capsys, *argv, f"--feh={bad}")
        assert "--feh" in one_line_error(code, err)
    assert sorted(p.name for p in tmp_path.iterdir()) == [src.name]
    from hrstage.engine import classify_table

    with pytest.raises(HrstageInputError, match="feh"):
        classify_table(read_table(src), feh=float(bad) if bad != "abc" else bad)


def test_clipped_feh_and_its_limit_never_print_alike():
    from hrstage.classifier import classify_hr

    # -2.3033 is below the fits' Z = 1e-4 limit ([Fe/H] = log10(1e-4/0.02) = -2.301, Z_sun = 0.02 of
    # hrstage.models.metallicity): at two decimals both print -2.30
    res = classify_hr(np.log10([5000.0]), np.array([0.4]), feh=-2.3033)
    text = str(res.flag_detail[0])
    assert "[Fe/H]=-2.303 outside" in text and "[Fe/H]=-2.301 used" in text, text


# -------------------------------------------------------------------- item 8: boundaries
@pytest.mark.parametrize("suffix", [".ecsv", ".fits"])
def test_boundaries_describe_each_curve(tmp_path, capsys, suffix):
    out = tmp_path / f"b{suffix}"
    assert run(capsys, "boundaries", "-o", out)[0] == 0
    t = read_table(out)
    assert t.colnames[:2] == ["curve", "curve_description"]
    codes = np.asarray(t["curve"], dtype=str)
    desc = np.asarray(t["curve_description"], dtype=str)
    for code in ("ehg", "bgb", "hei", "zahb", "bg_lower", "sg_lower", "zams"):
        d = set(desc[codes == code])
        assert len(d) == 1 and len(next(iter(d))) > 20, (code, d)
    assert len(set(desc)) == len(set(codes))


# -------------------------------------------------------------- item 18: bytes, folders
def test_printable_escapes_bytes_and_bidi_controls():
    assert printable("ok text") == "ok text"
    assert printable("a\x00b\x1b[31m") == "a\\x00b\\x1b[31m"
    assert printable("name\u202eevil") == "name\\u202eevil"


def test_binary_file_named_csv_gives_an_escaped_one_line_error(tmp_path, capsys):
    src = tmp_path / "blob.csv"
    src.write_bytes(bytes(range(256)) * 4)
    code, _, err = run(capsys, "classify", src, "-o", tmp_path / "o.ecsv")
    line = one_line_error(code, err)
    assert line.isprintable() and "\u202e" not in line
    assert not (tmp_path / "o.ecsv").exists()


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="uses the Linux /proc file system")
def test_output_folder_we_cannot_write_in_is_a_user_error(tmp_path, capsys):
    src = catalogue(tmp_path)
    # no process may create files in /proc (not even root): an unwritable folder on any Linux
    code, _, err = run(capsys, "classify", src, "-o", "/proc/hrstage_out.ecsv")
    line = one_line_error(code, err)
    assert "PermissionError" not in line and "failed" not in line


@pytest.mark.parametrize("suffix", [".ecsv", ".csv", ".parquet", ".fits"])
def test_header_only_csv_gives_an_empty_tagged_table(tmp_path, capsys, suffix):
    src = tmp_path / "empty.csv"
    src.write_text("star,teff,lum\n")
    out = tmp_path / f"o{suffix}"
    code, text, err = run(capsys, "classify", src, "-o", out)
    assert code == 0, err                     # was: exit 2 "nothing to write"
    back = read_table(out)
    assert len(back) == 0 and back.colnames[:3] == ["star", "teff", "lum"]
    assert {"stage", "stage_prob", "flags", "flag_text", "teff_used"} <= set(back.colnames)
    assert "0 rows classified" in text


def test_columns_alike_but_for_case_are_named(tmp_path, capsys):
    src = tmp_path / "two.csv"
    src.write_text("star,Teff,teff,lum\nA,5000,5100,3\n")
    code, text, err = run(capsys, "classify", src, "-o", tmp_path / "o.ecsv")
    assert code == 0, err
    assert "columns Teff, teff all fit role teff: Teff used" in text and "--col teff=NAME" in text


def test_bidi_controls_never_reach_the_report(tmp_path, capsys):
    src = catalogue(tmp_path)
    t = read_table(src)
    t["star"] = [f"ZZ\u202e{i}-evil" for i in range(len(t))]
    write_table(t, src, overwrite=True)
    rep = tmp_path / "r.html"
    code, _, err = run(capsys, "report", src, "-o", rep, "--draws", "0")
    assert code == 0, err
    html = rep.read_text(encoding="utf-8")
    assert "\u202e" not in html and "[U+202E]" in html
