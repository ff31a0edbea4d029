"""Fixtures for the derive tests: readers of the external validation files (never copied here)."""

from __future__ import annotations

import csv
import math

import numpy as np
import pytest


def _number(text: str) -> float:
    """A table cell as float: '...'/'.....'/'' -> NaN; trailing markers (* : ?) stripped."""
    t = text.strip().rstrip("*:?")
    if not t or set(t) <= {"."}:
        return math.nan
    try:
        return float(t)
    except ValueError:
        return math.nan


def parse_dwarf_sequence(path) -> dict:
    """Parse the Pecaut & Mamajek mean dwarf sequence (version 2024.05.15) into column arrays.

    The table starts after the first header line beginning with '#SpT' and ends at the repeated
    header; notes after it are ignored. Missing values ('...') become NaN; the spectral type
    column stays text.
    """
    names = None
    rows = []
    with open(path, encoding="utf-8", errors="replace") as fh:
        for line in fh:
            if line.startswith("#SpT"):
                if names is None:
                    names = line.lstrip("#").split()
                    continue
                break  # the repeated header closes the table
            if names is None or line.startswith("#") or not line.strip():
                continue
            rows.append(line.split())
    if names is None or not rows:
        raise ValueError(f"{path}: no dwarf-sequence table found")
    ncol = len(names)
    out = {}
    for j, name in enumerate(names):
        if name in out:  # the trailing duplicate SpT column
            continue
        cells = [r[j] if j < len(r) else "..." for r in rows]
        out[name] = np.array(cells, dtype=object) if name == "SpT" else np.array([_number(c) for c in cells])
    assert ncol >= 10
    return out


@pytest.fixture(scope="session")
def dwarf_sequence(validation_file):
    return parse_dwarf_sequence(validation_file("mamajek_dwarf_sequence.txt"))


def _read_csv(path, columns):
    with open(path, newline="", encoding="utf-8") as fh:
        reader = csv.DictReader(fh)
        data = {c: [] for c in columns}
        for row in reader:
            for c in columns:
                data[c].append(row.get(c, ""))
    return data


@pytest.fixture(scope="session")
def gaia_white_dwarfs(validation_file):
    cols = ["Plx", "Gmag", "BPmag", "RPmag", "TeffH", "loggH", "MassH", "spectype"]
    raw = _read_csv(validation_file("gaia_white_dwarfs.csv"), cols)
    out = {c: np.array([_number(v) for v in raw[c]]) for c in cols if c != "spectype"}
    out["spectype"] = np.array(raw["spectype"], dtype=object)
    return out


@pytest.fixture(scope="session")
def bright_stars(validation_file):
    cols = ["plx_mas", "e_plx_mas", "vmag", "sptype", "b_v"]
    raw = _read_csv(validation_file("bright_stars_hip.csv"), cols)
    out = {c: np.array([_number(v) for v in raw[c]]) for c in cols if c != "sptype"}
    out["sptype"] = np.array(raw["sptype"], dtype=object)
    return out
