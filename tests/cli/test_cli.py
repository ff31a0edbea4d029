"""The ``hrstage`` command: help, exit codes 0/1/2, one-line errors, nothing left behind."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.table import Table

from hrstage.catalog import read_table, write_table
from hrstage.catalog.atomic import TEMP_MARK
from hrstage.cli import main

SUBCOMMANDS = ("classify", "plot", "check-types", "explain", "boundaries", "demo")


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def cat(tmp_path, name="in.ecsv", n=40):
    rng = np.random.default_rng(2)
    t = Table({"star": [f"TGT-{i:06d}" for i in range(n)], "teff": rng.uniform(3500, 9000, n),
               "lum": 10 ** rng.uniform(-1.5, 2.5, n),
               "sptype": ["G2V", "K0III", "M2III", "A0V"] * (n // 4)})
    p = tmp_path / name
    write_table(t, p)
    return p, t


def assert_one_line_usage_error(code, err):
    assert code == 2
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("hrstage: error: "), err
    assert "Traceback" not in err


@pytest.mark.parametrize("sub", SUBCOMMANDS)
def test_help_of_each_subcommand(capsys, sub):
    code, out, _ = run(capsys, sub, "--help")
    assert code == 0 and "usage: hrstage " + sub in out


def test_top_help_and_version(capsys):
    code, out, _ = run(capsys, "--help")
    assert code == 0 and all(s in out for s in SUBCOMMANDS) and "Exit status" in out
    code, out, _ = run(capsys, "--version")
    assert code == 0 and out.startswith("hrstage ")
    code, _, err = run(capsys, "frobnicate")
    assert_one_line_usage_error(code, err)


def test_classify_writes_and_refuses_overwrite(tmp_path, capsys):
    src, t = cat(tmp_path)
    out = tmp_path / "out.fits"
    code, text, err = run(capsys, "classify", str(src), "-o", str(out))
    assert code == 0, err
    assert "40 rows classified" in text and "indicative" in text
    back = read_table(out)
    assert list(back["star"]) == list(t["star"]) and "stage" in back.colnames
    before = out.read_bytes()
    code, _, err = run(capsys, "classify", str(src), "-o", str(out))
    assert_one_line_usage_error(code, err)
    assert "already exists" in err and out.read_bytes() == before
    code, _, err = run(capsys, "classify", str(src), "-o", str(out), "--overwrite", "--chunk-rows", "7", "-q")
    assert code == 0 and len(read_table(out)) == 40
    code, _, err = run(capsys, "classify", str(src), "-o", str(src), "--overwrite")
    assert_one_line_usage_error(code, err)
    assert "is the input" in err


def test_classify_column_options(tmp_path, capsys):
    t = Table({"T": [5772.0, 4500.0], "L": [1.0, 90.0]})
    src = tmp_path / "odd.csv"
    write_table(t, src)
    code, _, err = run(capsys, "classify", str(src), "-o", str(tmp_path / "o.parquet"))
    assert_one_line_usage_error(code, err)
    assert "no column profile fits odd.csv" in err and "--col ROLE=NAME" in err
    code, text, err = run(capsys, "classify", str(src), "-o", str(tmp_path / "o.parquet"),
                          "--col", "teff=T", "--col", "lum=L", "--feh", "-0.2")
    assert code == 0, err
    assert read_table(tmp_path / "o.parquet")["stage"][0] == "main_sequence"   # the Sun (IAU 2015 B3)
    code, _, err = run(capsys, "classify", str(src), "-o", str(tmp_path / "p.csv"), "--col", "teff")
    assert_one_line_usage_error(code, err)


def _no_output(tmp_path, keep):
    left = sorted(p.name for p in tmp_path.iterdir() if p.name not in keep)
    assert left == [], left
    assert not any(TEMP_MARK in p.name for p in tmp_path.iterdir())


def test_malformed_inputs_exit_2_and_leave_nothing(tmp_path, capsys):
    good, _ = cat(tmp_path, "good.fits", n=4000)
    raw = good.read_bytes()
    cases = {
        "truncated.fits": raw[: 2880 * 2 + 1000],
        "empty.csv": b"",
        "badrows.csv": b"teff,lum\n5000,1\n6000\n",
        "words.csv": b"teff,lum\n5000,1\nhot,2\n",
        "logteff.csv": b"teff,lum\n3.76,1\n3.70,2\n3.9,5\n",
        "garbage.parquet": b"PAR1 this is not parquet",
    }
    keep = {"good.fits", *cases}
    for name, data in cases.items():
        (tmp_path / name).write_bytes(data)
    for name in cases:
        out = tmp_path / f"out_{name}.parquet"
        code, _, err = run(capsys, "classify", str(tmp_path / name), "-o", str(out))
        assert_one_line_usage_error(code, err)
        assert name in err or "column teff" in err, err
        _no_output(tmp_path, keep)


def test_missing_input_and_unknown_suffix(tmp_path, capsys):
    code, _, err = run(capsys, "classify", str(tmp_path / "none.csv"), "-o", str(tmp_path / "o.csv"))
    assert_one_line_usage_error(code, err)
    assert "does not exist" in err
    src, _ = cat(tmp_path)
    code, _, err = run(capsys, "classify", str(src), "-o", str(tmp_path / "o.xlsx"))
    assert_one_line_usage_error(code, err)


def test_runtime_failure_is_exit_1(tmp_path, capsys, monkeypatch):
    src, _ = cat(tmp_path)

    def boom(*a, **k):
        raise RuntimeError("disk on fire")

    monkeypatch.setattr("hrstage.engine.chunk.classify_chunk", boom)
    code, _, err = run(capsys, "classify", str(src), "-o", str(tmp_path / "o.ecsv"))
    assert code == 1 and "disk on fire" in err and "Traceback" not in err
    _no_output(tmp_path, {"in.ecsv"})


def test_check_types_and_plot(tmp_path, capsys):
    src, _ = cat(tmp_path, n=40)
    code, text, err = run(capsys, "check-types", str(src), "--list-conflicts", "3")
    assert code == 0, err
    assert "MK types of 40 stars" in text
    fig = tmp_path / "hr.png"
    code, text, err = run(capsys, "plot", str(src), "-o", str(fig))
    assert code == 0, err
    assert fig.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"                # PNG signature (ISO 15948)


def test_explain_and_boundaries(tmp_path, capsys):
    code, text, err = run(capsys, "explain", "--teff", "5772", "--lum", "1", "--draws", "50")
    assert code == 0, err
    assert "main" in text.lower()
    code, _, err = run(capsys, "explain", "--teff", "5772")
    assert_one_line_usage_error(code, err)
    out = tmp_path / "bounds.ecsv"
    code, text, err = run(capsys, "boundaries", "-o", str(out), "--feh", "-0.5")
    assert code == 0, err
    assert len(read_table(out)) > 0


def test_demo(tmp_path, capsys):
    out = tmp_path / "demo_output"
    code, text, err = run(capsys, "demo", "--out", str(out), "--draws", "16")
    assert code == 0, err
    assert {p.name for p in out.iterdir()} == {"demo_tagged.ecsv", "hr_diagram.png", "report.html"}
    # data, figure and report get the mode of a normal new file (0o666 minus the umask; POSIX
    # open(2), common practice), not the 0o600 of a temporary file
    import os

    mask = os.umask(0)
    os.umask(mask)
    assert {p.stat().st_mode & 0o777 for p in out.iterdir()} == {0o666 & ~mask}
    assert "no real stars" in text and text.strip().splitlines()[-1].startswith("Labels are indicative")
    tagged = read_table(out / "demo_tagged.ecsv")
    from hrstage.cli.commands import demo_catalogue_path

    n_demo = len(read_table(demo_catalogue_path()))  # 3000 invented targets plus the added blocks
    assert len(tagged) == n_demo >= 3000 and str(tagged["target_id"][0]).startswith("KDF-")
    # the targets seen only through Gaia photometry (hot stars, white dwarfs) are all placed
    phot = np.char.startswith(np.asarray(tagged["target_id"], dtype=str), "KDF-P")
    assert phot.sum() >= 10 and np.all(np.asarray(tagged["stage"])[phot] != "unclassified")
    # MISSING_INPUT ("a required input is missing") only on rows left unclassified: a masked [Fe/H]
    # or MK type is optional (NO_METALLICITY / not checked), not a missing required input
    from hrstage import flags as F

    flags = np.asarray(tagged["flags"], dtype=np.int64)
    missing = (flags & F.MISSING_INPUT) != 0
    assert np.all(np.asarray(tagged["stage"])[missing] == "unclassified")
    assert np.any(flags & F.NO_METALLICITY)
    code, _, err = run(capsys, "demo", "--out", str(out))
    assert_one_line_usage_error(code, err)
    code, _, err = run(capsys, "demo", "--out", str(out), "--overwrite", "--draws", "0")
    assert code == 0, err


def test_classify_workers_and_scalar_feh(tmp_path, capsys):
    src = tmp_path / "in.parquet"
    _, t = cat(tmp_path, n=400)
    write_table(t, src)
    outs = []
    for n in ("1", "2"):
        out = tmp_path / f"out{n}.parquet"
        code, text, err = run(capsys, "classify", str(src), "-o", str(out), "--workers", n, "--chunk-rows", "100",
                              "--draws", "8", "--feh", "-1.35", "-q")
        assert code == 0, err
        outs.append(out.read_bytes())
    assert outs[0] == outs[1]
    back = read_table(tmp_path / "out2.parquet")
    # no feh column: the default -1.35 reaches the classifier as one value (exact map, not -1.25)
    np.testing.assert_allclose(np.asarray(back["feh_used"], dtype=float), -1.35)
    code, _, err = run(capsys, "classify", str(src), "-o", str(tmp_path / "x.parquet"), "--workers", "0")
    assert_one_line_usage_error(code, err)
    code, _, err = run(capsys, "classify", str(src), "-o", str(tmp_path / "x.parquet"), "--workers", "auto", "-q")
    assert code == 0, err
