"""White-dwarf Teff, log g, mass and bolometric correction from colour and absolute magnitude,
by inverting the Montreal synthetic photometry of DA and DB white dwarfs.

References
----------
Montreal white-dwarf photometry, 2019-08 release (cite as the shared ``SOURCES.md`` says):
pure-hydrogen (DA) atmospheres -- Holberg & Bergeron 2006, AJ 132, 1221; Kowalski & Saumon 2006,
ApJ 651, L137; Tremblay, Bergeron & Gianninas 2011, ApJ 730, 128; Blouin et al. 2018, ApJ 863, 184;
pure-helium (DB/DC) atmospheres -- Bergeron et al. 2011, ApJ 737, 28; Blouin et al. 2018; cooling
sequences (mass-radius relation) Bedard et al. 2020, ApJ 901, 93. Teff, log g, mass, M_bol and the
absolute B, V, G, G_BP, G_RP of the grids are compiled into ``hrstage/data/wd_synthetic_photometry.ecsv``
by ``tools/compile_photometric_tables.py`` (values unchanged, citation in the file's metadata).

Method (ours)
-------------
The grid is five sequences in Teff at log g = 7.0, 7.5, 8.0, 8.5, 9.0. On each sequence the colour
is monotonic in Teff above :data:`TEFF_MIN` (cooler, collision-induced absorption turns the
colours back): Teff, absolute magnitude, mass and BC = M_bol - M_band are interpolated linearly in
colour (log Teff linearly). Across the five sequences the absolute magnitude at fixed colour grows
with log g; the star's absolute magnitude gives log g by linear interpolation between the two
sequences that bracket it, and the same weights give Teff, mass and BC. Outside 7.0-9.0 the end
pair is extrapolated linearly down to :data:`LOGG_EXTRAPOLATE` (6.5) and up to 9.5, with
``extrapolated`` set (the caller flags it); beyond, NaN. L follows from M_bol = M_band + BC
(M_bol,sun = 4.74), the radius from L and Teff (Stefan-Boltzmann).

Validity: Teff 4000-90 000 K (DA) / 4000-70 000 K (DB), colours of that range; log g 6.5-9.5 as
above. The Gaia magnitudes are the grid's DR2 passbands; for EDR3/DR3 photometry of white dwarfs the
difference is a few hundredths of a mag in BP-RP (from memory), inside the errors we add.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from ._common import package_table

CITATION = {"H": "Montreal DA grid 2019 (Holberg & Bergeron 2006; Tremblay+2011; Blouin+2018; Bedard+2020)",
            "He": "Montreal DB grid 2019 (Bergeron+2011; Blouin+2018; Bedard+2020)"}
ATMOSPHERES = ("H", "He")
#: cooler than this the colour of a sequence is no longer monotonic in Teff (collision-induced absorption)
TEFF_MIN = 4000.0
#: log g range of the grid, and how far the end pairs are extrapolated (flagged)
LOGG_GRID = (7.0, 9.0)
LOGG_EXTRAPOLATE = (6.5, 9.5)
#: colour systems: (blue band, red band, magnitude band) columns of the compiled table
SYSTEMS = {"gaia": ("m_bp", "m_rp", "m_g"), "johnson": ("m_b", "m_v", "m_v")}
#: 1-sigma added to Teff (fractional) and to BC (mag) for the model and passband systematics (our choice:
#: the DA/DB difference at fixed colour is larger and is treated as a choice of reading, not an error)
SIGMA_TEFF_FRAC = 0.03
SIGMA_BC = 0.03


@lru_cache(maxsize=1)
def _table():
    return package_table("wd_synthetic_photometry.ecsv")


@lru_cache(maxsize=None)
def sequences(atmosphere: str = "H", system: str = "gaia"):
    """Per-log g sequences ``(logg, colour, mag, logt, mass, bc)``: 2-D arrays (n_logg, n_teff),
    each row ordered by increasing colour (decreasing Teff), Teff >= :data:`TEFF_MIN` only."""
    if atmosphere not in ATMOSPHERES:
        raise ValueError(f"atmosphere must be one of {ATMOSPHERES}, got {atmosphere!r}")
    if system not in SYSTEMS:
        raise ValueError(f"system must be one of {sorted(SYSTEMS)}, got {system!r}")
    t = _table()
    blue, red, band = SYSTEMS[system]
    sel = (t["atmosphere"] == atmosphere) & (t["teff"] >= TEFF_MIN)
    loggs = np.unique(t["logg"][sel])
    cols = {k: [] for k in ("colour", "mag", "logt", "mass", "bc")}
    for lg in loggs:
        s = sel & (t["logg"] == lg)
        colour = t[blue][s] - t[red][s]
        order = np.argsort(colour)
        if np.any(np.diff(colour[order]) <= 0) or np.any(np.diff(t["teff"][s][order]) >= 0):
            raise ValueError(f"white-dwarf sequence log g={lg} is not monotonic in colour")  # pragma: no cover
        cols["colour"].append(colour[order])
        cols["mag"].append(t[band][s][order])
        cols["logt"].append(np.log10(t["teff"][s][order]))
        cols["mass"].append(t["mass"][s][order])
        cols["bc"].append(t["mbol"][s][order] - t[band][s][order])
    return (loggs,) + tuple(np.array(cols[k]) for k in ("colour", "mag", "logt", "mass", "bc"))


def _along(colour, xs, ys):
    """Each sequence k interpolated at ``colour``: array (n_logg, n); NaN outside its colour span."""
    return _along_many(colour, xs, (ys,))[0]


def _along_many(colour, xs, ys_list):
    """Several quantities of every sequence interpolated at ``colour`` with one bracket search per
    sequence: a list of arrays (n_logg, n), NaN outside each sequence's colour span."""
    nk = xs.shape[0]
    outs = [np.empty((nk, colour.size)) for _ in ys_list]
    for k in range(nk):
        x = xs[k]
        j = np.clip(np.searchsorted(x, colour, side="right") - 1, 0, x.size - 2)
        x0 = x[j]
        t = (colour - x0) / (x[j + 1] - x0)
        t[(colour < x[0]) | (colour > x[-1]) | np.isnan(colour)] = np.nan
        for out, ys in zip(outs, ys_list):
            y = ys[k]
            y0 = y[j]
            out[k] = y0 + t * (y[j + 1] - y0)
    return outs


def sequence_mag(colour, logg, *, atmosphere="H", system="gaia"):
    """Absolute magnitude of the white-dwarf sequence of gravity ``logg`` (scalar, inside
    :data:`LOGG_EXTRAPOLATE`) at ``colour``: the bright/faint edge of the white-dwarf reading
    (linear in log g between, or beyond, the two nearest tabulated sequences)."""
    loggs, xs, mags, *_ = sequences(atmosphere, system)
    c = np.asarray(colour, dtype=float).reshape(-1)
    k = int(np.clip(np.searchsorted(loggs, logg) - 1, 0, len(loggs) - 2))
    m = _along(c, xs[k:k + 2], mags[k:k + 2])
    w = (logg - loggs[k]) / (loggs[k + 1] - loggs[k])
    return (m[0] + w * (m[1] - m[0])).reshape(np.shape(colour))


def read(colour, abs_mag, *, atmosphere="H", system="gaia"):
    """Invert the grid: (colour, absolute magnitude) -> white-dwarf parameters.

    Parameters
    ----------
    colour, abs_mag : array_like
        Dereddened colour (BP-RP for ``system="gaia"``, B-V for ``"johnson"``) and absolute
        magnitude in the band (G or V).
    atmosphere : {"H", "He"}
        DA (pure hydrogen) or DB/DC (pure helium) sequences.

    Returns
    -------
    dict of numpy.ndarray
        ``teff`` (K), ``logg``, ``mass`` (Msun), ``bc`` (M_bol - M_band, mag), ``extrapolated``
        (bool: log g outside 7-9, inside 6.5-9.5). NaN where the colour is outside the grid's span
        or log g falls outside 6.5-9.5.
    """
    loggs, xs, mags, lts, masses, bcs = sequences(atmosphere, system)
    c = np.asarray(colour, dtype=float).reshape(-1)
    mg = np.asarray(abs_mag, dtype=float).reshape(-1)
    c, mg = np.broadcast_arrays(c, mg)
    nk, nn = xs.shape
    n = c.size
    # one bracket search per sequence: segment j and fraction t; the magnitude of every sequence
    jj = np.empty((nk, n), dtype=np.intp)
    tt = np.empty((nk, n))
    m = np.empty((nk, n))
    for q in range(nk):
        x = xs[q]
        j = np.clip(np.searchsorted(x, c, side="right") - 1, 0, nn - 2)
        x0 = x[j]
        t = (c - x0) / (x[j + 1] - x0)
        t[(c < x[0]) | (c > x[-1]) | np.isnan(c)] = np.nan
        jj[q], tt[q] = j, t
        y0 = mags[q][j]
        m[q] = y0 + t * (mags[q][j + 1] - y0)        # grows with log g
    # bracket: k = number of sequences brighter than the star, minus 1, clipped to the end pairs
    k = np.clip(np.sum(m <= mg, axis=0) - 1, 0, nk - 2)
    rows = np.arange(n)
    m_lo, m_hi = m[k, rows], m[k + 1, rows]
    with np.errstate(divide="ignore", invalid="ignore"):
        w = (mg - m_lo) / (m_hi - m_lo)
    logg = loggs[k] + w * (loggs[k + 1] - loggs[k])
    out = {"logg": logg}
    # the other quantities only on the two bracketing sequences, by flat gathers
    b_lo = k * nn + jj[k, rows]
    b_hi = (k + 1) * nn + jj[k + 1, rows]
    t_lo, t_hi = tt[k, rows], tt[k + 1, rows]
    for name, tab in (("logt", lts), ("mass", masses), ("bc", bcs)):
        flat = tab.reshape(-1)
        y0 = flat[b_lo]
        lo = y0 + t_lo * (flat[b_lo + 1] - y0)
        y0 = flat[b_hi]
        hi = y0 + t_hi * (flat[b_hi + 1] - y0)
        out[name] = lo + w * (hi - lo)
    ok = np.isfinite(logg) & (logg >= LOGG_EXTRAPOLATE[0]) & (logg <= LOGG_EXTRAPOLATE[1])
    res = {key: np.where(ok, val, np.nan) for key, val in out.items()}
    res["teff"] = 10.0 ** res.pop("logt")
    res["extrapolated"] = ok & ((logg < LOGG_GRID[0]) | (logg > LOGG_GRID[1]))
    shape = np.broadcast(np.asarray(colour), np.asarray(abs_mag)).shape
    return {key: val.reshape(shape) for key, val in res.items()}


def at_logg(colour, logg=7.0, *, atmosphere="H", system="gaia"):
    """Teff (K) and BC (mag) of the tabulated sequence of gravity ``logg`` (one of 7.0 ... 9.0) at
    ``colour``; NaN outside its colour span. hrstage uses the lowest-gravity DA sequence as an
    approximate colour scale for hot subdwarfs (see ``docs/derive.md``)."""
    loggs, xs, mags, lts, masses, bcs = sequences(atmosphere, system)
    hit = np.flatnonzero(np.isclose(loggs, logg))
    if hit.size == 0:
        raise ValueError(f"logg must be one of {loggs.tolist()}, got {logg!r}")
    k = int(hit[0])
    c = np.asarray(colour, dtype=float)
    ok = (c >= xs[k, 0]) & (c <= xs[k, -1])
    teff = np.where(ok, 10.0 ** np.interp(c, xs[k], lts[k]), np.nan)
    bc = np.where(ok, np.interp(c, xs[k], bcs[k]), np.nan)
    return teff, bc


#: Gaia EDR3/DR3 photometry -> the grid's DR2 passbands (ours, empirical): observed colour
#: C_obs = C_grid + a + b C_grid and G_obs = G_grid + dG, fitted (3-sigma clipped least squares) to
#: the DA white dwarfs within 150 pc of Gentile Fusillo et al. 2021 (MNRAS 508, 3877), whose
#: reddening is small, against the colour and M_G of this grid at their catalogued TeffH, log gH.
EDR3_COLOUR_OFFSET = (0.045, -0.017)
EDR3_MAG_OFFSET = 0.036


def to_grid_passbands(colour, abs_mag, release="dr3"):
    """(colour, absolute G) of EDR3/DR3 photometry moved onto the grid's DR2 passbands; DR2 unchanged."""
    c = np.asarray(colour, dtype=float)
    m = np.asarray(abs_mag, dtype=float)
    if release == "dr2":
        return c, m
    a, b = EDR3_COLOUR_OFFSET
    return (c - a) / (1.0 + b), m - EDR3_MAG_OFFSET
