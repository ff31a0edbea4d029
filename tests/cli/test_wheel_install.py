"""A wheel built from the source runs ``hrstage demo`` in a fresh environment with no checkout.

Offline: the wheel is built without build isolation (setuptools of this environment) and installed
with ``--no-index --no-deps``; the fresh venv sees this environment's third-party packages through
a ``.pth`` line (site folders listed there are added to ``sys.path`` without running their own
``.pth`` files, so the editable install of the checkout is not picked up).
"""

from __future__ import annotations

import os
import shutil
import site
import subprocess
import sys
import sysconfig
import venv
import zipfile
from pathlib import Path

import pytest

from hrstage.cli.commands import DEMO_NAME

ROOT = Path(__file__).resolve().parents[2]
SKIP_DIRS = {".git", ".venv", "build", "dist", "demo_output", ".pytest_cache", ".hypothesis", "__pycache__",
             "benchmarks", "tests", "docs"}


def _copy_source(dst: Path) -> Path:
    def ignore(folder, names):
        return [n for n in names if n in SKIP_DIRS or n.endswith(".egg-info") or n.endswith(".pyc")]

    shutil.copytree(ROOT, dst, ignore=ignore)
    return dst


def _run(cmd, **kw):
    res = subprocess.run(cmd, capture_output=True, text=True, timeout=600, **kw)
    assert res.returncode == 0, f"{cmd[:4]} failed ({res.returncode}):\n{res.stdout[-2000:]}\n{res.stderr[-3000:]}"
    return res


@pytest.mark.slow
def test_wheel_carries_demo_and_runs_without_checkout(tmp_path):
    src = _copy_source(tmp_path / "src")
    wheels = tmp_path / "wheels"
    build = _run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "--no-index",
                  "-w", str(wheels), str(src)], cwd=tmp_path)
    assert "deprecat" not in (build.stdout + build.stderr).lower(), build.stderr   # issue 16 item 12
    (whl,) = wheels.glob("hrstage-*.whl")
    with zipfile.ZipFile(whl) as zf:
        names = zf.namelist()
    assert f"hrstage/data/demo/{DEMO_NAME}" in names
    assert not any(n.startswith(("data/", "tests/")) for n in names)

    env_dir = tmp_path / "venv"
    venv.EnvBuilder(with_pip=False).create(env_dir)
    py = env_dir / ("Scripts/python.exe" if os.name == "nt" else "bin/python")
    new_site = Path(_run([str(py), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"]).stdout.strip())
    ours = {sysconfig.get_paths()["purelib"], sysconfig.get_paths()["platlib"], *site.getsitepackages()}
    (new_site / "_reuse_test_env.pth").write_text("\n".join(sorted(ours)) + "\n")
    _run([sys.executable, "-m", "pip", "--python", str(py), "install", "--no-index", "--no-deps", "--quiet",
          str(whl)], cwd=tmp_path)

    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    env["MPLBACKEND"] = "Agg"
    where = _run([str(py), "-c", "import hrstage; print(hrstage.__file__)"], cwd=work, env=env).stdout.strip()
    assert Path(where).resolve().is_relative_to(env_dir.resolve()), where
    exe = env_dir / ("Scripts/hrstage.exe" if os.name == "nt" else "bin/hrstage")
    res = _run([str(exe), "demo", "--out", "demo_out", "--draws", "8"], cwd=work, env=env)
    out = work / "demo_out"
    assert {p.name for p in out.iterdir()} >= {"hr_diagram.png", "report.html"}
    from hrstage.catalog import read_table
    from hrstage.cli.commands import demo_catalogue_path

    assert f"{len(read_table(demo_catalogue_path()))} rows classified" in res.stdout
