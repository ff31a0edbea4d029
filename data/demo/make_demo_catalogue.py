"""Generate the bundled demo catalogue: an invented planet-search target list.

Scenario (fiction): the "Kestrel Deep Field" is an imaginary radial-velocity survey that picked
3000 bright targets meant to be FGK dwarfs. Its input catalogue gives, per target, a spectroscopic
Teff and [Fe/H], a luminosity from an SED fit, their errors, and an MK type gathered from older
literature. As in any magnitude-limited sample, giants contaminate it, a few white dwarfs, hot
subdwarfs and metal-poor subdwarfs slipped in, some catalogued MK types are wrong (a luminosity class
V given to a giant and the reverse), some values are missing or carry fill values (-9999, 99.99).
A few faint targets had no spectroscopy at all: for them (``KDF-Pnnnnn``) the list gives only Gaia
G, BP-RP, parallax and its error -- white dwarfs, hot main-sequence stars and hot subdwarfs.
A few targets (the last rows) turned out to be young stars of an invented moving group crossing the
field, still contracting towards the main sequence and typed as dwarfs.
Nothing here is a real star; identifiers are ``KDF-nnnnnn``.

The true positions come from a simple population model built on the project's own analytic
relations (Tout et al. 1996 ZAMS; Hurley, Pols & Tout 2000 main-sequence evolution, base of the
giant branch and giant-branch radius; white-dwarf mass-radius), then Gaussian noise of typical
survey size is added. Run from the repository root::

    python data/demo/make_demo_catalogue.py            # writes data/demo/kestrel_targets.ecsv

The seed is fixed, so the file is reproducible bit for bit with the same library versions.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np
from astropy.table import MaskedColumn, Table, vstack

from hrstage.models import tout1996
from hrstage.models.hpt2000 import l_bgb, ms_luminosity_radius, r_gb, t_ms, wd_radius

SEED = 20240617
N_STARS = 3000
TSUN = 5772.0  # K, IAU 2015 Resolution B3

# Fractions of the invented sample (magnitude-limited target lists are dwarf-dominated)
FRACTIONS = {"dwarf": 0.74, "subgiant": 0.09, "giant": 0.13, "bright": 0.01, "white_dwarf": 0.012,
             "hot_subdwarf": 0.004, "subdwarf": 0.014}

def teff_from(logl, radius):
    return TSUN * (10.0 ** logl / radius ** 2) ** 0.25


def draw_population(rng, n):
    kinds = rng.choice(list(FRACTIONS), size=n, p=np.array(list(FRACTIONS.values())) / sum(FRACTIONS.values()))
    logl = np.empty(n)
    teff = np.empty(n)
    feh = np.clip(rng.normal(-0.08, 0.2, n), -1.0, 0.15)   # the fits stop at Z = 0.03
    z = 0.02 * 10.0 ** feh

    k = kinds == "dwarf"
    m = rng.uniform(0.6, 1.45, k.sum())
    age = rng.uniform(0.05, 0.9, k.sum()) * np.minimum(t_ms(m, z[k]), 12000.0)
    lum, rad = ms_luminosity_radius(m, z[k], age)
    logl[k], teff[k] = np.log10(lum), teff_from(np.log10(lum), rad)

    k = kinds == "subgiant"
    m = rng.uniform(1.0, 1.8, k.sum())
    l_end = np.log10(ms_luminosity_radius(m, z[k], t_ms(m, z[k]))[0])
    lb = np.log10(l_bgb(m, z[k]))
    f = rng.uniform(0.05, 0.95, k.sum())
    logl[k] = l_end + f * (lb - l_end)
    r_end = ms_luminosity_radius(m, z[k], t_ms(m, z[k]))[1]
    r_b = r_gb(m, 10.0 ** lb, z[k])
    teff[k] = teff_from(logl[k], r_end * (r_b / r_end) ** f)

    k = kinds == "giant"
    m = rng.uniform(1.0, 2.6, k.sum())
    clump = rng.random(k.sum()) < 0.4
    lg = np.where(clump, rng.normal(1.7, 0.08, k.sum()), np.log10(l_bgb(m, z[k])) + rng.uniform(0.1, 1.6, k.sum()))
    logl[k] = lg
    teff[k] = np.where(clump, rng.normal(4800.0, 120.0, k.sum()), teff_from(lg, r_gb(m, 10.0 ** lg, z[k])))

    k = kinds == "bright"
    m = rng.uniform(5.0, 14.0, k.sum())
    logl[k] = np.log10(tout1996.zams_luminosity(m, z[k])) + rng.uniform(0.2, 0.6, k.sum())
    teff[k] = rng.uniform(3900.0, 12000.0, k.sum())

    k = kinds == "white_dwarf"
    m = np.clip(rng.normal(0.62, 0.08, k.sum()), 0.45, 1.1)
    teff[k] = rng.uniform(6500.0, 28000.0, k.sum())
    r = wd_radius(m)
    logl[k] = np.log10(r ** 2 * (teff[k] / TSUN) ** 4)

    k = kinds == "hot_subdwarf"
    teff[k] = rng.uniform(24000.0, 38000.0, k.sum())
    r = rng.uniform(0.15, 0.25, k.sum())
    logl[k] = np.log10(r ** 2 * (teff[k] / TSUN) ** 4)

    k = kinds == "subdwarf"
    m = rng.uniform(0.55, 0.8, k.sum())
    feh[k] = rng.uniform(-2.0, -1.3, k.sum())
    zz = 0.02 * 10.0 ** feh[k]
    lz, rz = tout1996.zams_luminosity(m, zz), tout1996.zams_radius(m, zz)
    logl[k] = np.log10(lz)
    teff[k] = teff_from(logl[k], rz)
    return kinds, teff, logl, feh


def mk_type(kind, teff, rng):
    """An invented literature MK type for the true stage: the type whose calibrated Teff (the
    project's own spectral-type calibration, hrstage.sptype) is nearest to the star's true Teff,
    rounded to a half subclass, with the luminosity class of the true stage."""
    from hrstage.sptype.calibration import calibration

    cal = calibration()
    lum_class = {"dwarf": "V", "subgiant": "IV", "giant": "III", "bright": "Ib", "subdwarf": "V"}
    out = np.full(teff.shape, "", dtype=object)
    for k, lc in lum_class.items():          # a handful of classes, vectorised inside
        sel = kind == k
        lo, hi = cal.type_range(lc)
        grid = np.arange(lo, hi + 0.01, 0.5)
        t_grid = cal.teff(grid, lc)
        ok = np.isfinite(t_grid)
        grid, t_grid = grid[ok], t_grid[ok]
        best = grid[np.argmin(np.abs(t_grid[None, :] - teff[sel][:, None]), axis=1)]
        letter = np.array(list("OBAFGKM"))[(best // 10).astype(int)]
        subclass = np.where(best % 1 == 0, (best % 10).astype(int).astype(str), np.char.mod("%.1f", best % 10))
        prefix = "sd" if k == "subdwarf" else ""
        out[sel] = np.char.add(np.char.add(np.char.add(prefix, letter), subclass), "" if prefix else lc)
    out[kind == "white_dwarf"] = "DA"
    out[kind == "hot_subdwarf"] = "sdB"
    clump = (kind == "giant") & (rng.random(teff.size) < 0.2)
    out[clump] = np.char.add(out[clump].astype(str), "b")         # e.g. K0IIIb
    return out


# --- stars seen only through Gaia photometry (no spectroscopy): hot stars and white dwarfs -----------
#: how many of each invented kind; drawn from their own random stream so that the rows above do not move
PHOT_ONLY = {"white_dwarf": 8, "hot_dwarf": 6, "hot_subdwarf": 3}


def photometric_block(seed=SEED):
    """Invented Gaia-DR3-like G, BP-RP, parallax and parallax error for stars without spectroscopy.

    White dwarfs: Teff and log g drawn, colours and M_G from the Montreal DA grid the package ships
    (hrstage.models.montreal_wd), moved to the EDR3 passbands with the package's own offsets. Hot
    dwarfs: B9V-A5V colours and M_G of the Pecaut & Mamajek (2013) sequence the package ships. Hot
    subdwarfs: BP-RP -0.45..-0.30 and M_G 3.8..5.0 (typical sdB values, common practice). Gaussian
    noise of the stated errors is added. Returns a dict of columns and the list of kinds.
    """
    from hrstage.models import montreal_wd, pecaut_mamajek2013

    rng = np.random.default_rng([seed, 13])
    kinds, bp_rp, abs_g, dist = [], [], [], []
    loggs, xs, mags, lts, _, _ = montreal_wd.sequences("H", "gaia")
    k8 = int(np.flatnonzero(loggs == 8.0)[0])
    for _ in range(PHOT_ONLY["white_dwarf"]):
        lt = np.log10(rng.uniform(6000.0, 30000.0))
        c = np.interp(lt, lts[k8][::-1], xs[k8][::-1])
        m = np.interp(lt, lts[k8][::-1], mags[k8][::-1]) + rng.normal(0.0, 0.15)  # a spread of masses
        a, b = montreal_wd.EDR3_COLOUR_OFFSET
        kinds.append("white_dwarf")
        bp_rp.append(a + c * (1 + b))
        abs_g.append(m + montreal_wd.EDR3_MAG_OFFSET)
        dist.append(rng.uniform(15.0, 90.0))
    seq = pecaut_mamajek2013.table()
    ok = np.isfinite(seq["bp_rp"]) & np.isfinite(seq["m_g"]) & (seq["bp_rp"] > -0.1) & (seq["bp_rp"] < 0.2)
    pick = rng.choice(np.flatnonzero(ok), size=PHOT_ONLY["hot_dwarf"], replace=True)
    for i in pick:
        kinds.append("hot_dwarf")
        bp_rp.append(seq["bp_rp"][i])
        abs_g.append(seq["m_g"][i] + rng.uniform(0.0, 0.6))     # on or just above the ZAMS
        dist.append(rng.uniform(200.0, 700.0))
    for _ in range(PHOT_ONLY["hot_subdwarf"]):
        kinds.append("hot_subdwarf")
        bp_rp.append(rng.uniform(-0.45, -0.30))
        abs_g.append(rng.uniform(3.8, 5.0))
        dist.append(rng.uniform(300.0, 900.0))
    kinds = np.array(kinds, dtype=object)
    bp_rp, abs_g, dist = np.array(bp_rp), np.array(abs_g), np.array(dist)
    plx = 1000.0 / dist
    g = abs_g + 5 * np.log10(dist) - 5
    plx_err = np.round(np.clip(0.02 + 0.01 * 10 ** (0.2 * (g - 15.0)), 0.02, 0.3), 4)
    cols = {"phot_g_mean_mag": np.round(g + rng.normal(0, 0.003, g.size), 4),
            "bp_rp": np.round(bp_rp + rng.normal(0, 0.01, g.size), 4),
            "parallax": np.round(plx + rng.normal(0, plx_err), 4), "parallax_error": plx_err}
    return cols, kinds


def build(seed=SEED, n=N_STARS) -> Table:
    rng = np.random.default_rng(seed)
    kinds, teff_true, logl_true, feh_true = draw_population(rng, n)
    teff_err = np.round(np.clip(0.018 * teff_true * rng.uniform(0.6, 1.4, n), 40, 1500), 0)
    lum_rel = rng.uniform(0.04, 0.15, n)
    teff = np.round(teff_true + rng.normal(0, teff_err), 0)
    lum_true = 10.0 ** logl_true
    lum = lum_true * (1 + rng.normal(0, lum_rel))
    lum = np.where(lum > 0, lum, lum_true)
    lum_err = lum * lum_rel
    feh = np.round(feh_true + rng.normal(0, 0.08, n), 2)
    sptype = mk_type(kinds, teff_true, rng)

    # the wrong literature types: swap V <-> III for a few bright, well-measured stars
    swap = rng.choice(np.flatnonzero(np.isin(kinds, ["dwarf", "giant"])), size=40, replace=False)
    for i in swap:       # 40 stars, built once; not a catalogue path
        sptype[i] = sptype[i].replace("IIIb", "V").replace("III", "V") if "III" in sptype[i] else sptype[i].replace("V", "III")
    no_type = rng.random(n) < 0.08
    sptype[no_type] = ""

    # no spectroscopic [Fe/H]: 6 % at random, and the metal-poor stars (too faint for the
    # survey's spectrograph): at the solar metallicity then assumed they sit below the ZAMS
    feh_mask = (rng.random(n) < 0.06) | (kinds == "subdwarf")
    bad = rng.choice(n, size=12, replace=False)
    lum[bad[:5]] = -9999.0                                 # fill value of the SED pipeline
    lum_err[bad[:5]] = -9999.0
    teff_mask = np.zeros(n, dtype=bool)
    teff_mask[bad[5:8]] = True                             # no spectroscopy
    feh[bad[8:]] = 99.99                                   # fill value of the [Fe/H] pipeline

    # invented sky positions in a 3-degree field
    ra = np.round(rng.uniform(201.0, 204.0, n), 6)
    dec = np.round(rng.uniform(-31.5, -28.5, n), 6)
    t = Table()
    t["target_id"] = [f"KDF-{i:06d}" for i in range(1, n + 1)]
    t["ra"] = MaskedColumn(ra, unit="deg", description="Right ascension (invented field)", meta={"ucd": "pos.eq.ra"})
    t["dec"] = MaskedColumn(dec, unit="deg", description="Declination (invented field)", meta={"ucd": "pos.eq.dec"})
    t["teff"] = MaskedColumn(teff, mask=teff_mask, unit="K", description="Spectroscopic Teff")
    t["teff_err"] = MaskedColumn(teff_err, mask=teff_mask, unit="K", description="1-sigma error of teff")
    t["lum"] = MaskedColumn(np.round(lum, 5), unit="solLum", description="Luminosity from the SED fit (-9999: failed)")
    t["lum_err"] = MaskedColumn(np.round(lum_err, 5), unit="solLum", description="1-sigma error of lum")
    t["feh"] = MaskedColumn(feh, mask=feh_mask, unit="dex", description="Spectroscopic [Fe/H] (99.99: failed)")
    t["sptype"] = MaskedColumn(sptype.astype(str), description="MK type from older literature (may be wrong)")
    phot, phot_kinds = photometric_block(seed)
    m = len(phot_kinds)
    extra = Table()
    extra["target_id"] = [f"KDF-P{i:05d}" for i in range(1, m + 1)]
    prng = np.random.default_rng([seed, 14])
    extra["ra"] = MaskedColumn(np.round(prng.uniform(201.0, 204.0, m), 6), unit="deg")
    extra["dec"] = MaskedColumn(np.round(prng.uniform(-31.5, -28.5, m), 6), unit="deg")
    for name in ("teff", "teff_err", "lum", "lum_err", "feh"):
        extra[name] = MaskedColumn(np.zeros(m), mask=np.ones(m, dtype=bool), unit=t[name].unit)
    extra["sptype"] = MaskedColumn([""] * m, mask=np.ones(m, dtype=bool))
    for name, desc, unit in (("phot_g_mean_mag", "Gaia G (only for targets without spectroscopy)", "mag"),
                             ("bp_rp", "Gaia BP-RP (only for targets without spectroscopy)", "mag"),
                             ("parallax", "Gaia parallax (only for targets without spectroscopy)", "mas"),
                             ("parallax_error", "1-sigma error of parallax", "mas")):
        extra[name] = MaskedColumn(phot[name], unit=unit, description=desc)
        t[name] = MaskedColumn(np.zeros(len(t)), mask=np.ones(len(t), dtype=bool), unit=unit, description=desc)
    from astropy.table import vstack

    t = vstack([t, extra], metadata_conflicts="silent")
    t.meta["description"] = ("Invented demo catalogue of hrstage: the fictional Kestrel Deep Field target list. "
                             "Synthetic stars, no real objects.")
    t.meta["generator"] = f"data/demo/make_demo_catalogue.py, seed {seed}"
    t.meta["true_stage_counts"] = {k: int((kinds == k).sum()) for k in FRACTIONS}
    t.meta["photometry_only_counts"] = {k: int((phot_kinds == k).sum()) for k in PHOT_ONLY}
    young = young_block(seed, n + 1)
    t = vstack([t, young], metadata_conflicts="silent")
    t.meta["true_stage_counts"]["young"] = len(young)
    return t


# ---------------------------------------------------------------------------------------------
# young stars (pre-main sequence): their own block and random stream, appended after the others
N_YOUNG = 18


def young_block(seed=SEED, first_id=N_STARS + 1, n=N_YOUNG) -> Table:
    """Invented young stars of a moving group (ages of a few Myr), as extra rows.

    A simple position model of our own, not a pre-main-sequence track: 0.35-1.3 Msun, a Teff 5-15 %
    below the Tout et al. (1996) ZAMS Teff of the mass (contracting stars are cooler and larger)
    and a luminosity 0.5-1.3 dex above the ZAMS luminosity, i.e. well above an equal-mass binary.
    A separate random stream, so the rows above do not change when this block does.
    """
    rng = np.random.default_rng(seed + 13)
    m = rng.uniform(0.35, 1.3, n)
    feh_true = rng.normal(0.0, 0.05, n)
    z = 0.02 * 10.0 ** feh_true
    lz, rz = tout1996.zams_luminosity(m, z), tout1996.zams_radius(m, z)
    teff_true = teff_from(np.log10(lz), rz) * rng.uniform(0.85, 0.95, n)
    lum_true = lz * 10.0 ** rng.uniform(0.5, 1.3, n)
    teff_err = np.round(0.02 * teff_true, 0)
    teff = np.round(teff_true + rng.normal(0, teff_err), 0)
    lum_rel = rng.uniform(0.05, 0.12, n)
    lum = lum_true * (1 + rng.normal(0, lum_rel))
    sptype = mk_type(np.full(n, "dwarf"), teff_true, rng)
    sptype = np.char.add(sptype.astype(str), "e")          # emission lines, as young stars often show
    t = Table()
    t["target_id"] = [f"KDF-{i:06d}" for i in range(first_id, first_id + n)]
    t["ra"] = MaskedColumn(np.round(rng.uniform(202.2, 202.6, n), 6), unit="deg")
    t["dec"] = MaskedColumn(np.round(rng.uniform(-30.2, -29.8, n), 6), unit="deg")
    t["teff"] = MaskedColumn(teff, unit="K")
    t["teff_err"] = MaskedColumn(teff_err, unit="K")
    t["lum"] = MaskedColumn(np.round(lum, 5), unit="solLum")
    t["lum_err"] = MaskedColumn(np.round(lum * lum_rel, 5), unit="solLum")
    t["feh"] = MaskedColumn(np.round(feh_true + rng.normal(0, 0.08, n), 2), unit="dex")
    t["sptype"] = MaskedColumn(sptype)
    return t


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument("--out", default=str(Path(__file__).with_name("kestrel_targets.ecsv")))
    p.add_argument("--seed", type=int, default=SEED)
    p.add_argument("--rows", type=int, default=N_STARS)
    args = p.parse_args(argv)
    table = build(args.seed, args.rows)
    table.write(args.out, format="ascii.ecsv", overwrite=True)
    print(f"wrote {len(table)} invented stars to {args.out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
