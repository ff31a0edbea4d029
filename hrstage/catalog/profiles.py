"""Column profiles: which input column plays which role.

A *role* is one quantity the pipeline can use (``teff``, ``lum``, ``g``, ``parallax``, ...; see
:data:`ROLES`). A *profile* is a named survey layout of our own: the roles it knows, the column
names that usually carry them, and the *routes* to an HR position it tries, in order of
preference, row by row (a row that lacks the inputs of the first route falls back to the next).

Detection (:func:`detect_profile`) works on names, units and UCDs only, never on values:

1. a column maps to a role when its name, lower-cased with everything but letters and digits
   removed (``"BP-RP"`` -> ``"bprp"``, ``"[Fe/H]"`` -> ``"feh"``), equals one of the profile's
   candidate names; failing that, when its UCD (``meta['ucd']``, e.g. from a VOTable) is the
   role's UCD;
2. a column matched to ``teff`` or ``lum`` whose unit is logarithmic (``dex``) is taken as
   ``logt`` or ``logl`` instead;
3. a profile *fits* when at least one of its routes has all its roles; among the profiles that fit,
   the one that covers the most roles wins (ties: the order of :data:`PROFILES`);
4. explicitly named columns (``teff="TEFF"`` in Python, ``--col teff=TEFF`` on the command line)
   override detection for their role.

When nothing fits, :class:`~hrstage.errors.HrstageInputError` says what was found and what each
profile still misses.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from ..errors import HrstageInputError


@dataclass(frozen=True)
class Role:
    """One input quantity: canonical unit, kind (``"float"``/``"text"``), UCD and meaning."""

    name: str
    unit: str | None
    kind: str
    ucd: str | None
    description: str


_R = [
    Role("teff", "K", "float", "phys.temperature.effective", "effective temperature"),
    Role("teff_err", "K", "float", "stat.error;phys.temperature.effective", "1-sigma error of teff"),
    Role("logt", "dex(K)", "float", None, "log10 effective temperature"),
    Role("logt_err", "dex", "float", None, "1-sigma error of logt"),
    Role("lum", "solLum", "float", "phys.luminosity", "bolometric luminosity"),
    Role("lum_err", "solLum", "float", "stat.error;phys.luminosity", "1-sigma error of lum"),
    Role("logl", "dex(solLum)", "float", None, "log10 bolometric luminosity"),
    Role("logl_err", "dex", "float", None, "1-sigma error of logl"),
    Role("radius", "solRad", "float", "phys.size.radius", "stellar radius"),
    Role("radius_err", "solRad", "float", "stat.error;phys.size.radius", "1-sigma error of radius"),
    Role("logg", "dex(cm/s2)", "float", "phys.gravity", "log10 surface gravity (cgs)"),
    Role("logg_err", "dex", "float", "stat.error;phys.gravity", "1-sigma error of logg"),
    Role("feh", "dex", "float", "phys.abund.Z", "metallicity [Fe/H] (or [M/H])"),
    Role("feh_err", "dex", "float", "stat.error;phys.abund.Z", "1-sigma error of feh"),
    Role("mass", "solMass", "float", "phys.mass", "stellar mass, if known independently"),
    Role("g", "mag", "float", None, "Gaia G apparent magnitude"),
    Role("g_err", "mag", "float", None, "1-sigma error of g"),
    Role("bp_rp", "mag", "float", None, "Gaia BP-RP colour"),
    Role("bp_rp_err", "mag", "float", None, "1-sigma error of bp_rp"),
    Role("bp", "mag", "float", None, "Gaia BP magnitude (with rp gives bp_rp)"),
    Role("rp", "mag", "float", None, "Gaia RP magnitude (with bp gives bp_rp)"),
    Role("parallax", "mas", "float", "pos.parallax", "trigonometric parallax"),
    Role("parallax_err", "mas", "float", "stat.error;pos.parallax", "1-sigma error of parallax"),
    Role("distance", "pc", "float", "pos.distance", "published distance estimate (median), replaces 1/parallax"),
    Role("distance_lo", "pc", "float", None, "16th percentile of the published distance"),
    Role("distance_hi", "pc", "float", None, "84th percentile of the published distance"),
    Role("v", "mag", "float", "phot.mag;em.opt.V", "Johnson V apparent magnitude"),
    Role("v_err", "mag", "float", "stat.error;phot.mag;em.opt.V", "1-sigma error of v"),
    Role("b_v", "mag", "float", "phot.color;em.opt.B;em.opt.V", "Johnson B-V colour"),
    Role("b_v_err", "mag", "float", None, "1-sigma error of b_v"),
    Role("ks", "mag", "float", "phot.mag;em.IR.K", "2MASS Ks magnitude (V-Ks colour-Teff)"),
    Role("ks_err", "mag", "float", None, "1-sigma error of ks"),
    Role("a_v", "mag", "float", None, "V-band extinction A_V"),
    Role("ebv", "mag", "float", "phot.color.excess", "colour excess E(B-V)"),
    Role("a_g", "mag", "float", None, "G-band extinction A_G"),
    Role("e_bp_rp", "mag", "float", None, "colour excess E(BP-RP)"),
    Role("sptype", None, "text", "src.spType", "catalogued MK spectral type"),
    Role("id", None, "text", "meta.id;meta.main", "star identifier (reports and plots)"),
]
ROLES = {r.name: r for r in _R}

#: Routes to an HR position: for each, the roles needed; a tuple inside means "any one of".
ROUTES = {
    "teff_lum": (("teff", "logt"), ("lum", "logl")),
    "teff_radius": (("teff", "logt"), ("radius",)),
    "gaia": (("g",), ("bp_rp", "bp+rp"), ("parallax", "distance")),
    "johnson": (("v",), ("b_v",), ("parallax", "distance")),
    "teff_logg": (("teff", "logt"), ("logg",)),
}

_COMMON = {
    "teff": ("teff", "t_eff", "tef", "teff_k", "teffk"),
    "teff_err": ("teff_err", "e_teff", "teff_error", "sig_teff", "teff_sigma", "err_teff", "teff_unc", "s_teff"),
    "logt": ("logt", "log_teff", "logteff", "log_t", "logte"),
    "logt_err": ("logt_err", "e_logt", "e_logteff", "log_teff_err"),
    "feh": ("feh", "fe_h", "[fe/h]", "mh", "[m/h]", "metallicity", "m_h"),
    "feh_err": ("feh_err", "e_feh", "e_[fe/h]", "feh_error", "e_mh", "mh_err", "e_fe_h", "s_[fe/h]"),
    "mass": ("mass", "mass_msun", "mstar", "m_star"),
    "sptype": ("sptype", "sp_type", "spectral_type", "spt", "mk_type", "spectype", "spec_type"),
    "id": ("id", "name", "star", "star_id", "object", "designation", "target", "target_id", "obj_id"),
    "logg": ("logg", "log_g", "logg_cgs"),
    "logg_err": ("logg_err", "e_logg", "logg_error", "sig_logg", "e_log_g", "s_logg"),
}


#: Published distances (Bailer-Jones et al. 2021, AJ 161, 147: VizieR I/352 names rgeo, b_rgeo, B_rgeo,
#: rpgeo, ...; Gaia archive names r_med_geo, r_lo_geo, r_hi_geo, ...). Geometric before photo-geometric.
#: A candidate starting with "=" matches the column name exactly, case included: VizieR tells the
#: lower and upper bounds apart only by the case of "b_" / "B_".
_DISTANCE = {
    "distance": ("rgeo", "r_med_geo", "rpgeo", "r_med_photogeo", "distance", "dist", "distance_pc", "dist_pc",
                 "r_med"),
    "distance_lo": ("=b_rgeo", "r_lo_geo", "=b_rpgeo", "r_lo_photogeo", "distance_lo", "dist_lo", "r_lo",
                    "distance_p16", "dist_16"),
    "distance_hi": ("=B_rgeo", "r_hi_geo", "=B_rpgeo", "r_hi_photogeo", "distance_hi", "dist_hi", "r_hi",
                    "distance_p84", "dist_84"),
}


@dataclass(frozen=True)
class Profile:
    """A named survey layout: candidate column names per role and the routes to try, in order."""

    name: str
    description: str
    candidates: dict
    routes: tuple

    def roles(self):
        return tuple(self.candidates)


PROFILES = {
    p.name: p
    for p in [
        Profile(
            "direct", "Teff with luminosity (linear or log) or radius, as in stellar-parameter tables",
            {**_COMMON,
             "lum": ("lum", "luminosity", "l_lsun", "lum_lsun", "lbol", "l_bol", "lstar"),
             "lum_err": ("lum_err", "e_lum", "lum_error", "e_luminosity", "e_lbol"),
             "logl": ("logl", "log_l", "loglum", "log_lum", "logl_lsun", "log_lbol", "logl_bol"),
             "logl_err": ("logl_err", "e_logl", "e_log_l", "logl_error", "e_loglum"),
             "radius": ("radius", "rad", "r_rsun", "radius_rsun", "rstar", "r_star"),
             "radius_err": ("radius_err", "e_radius", "e_rad", "radius_error", "e_rstar", "s_radius"),
             # rows without parameters may carry Gaia photometry (archive names only): the last route
             "g": ("phot_g_mean_mag",), "bp_rp": ("bp_rp",), "parallax": ("parallax",),
             "parallax_err": ("parallax_error",)},
            ("teff_lum", "teff_radius", "teff_logg", "gaia"),
        ),
        Profile(
            "gaia", "Gaia-like photometry G, BP-RP and parallax, optionally astrophysical parameters",
            {"g": ("phot_g_mean_mag", "gmag", "g_mag", "g", "gaia_g"),
             "g_err": ("phot_g_mean_mag_error", "e_gmag", "g_err", "gmag_err", "e_g"),
             "bp_rp": ("bp_rp", "bp-rp", "bprp", "gaia_bp_rp"),
             "bp_rp_err": ("bp_rp_error", "bp_rp_err", "e_bp-rp", "e_bp_rp", "e_bprp"),
             "bp": ("phot_bp_mean_mag", "bpmag", "bp_mag", "bp"),
             "rp": ("phot_rp_mean_mag", "rpmag", "rp_mag", "rp"),
             "parallax": ("parallax", "plx", "parallax_mas", "plx_mas"),
             "parallax_err": ("parallax_error", "parallax_err", "e_plx", "plx_err", "e_parallax",
                              "plx_error"),
             **_DISTANCE,
             "a_g": ("ag_gspphot", "a_g", "ag", "a_g_val"),
             "e_bp_rp": ("ebpminrp_gspphot", "e_bp_rp_red", "ebprp", "e(bp-rp)"),
             "teff": ("teff_gspphot", "teff_gspspec", "teff_esphs", "teff"),
             "logg": ("logg_gspphot", "logg_gspspec", "logg"),
             "feh": ("mh_gspphot", "mh_gspspec", "feh", "fe_h", "[fe/h]", "mh", "[m/h]"),
             "lum": ("lum_flame", "lum", "luminosity"),
             "radius": ("radius_flame", "radius_gspphot", "radius"),
             "mass": ("mass_flame", "mass"),
             "sptype": ("spectraltype_esphs", "sptype", "sp_type", "spectral_type"),
             "id": ("source_id", "designation", "id", "name")},
            ("gaia", "teff_lum", "teff_radius", "teff_logg"),
        ),
        Profile(
            "johnson", "Johnson V, B-V and a parallax (Hipparcos-like), optionally Ks and extinction",
            {"v": ("vmag", "v", "v_mag", "mag_v", "vjohnson", "v_johnson"),
             "v_err": ("e_vmag", "v_err", "vmag_err", "e_v", "v_error"),
             "b_v": ("b_v", "b-v", "bv", "bmv", "b_minus_v"),
             "b_v_err": ("b_v_err", "e_b-v_col", "bv_err", "b_v_error", "sig_b_v"),
             "parallax": ("plx", "plx_mas", "parallax", "parallax_mas", "pi"),
             "parallax_err": ("e_plx", "e_plx_mas", "plx_err", "parallax_error", "parallax_err", "e_pi"),
             **_DISTANCE,
             "ks": ("ksmag", "ks", "kmag", "k_mag", "ks_mag", "k"),
             "ks_err": ("e_ksmag", "ks_err", "e_kmag", "e_ks"),
             "a_v": ("av", "a_v", "ext_v", "extinction_v"),
             "ebv": ("ebv", "e(b-v)", "e_bv", "ebmv", "e_b_v"),
             **{k: _COMMON[k] for k in ("teff", "teff_err", "logt", "feh", "feh_err", "mass")},
             "sptype": ("sptype", "sp_type", "spectral_type", "spt", "mk_type"),
             "id": ("id", "name", "hip", "hd", "hr", "star", "designation")},
            ("johnson", "teff_logg"),
        ),
        Profile(
            "spectroscopic", "Spectroscopic Teff, log g and [Fe/H] (survey pipeline output)",
            {**_COMMON,
             "teff": ("teff", "t_eff", "teff_spec", "teff_k", "teffk", "tef"),
             "logg": ("logg", "log_g", "logg_spec", "logg_cgs", "grav")},
            ("teff_logg",),
        ),
    ]
}


def normalise(name: str) -> str:
    """Column name -> comparison key: lower case, letters and digits only."""
    return re.sub(r"[^0-9a-z]", "", str(name).lower())


@dataclass(frozen=True)
class ColumnInfo:
    """What detection may look at: name, unit string and UCD of one column."""

    name: str
    unit: str | None = None
    ucd: str | None = None


@dataclass
class ColumnMapping:
    """Result of detection: the profile, role -> column name, the usable routes, notes."""

    profile: str
    roles: dict
    routes: tuple
    explicit: tuple = ()
    notes: list = field(default_factory=list)

    def describe(self) -> str:
        """``"profile gaia: g=phot_g_mean_mag, ...; routes gaia, teff_logg"``."""
        pairs = ", ".join(f"{r}={c}" for r, c in self.roles.items())
        return f"profile {self.profile}: {pairs}; routes {', '.join(self.routes)}"

    def roles_text(self) -> str:
        return ",".join(f"{r}={c}" for r, c in self.roles.items())


def infos_from_table(table) -> list:
    """:class:`ColumnInfo` for every column of an astropy Table."""
    out = []
    for name in table.colnames:
        col = table[name]
        unit = None if col.unit is None else col.unit.to_string()
        ucd = (col.meta or {}).get("ucd") if hasattr(col, "meta") else None
        out.append(ColumnInfo(name, unit, ucd))
    return out


def _is_length_or_none(unit: str | None) -> bool:
    """True for no unit or a unit of length (pc, kpc, ...)."""
    if not unit:
        return True
    from astropy import units as u

    try:
        return u.Unit(unit).physical_type == "length"
    except (ValueError, TypeError):
        return False


def _is_log_unit(unit: str | None) -> bool:
    if not unit:
        return False
    text = unit.strip().lower()
    return text.startswith("dex") or text.startswith("log(") or text == "[k]" or text.startswith("[")


def _route_ok(route: str, roles) -> bool:
    for alternatives in ROUTES[route]:
        ok = False
        for alt in alternatives:
            if all(part in roles for part in alt.split("+")):
                ok = True
                break
        if not ok:
            return False
    return True


def _route_missing(route: str, roles) -> str:
    missing = []
    for alternatives in ROUTES[route]:
        if not any(all(p in roles for p in alt.split("+")) for alt in alternatives):
            missing.append("|".join(a.replace("+", "&") for a in alternatives))
    return " + ".join(missing)


def _match(profile: Profile, infos, taken) -> dict:
    by_key = {}
    for info in infos:
        by_key.setdefault(normalise(info.name), info)
    found = {}
    used = set(taken)
    exact = {info.name: info for info in infos}
    for role, names in profile.candidates.items():
        for cand in names:
            info = exact.get(cand[1:]) if cand.startswith("=") else by_key.get(normalise(cand))
            if info is not None and role in _DISTANCE and not _is_length_or_none(info.unit):
                continue   # e.g. a cross-match separation "dist" in arcsec is not a distance
            if info is not None and info.name not in used:
                found[role] = info
                used.add(info.name)
                break
    # UCD fall-back for roles still missing
    for role in profile.candidates:
        spec = ROLES[role]
        if role in found or not spec.ucd:
            continue
        for info in infos:
            if info.name in used or not info.ucd:
                continue
            if info.ucd.strip().lower() == spec.ucd.lower():
                found[role] = info
                used.add(info.name)
                break
    # a linear role found with a log unit is the log role
    for lin, log in (("teff", "logt"), ("lum", "logl"), ("teff_err", "logt_err"), ("lum_err", "logl_err")):
        if lin in found and log not in found and _is_log_unit(found[lin].unit):
            found[log] = found.pop(lin)
    return {role: info.name for role, info in found.items()}


def _resolve_explicit(explicit: dict, infos) -> dict:
    names = [i.name for i in infos]
    lower = {}
    for n in names:
        lower.setdefault(n.lower(), []).append(n)
    out = {}
    for role, col in explicit.items():
        if role not in ROLES:
            raise HrstageInputError(f"unknown role {role!r}; roles are: {', '.join(ROLES)}")
        if col in names:
            out[role] = col
        elif len(lower.get(str(col).lower(), [])) == 1:
            out[role] = lower[str(col).lower()][0]
        else:
            shown = ", ".join(names[:30]) + (" ..." if len(names) > 30 else "")
            raise HrstageInputError(f"column {col!r} given for role {role} is not in the table "
                                    f"(columns: {shown})")
    return out


def detect_profile(infos, *, profile: str | None = None, explicit: dict | None = None,
                   source: str = "the table") -> ColumnMapping:
    """Choose the profile and the role -> column mapping for a set of columns.

    Parameters
    ----------
    infos : list of ColumnInfo or astropy.table.Table
        The columns (names, units, UCDs).
    profile : str, optional
        Force one profile of :data:`PROFILES` (or ``"none"``: explicit columns only).
    explicit : dict, optional
        ``{role: column}``; overrides detection for those roles.
    source : str
        Name of the input, for error messages.

    Returns
    -------
    ColumnMapping

    Raises
    ------
    HrstageInputError
        Unknown profile or role, a named column that does not exist, or no route possible; the
        message lists what was found and what each profile misses.
    """
    if not isinstance(infos, (list, tuple)):
        infos = infos_from_table(infos)
    explicit = _resolve_explicit(dict(explicit or {}), infos)
    if profile is not None and profile != "none" and profile not in PROFILES:
        raise HrstageInputError(f"unknown profile {profile!r}; profiles are: {', '.join(PROFILES)}, none")

    if profile == "none":
        routes = tuple(r for r in ROUTES if _route_ok(r, explicit))
        if not routes:
            miss = "; ".join(f"{r}: {_route_missing(r, explicit)}" for r in ROUTES)
            raise HrstageInputError(f"the columns named for {source} give no route to an HR position; "
                                    f"missing {miss}")
        return ColumnMapping("none", dict(explicit), routes, tuple(explicit))

    candidates = [PROFILES[profile]] if profile else list(PROFILES.values())
    best = None
    report = []
    for prof in candidates:
        found = _match(prof, infos, taken=set(explicit.values()))
        for role in explicit:
            found.pop(role, None)
        roles = {**explicit, **found}
        routes = tuple(r for r in prof.routes if _route_ok(r, roles))
        # explicit roles may open a route the profile does not list
        routes += tuple(r for r in ROUTES if r not in routes and _route_ok(r, explicit))
        # most roles covered; on a tie, the profile whose preferred route is complete
        score = (len(roles), bool(routes) and routes[0] == prof.routes[0])
        if routes:
            if best is None or score > best[0]:
                best = (score, prof, roles, routes)
        else:
            report.append(f"{prof.name} lacks {' or '.join(_route_missing(r, roles) for r in prof.routes)}")
    if best is None:
        seen = {**explicit}
        for prof in PROFILES.values():
            for role, col in _match(prof, infos, taken=set()).items():
                seen.setdefault(role, col)
        found_text = ", ".join(f"{r}={c}" for r, c in seen.items()) or "no column we know"
        names = [i.name for i in infos]
        shown = ", ".join(names[:20]) + (" ..." if len(names) > 20 else "")
        raise HrstageInputError(
            f"no column profile fits {source} (columns: {shown}): found {found_text}; " + "; ".join(report)
            + "; name the columns with --col ROLE=NAME (Python: ROLE='NAME')"
        )
    _, prof, roles, routes = best
    ordered = {r: roles[r] for r in ROLES if r in roles}
    notes = []
    for lin, log in (("teff", "logt"), ("lum", "logl")):
        if log in ordered and log not in explicit and lin not in ordered:
            notes.append(f"column {ordered[log]} has a log unit: used as {log}")
    return ColumnMapping(prof.name, ordered, routes, tuple(explicit), notes)
