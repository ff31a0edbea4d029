"""Helpers shared by the before/after benchmark scripts (not a benchmark itself)."""

from __future__ import annotations

import importlib.util
import os
import subprocess
import sys
import time

import numpy as np

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))


def median_time(fn, repeats=5):
    """Median wall-clock seconds of ``repeats`` calls of ``fn``."""
    ts = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t0)
    return float(np.median(ts))


def git_show(rev, path):
    """Text of ``path`` at git revision ``rev`` of this checkout."""
    return subprocess.run(["git", "show", f"{rev}:{path}"], cwd=ROOT, check=True, capture_output=True,
                          text=True).stdout


def exec_module(name, src, label, package):
    """Run ``src`` as module ``name`` inside ``package`` (so its relative imports resolve)."""
    spec = importlib.util.spec_from_loader(name, loader=None)
    mod = importlib.util.module_from_spec(spec)
    mod.__package__ = package
    sys.modules[name] = mod
    exec(compile(src, label, "exec"), mod.__dict__)
    return mod
