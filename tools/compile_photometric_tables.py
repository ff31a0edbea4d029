"""Compile the package's hot-star and white-dwarf photometry tables from the published files.

Reads (never copies) the project's shared reference files and writes the columns hrstage needs as
ECSV with the citation in the metadata:

* ``hrstage/data/hot_dwarf_sequence.ecsv`` — the O3V-F0V rows of the Pecaut & Mamajek (2013)
  mean dwarf sequence (E. Mamajek's extended table, version 2024.05.15): SpT, Teff, BC_V, B-V,
  Gaia DR2 Bp-Rp and G-V, M_V.
* ``hrstage/data/wd_synthetic_photometry.ecsv`` — Teff, log g, mass, M_bol and the synthetic
  absolute magnitudes B, V, G, G_BP, G_RP of the Montreal DA (pure-H) and DB (pure-He) white-dwarf
  sequences (2019-08 release).

Usage::

    python tools/compile_photometric_tables.py --validation-dir DIR --models-dir DIR

The directories default to ``$HRSTAGE_VALIDATION_DIR`` and ``$HRSTAGE_MODELS_DIR`` (the shared
``data/validation`` and ``data/models`` folders beside the checkout).
"""

from __future__ import annotations

import argparse
import math
import os
from pathlib import Path

import numpy as np
from astropy.table import Table

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "hrstage" / "data"

PM13_CITATION = ("Pecaut, M. J. & Mamajek, E. E. 2013, ApJS 208, 9, 'Intrinsic colors, temperatures, and "
                 "bolometric corrections of pre-main-sequence stars', Table 5, as extended by E. Mamajek in "
                 "'A Modern Mean Dwarf Stellar Color and Effective Temperature Sequence', version 2024.05.15 "
                 "(BC_V on the IAU 2015 scale, M_bol,sun = 4.74; Gaia DR2 Bp-Rp and G-V from B9V on)")
WD_CITATION = {
    "H": ("Montreal white-dwarf synthetic photometry, 2019-08 release, pure-hydrogen (DA) grid: Holberg & "
          "Bergeron 2006, AJ 132, 1221; Kowalski & Saumon 2006, ApJ 651, L137; Tremblay, Bergeron & "
          "Gianninas 2011, ApJ 730, 128; Blouin et al. 2018, ApJ 863, 184; cooling sequences Bedard et al. "
          "2020, ApJ 901, 93"),
    "He": ("Montreal white-dwarf synthetic photometry, 2019-08 release, pure-helium (DB/DC) grid: Bergeron "
           "et al. 2011, ApJ 737, 28; Blouin et al. 2018, ApJ 863, 184; cooling sequences Bedard et al. 2020, "
           "ApJ 901, 93"),
}


def _number(text):
    t = text.strip().rstrip("*:?")
    if not t or set(t) <= {"."}:
        return math.nan
    try:
        return float(t)
    except ValueError:
        return math.nan


def dwarf_sequence(path: Path) -> Table:
    names, rows = None, []
    with open(path, encoding="utf-8", errors="replace") as fh:
        for line in fh:
            if line.startswith("#SpT"):
                if names is None:
                    names = line.lstrip("#").split()
                    continue
                break
            if names is None or line.startswith("#") or not line.strip():
                continue
            rows.append(line.split())
    col = {n: j for j, n in reversed(list(enumerate(names)))}
    keep = []
    for r in rows:
        keep.append(r)
        if r[0] == "F0V":
            break
    t = Table()
    t["spt"] = [r[0] for r in keep]
    for name, src, unit, desc in [
        ("teff", "Teff", "K", "effective temperature"),
        ("bc_v", "BCv", "mag", "V-band bolometric correction (M_bol,sun = 4.74)"),
        ("b_v", "B-V", "mag", "Johnson B-V"),
        ("bp_rp", "Bp-Rp", "mag", "Gaia DR2 BP-RP (nan where the source gives none: O3V-B8V)"),
        ("g_v", "G-V", "mag", "Gaia G minus Johnson V (nan where the source gives none)"),
        ("m_v", "Mv", "mag", "absolute visual magnitude"),
        ("m_g", "M_G", "mag", "absolute Gaia G magnitude (nan where the source gives none)"),
    ]:
        t[name] = np.array([_number(r[col[src]]) for r in keep])
        t[name].unit = unit
        t[name].description = desc
    t.meta = {"title": "Hot part (O3V-F0V) of the Pecaut & Mamajek mean dwarf sequence",
              "source": PM13_CITATION,
              "compiled_by": "tools/compile_photometric_tables.py (columns extracted, values unchanged)"}
    return t


def wd_grid(path: Path, atmosphere: str) -> Table:
    header, rows = None, []
    with open(path, encoding="utf-8") as fh:
        for line in fh:
            s = line.split()
            if not s or line.lstrip().startswith("#"):
                continue
            if s[0] == "Teff":
                header = s
                continue
            rows.append([float(x) for x in s])
    idx = {n: header.index(n) for n in ("Teff", "logg", "M/Mo", "Mbol", "B", "V", "G", "G_BP", "G_RP")}
    a = np.array(rows)
    t = Table()
    t["atmosphere"] = [atmosphere] * len(a)
    for name, src, unit, desc in [
        ("teff", "Teff", "K", "effective temperature"),
        ("logg", "logg", "dex(cm/s2)", "log10 surface gravity"),
        ("mass", "M/Mo", "solMass", "white-dwarf mass on the cooling sequence"),
        ("mbol", "Mbol", "mag", "absolute bolometric magnitude (M_bol,sun = 4.74)"),
        ("m_b", "B", "mag", "absolute Johnson B"),
        ("m_v", "V", "mag", "absolute Johnson V"),
        ("m_g", "G", "mag", "absolute Gaia G (DR2 passband)"),
        ("m_bp", "G_BP", "mag", "absolute Gaia BP (DR2 passband)"),
        ("m_rp", "G_RP", "mag", "absolute Gaia RP (DR2 passband)"),
    ]:
        t[name] = a[:, idx[src]]
        t[name].unit = unit
        t[name].description = desc
    return t


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--validation-dir", default=os.environ.get("HRSTAGE_VALIDATION_DIR"))
    ap.add_argument("--models-dir", default=os.environ.get("HRSTAGE_MODELS_DIR"))
    args = ap.parse_args(argv)
    if not args.validation_dir or not args.models_dir:
        ap.error("give --validation-dir and --models-dir (or set HRSTAGE_VALIDATION_DIR / HRSTAGE_MODELS_DIR)")
    seq = dwarf_sequence(Path(args.validation_dir) / "mamajek_dwarf_sequence.txt")
    seq.write(OUT / "hot_dwarf_sequence.ecsv", format="ascii.ecsv", overwrite=True)
    from astropy.table import vstack
    grids = [wd_grid(Path(args.models_dir) / "wd_synthetic_photometry" / f"Table_{k}", atm)
             for k, atm in (("DA", "H"), ("DB", "He"))]
    wd = vstack(grids)
    wd.meta = {"title": "Montreal white-dwarf synthetic absolute magnitudes (DA: atmosphere H, DB: He)",
               "source_H": WD_CITATION["H"], "source_He": WD_CITATION["He"],
               "passbands": "Gaia DR2 G, G_BP, G_RP (the release's synthetic photometry); Johnson B, V",
               "compiled_by": "tools/compile_photometric_tables.py (columns extracted, values unchanged)"}
    wd.write(OUT / "wd_synthetic_photometry.ecsv", format="ascii.ecsv", overwrite=True)
    print(f"wrote {len(seq)} dwarf-sequence rows and {len(wd)} white-dwarf grid rows")


if __name__ == "__main__":
    main()
