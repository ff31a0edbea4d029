"""The pipeline face: a catalogue in, the same catalogue with stage columns out.

:func:`classify_table` (``hrstage.classify``) works on an astropy Table in memory;
:func:`classify_chunk` does the work for one chunk (astropy Table or pyarrow Table / RecordBatch)
with options resolved once (:func:`resolve_options`), so the streaming path
(:func:`classify_file`) and the Dask face reuse it; :func:`classify_file` streams a file of any
size from disk to disk.

For every row the pipeline

1. reads the columns of the detected (or named) profile (:mod:`hrstage.catalog.profiles`) and
   cleans them (:mod:`hrstage.catalog.sanity`: units, fill values, masks);
2. places the star on the HR diagram (:mod:`hrstage.derive`) by the first route of the profile
   whose inputs the row has (Teff+L, Teff+R, Gaia photometry+parallax, Johnson+parallax,
   Teff+log g), falling back row by row to the next route;
3. labels it (:func:`hrstage.classifier.classify_hr`) and, when an MK type column is present,
   checks the type (:func:`hrstage.sptype.check_types`).

Every input row comes out, in input order, with its columns untouched; a row that cannot be placed
is ``unclassified`` with the reason in ``flag_text``. Labels are indicative: they come from analytic
relations and the HR position and do not replace a spectroscopic analysis.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from . import __version__
from . import flags as F
from .catalog.profiles import ROLES, ROUTES, ColumnInfo, ColumnMapping, detect_profile, infos_from_table
from .catalog.sanity import MISSING, NONPHYSICAL, NOT_A_NUMBER, OK, SENTINEL, STATUS_TEXT, extract_roles
from .classifier._text import CodedText, int_codes, join_coded
from .columns import CLASSIFY_COLUMNS, COLUMNS, SPTYPE_COLUMNS
from .errors import HrstageInputError
from .stages import STAGES, UNCLASSIFIED as _UNCLASSIFIED_CODE

CAUTION = ("Stage labels are indicative: they follow from the HR position and analytic stellar relations "
           "and do not replace a spectroscopic analysis; luminosities from low signal-to-noise parallaxes "
           "and relations used outside their range are flagged.")

#: Roles whose absence makes a row's route impossible, per route (first alternative is the one read).
_ROUTE_NEEDS = {
    "teff_lum": ("teff", "logl"),
    "teff_radius": ("teff", "radius"),
    "gaia": ("g", "bp_rp", "parallax"),
    "johnson": ("v", "b_v", "parallax"),
    "teff_logg": ("teff", "logg"),
}
_ROUTE_TEXT = {
    "teff_lum": "Teff and L", "teff_radius": "Teff and radius", "gaia": "Gaia G, BP-RP and parallax",
    "johnson": "V, B-V and parallax", "teff_logg": "Teff and log g",
}


@dataclass
class ClassifyOptions:
    """Everything :func:`classify_chunk` needs, resolved once per catalogue.

    Attributes
    ----------
    mapping : ColumnMapping or None
        Role -> column (``None``: detect from the first chunk).
    profile : str or None
        Profile to force (``None``: detect; ``"none"``: only the named columns).
    columns : dict
        Explicit ``{role: column}``.
    feh : float or None
        [Fe/H] for rows without one (``None``: solar, flagged ``NO_METALLICITY``).
    n_draws : int
        Monte Carlo draws per star for the stage probabilities (0: point classification).
    seed : int
        Seed of the draws (reproducible; the stream also depends on the chunk's first row).
    min_parallax_snr, parallax_zp, r_v : float
        Passed to the photometric routes.
    prefix : str
        Put in front of the names of our columns (for inputs that already have one of them).
    check_sptypes : bool
        Check MK types when an ``sptype`` column is present.
    params : dict
        Further keyword parameters for :func:`hrstage.classifier.classify_hr`.
    add_columns : tuple of str or None
        Which of our columns to add (``None``: all of them); ``stage`` and ``flags`` always
        come. See :func:`make_options` for ``"brief"``.
    """

    mapping: ColumnMapping | None = None
    profile: str | None = None
    columns: dict = field(default_factory=dict)
    feh: float | None = None
    n_draws: int = 0
    seed: int = 20240601
    min_parallax_snr: float = 5.0
    parallax_zp: float = 0.0
    r_v: float = 3.1
    prefix: str = ""
    check_sptypes: bool = True
    params: dict = field(default_factory=dict)
    source: str = "the table"
    add_columns: tuple | None = None

    def settings(self) -> dict:
        """JSON-friendly summary, written into the output's metadata."""
        return {"profile": self.mapping.profile if self.mapping else self.profile,
                "roles": dict(self.mapping.roles) if self.mapping else dict(self.columns),
                "routes": list(self.mapping.routes) if self.mapping else [],
                "feh_default": self.feh, "n_draws": self.n_draws, "seed": self.seed,
                "min_parallax_snr": self.min_parallax_snr, "parallax_zp": self.parallax_zp,
                "r_v": self.r_v, "prefix": self.prefix, "params": dict(self.params),
                "add_columns": "all" if self.add_columns is None else list(self.add_columns)}


_OPTION_NAMES = {"profile", "columns", "feh", "n_draws", "draws", "seed", "min_parallax_snr", "parallax_zp",
                 "r_v", "prefix", "check_sptypes", "params", "source", "add_columns"}

#: Our columns that always come, whatever ``add_columns`` says (the interface contract's stage,
#: and the flag bits that say why a row is unclassified or flagged).
ALWAYS_ADDED = ("stage", "flags")

#: ``add_columns="brief"``: the label, its probability, the mass, the position used and the flag
#: bits (and the MK-type verdict when types are checked). Leaves out the per-stage probabilities,
#: the errors, the provenance and the readable reasons - for very large catalogues.
BRIEF_COLUMNS = ("stage", "stage_prob", "mass_est", "teff_used", "logl_used", "flags", "sptype_verdict")


def _add_columns(value):
    """``add_columns`` option -> tuple of our column names, or None for all of them."""
    if value is None:
        return None
    if isinstance(value, str):
        key = value.strip().lower()
        if key == "all":
            return None
        if key == "brief":
            return BRIEF_COLUMNS
        value = [v for v in value.split(",") if v.strip()]
    names = [str(v).strip() for v in value]
    known = (*CLASSIFY_COLUMNS, *SPTYPE_COLUMNS)
    bad = [v for v in names if v not in known]
    if bad:
        raise HrstageInputError(f"unknown column(s) to add: {', '.join(bad)}; choose 'all', 'brief' or "
                                f"names among {', '.join(known)}")
    return tuple(c for c in known if c in set(names) | set(ALWAYS_ADDED))


def make_options(**options) -> ClassifyOptions:
    """Keyword options -> :class:`ClassifyOptions` (mapping not yet resolved).

    Role names are accepted as keywords for explicit columns (``teff="TEFF"``). ``feh`` and
    ``mass`` may be a column name (str) or, for ``feh``, a number used for every row without one.
    Unknown keywords raise :class:`~hrstage.errors.HrstageInputError` (typos do not pass silently).
    """
    columns = dict(options.pop("columns", None) or {})
    kw = {}
    for key, value in options.items():
        if key == "feh" and value is not None and not isinstance(value, str):
            kw["feh"] = float(value)
        elif key in ROLES and key not in _OPTION_NAMES - {"feh"}:
            if value is not None:
                if not isinstance(value, str):
                    raise HrstageInputError(f"option {key}= names a column and must be a string, got {value!r}")
                columns[key] = value
        elif key in ("draws", "n_draws"):
            n = int(value)
            if n < 0:
                raise HrstageInputError(f"number of draws must be >= 0, got {value}")
            kw["n_draws"] = n
        elif key == "add_columns":
            kw[key] = _add_columns(value)
        elif key in _OPTION_NAMES:
            kw[key] = value
        else:
            raise HrstageInputError(f"unknown option {key!r}; options are {', '.join(sorted(_OPTION_NAMES))} "
                                    f"and the role names ({', '.join(ROLES)})")
    if kw.get("min_parallax_snr") is not None and float(kw["min_parallax_snr"]) < 0:
        raise HrstageInputError("min_parallax_snr must be >= 0")
    return ClassifyOptions(columns=columns, **{k: v for k, v in kw.items() if v is not None or k == "feh"})


def resolve_options(infos, opts: ClassifyOptions) -> ClassifyOptions:
    """Detect the profile on the columns ``infos`` (names, units, UCDs) and fix the mapping."""
    if opts.mapping is not None:
        return opts
    mapping = detect_profile(infos, profile=opts.profile, explicit=opts.columns, source=opts.source)
    names = [i.name for i in infos]
    clash = [opts.prefix + c for c in (*CLASSIFY_COLUMNS, *SPTYPE_COLUMNS) if opts.prefix + c in names]
    if clash:
        raise HrstageInputError(
            f"the input already has column(s) {', '.join(clash)} that hrstage would add; pass a prefix for "
            "ours (Python prefix='hrs_', command line --prefix hrs_) - input columns are never overwritten")
    return replace(opts, mapping=mapping)


# ----------------------------------------------------------------------------------- rows
def _ok(status, role):
    return status[role] == OK if role in status else None


def _log_lum(values, status):
    """One log L per row from lum and/or logl (lum first), with its error in dex."""
    n = len(next(iter(values.values())))
    logl = np.full(n, np.nan)
    err = np.full(n, np.nan)
    st = np.full(n, MISSING, dtype=np.int8)
    if "logl" in values:
        logl = values["logl"].copy()
        st = status["logl"].copy()
        if "logl_err" in values:
            err = values["logl_err"].copy()
    if "lum" in values:
        good = status["lum"] == OK
        with np.errstate(divide="ignore", invalid="ignore"):
            logl = np.where(good, np.log10(values["lum"]), logl)
            if "lum_err" in values:
                err = np.where(good, values["lum_err"] / (values["lum"] * np.log(10.0)), err)
        worse = ~good & (st != OK)
        st = np.where(good, OK, np.where(worse, np.maximum(st, status["lum"]), st)).astype(np.int8)
    return logl, err, st


def _opt(values, role, idx):
    return values[role][idx] if role in values else None


def _run_route(route, idx, values, opts, feh):
    """Call the derive function of one route on the rows ``idx``; returns an HRPosition."""
    from . import derive

    teff = _opt(values, "teff", idx)
    teff_err = _opt(values, "teff_err", idx)
    f = feh[idx]
    if route == "teff_lum":
        return derive.from_teff_lum(teff, values["logl"][idx], teff_err=teff_err,
                                    lum_err=_opt(values, "logl_err", idx), lum_is_log=True, feh=f)
    if route == "teff_radius":
        return derive.from_teff_radius(teff, values["radius"][idx], teff_err=teff_err,
                                       radius_err=_opt(values, "radius_err", idx), feh=f)
    if route == "teff_logg":
        return derive.from_teff_logg(teff, values["logg"][idx], feh=f, teff_err=teff_err,
                                     logg_err=_opt(values, "logg_err", idx), feh_err=_opt(values, "feh_err", idx))
    if route == "gaia":
        return derive.from_gaia(values["g"][idx], values["bp_rp"][idx], values["parallax"][idx],
                                g_err=_opt(values, "g_err", idx), bp_rp_err=_opt(values, "bp_rp_err", idx),
                                parallax_err=_opt(values, "parallax_err", idx), parallax_zp=opts.parallax_zp,
                                a_g=_opt(values, "a_g", idx), e_bp_rp=_opt(values, "e_bp_rp", idx),
                                a_v=_opt(values, "a_v", idx), r_v=opts.r_v, feh=f,
                                logg=_opt(values, "logg", idx), teff=teff, teff_err=teff_err,
                                min_parallax_snr=opts.min_parallax_snr)
    if route == "johnson":
        v_ks = v_ks_err = None
        if "ks" in values:
            v_ks = values["v"][idx] - values["ks"][idx]
            if "v_err" in values and "ks_err" in values:
                v_ks_err = np.hypot(values["v_err"][idx], values["ks_err"][idx])
        return derive.from_johnson(values["v"][idx], values["b_v"][idx], values["parallax"][idx],
                                   v_err=_opt(values, "v_err", idx), b_v_err=_opt(values, "b_v_err", idx),
                                   parallax_err=_opt(values, "parallax_err", idx), v_ks=v_ks, v_ks_err=v_ks_err,
                                   e_b_v=_opt(values, "ebv", idx), a_v=_opt(values, "a_v", idx), r_v=opts.r_v,
                                   feh=f, teff=teff, teff_err=teff_err, parallax_zp=opts.parallax_zp,
                                   min_parallax_snr=opts.min_parallax_snr)
    raise ValueError(route)  # pragma: no cover


def _status_reason(route, status, mapping, rows, words=None):
    """Per-row text for rows whose route inputs are not all usable (loops over the few distinct
    combinations of statuses; the text of an entry that is not a number is quoted per row)."""
    needs = [r for r in _ROUTE_NEEDS[route] if r in status]
    words = words or {}
    base = 8
    code = np.zeros(len(rows), dtype=np.int64)
    for k, role in enumerate(needs):
        code += status[role][rows].astype(np.int64) * (base ** k)
    uniq, inv = np.unique(code, return_inverse=True)
    inv = inv.reshape(-1)
    out = np.full(len(rows), "", dtype=object)
    for j, c in enumerate(uniq):
        sel = inv == j
        text = np.full(int(sel.sum()), "", dtype=object)
        for k, role in enumerate(needs):
            st = (int(c) // base ** k) % base
            if st == OK:
                continue
            shown = role
            if role not in mapping.roles:   # derived role: name the one the user gave
                shown = {"teff": "logt", "logl": "lum", "bp_rp": "bp"}.get(role, role)
            col = mapping.roles.get(shown, shown)
            if role == "bp_rp" and "rp" in mapping.roles:
                col = f"{mapping.roles['bp']}/{mapping.roles['rp']}"
                shown = "bp/rp"
            part = f"{shown} {STATUS_TEXT[st]} in column {col}"
            if st == NOT_A_NUMBER and shown in words:     # quote the word itself (distinct words only)
                uw, wi = np.unique(words[shown][rows[sel]], return_inverse=True)
                quoted = np.array([f"{part} ({str(w)[:40]!r}, expected a number)" for w in uw], dtype=object)
                part = quoted[wi.reshape(-1)]
            text = np.where(text == "", part, text + ", " + part)
        out[sel] = text
    return out


def _positions(values, status, mapping, opts, feh, n):
    """HR positions for all rows, route by route with row-wise fall-back.

    ``source_codes`` of the result holds the provenance texts of every route used and a code per
    row (rows no route placed point at "").
    """
    from .derive import HRPosition

    out = HRPosition(teff=np.full(n, np.nan), logt=np.full(n, np.nan), logl=np.full(n, np.nan),
                     logt_err=np.full(n, np.nan), logl_err=np.full(n, np.nan), corr=np.zeros(n),
                     flags=np.zeros(n, dtype=np.int64), source=None)
    done = np.zeros(n, dtype=bool)
    route_of = np.full(n, -1, dtype=np.int16)
    fail_flags = np.zeros(n, dtype=np.int64)
    src_texts = [np.array([""], dtype=object)]
    src_size = 1
    src_code = np.zeros(n, dtype=np.int64)
    for k, route in enumerate(mapping.routes):
        needs = _ROUTE_NEEDS[route]
        usable = ~done
        for role in needs:
            usable &= (status[role] == OK) if role in status else False
        idx = np.flatnonzero(usable)
        if idx.size == 0:
            continue
        pos = _run_route(route, idx, values, opts, feh)
        good = np.isfinite(pos.logt) & np.isfinite(pos.logl)
        ok_rows = idx[good]
        if ok_rows.size == n:   # one route placed every row: its arrays are the result
            for name in ("teff", "logt", "logl", "logt_err", "logl_err", "corr"):
                setattr(out, name, np.asarray(getattr(pos, name), dtype=float))
            out.flags = np.asarray(pos.flags, dtype=np.int64)
        else:
            for name in ("teff", "logt", "logl", "logt_err", "logl_err", "corr"):
                getattr(out, name)[ok_rows] = np.asarray(getattr(pos, name), dtype=float)[good]
            out.flags[ok_rows] = np.asarray(pos.flags, dtype=np.int64)[good]
        if pos.source_codes is not None:
            texts, codes = pos.source_codes
            texts = np.asarray(texts, dtype=object)
            codes = np.broadcast_to(np.asarray(codes, dtype=np.int64), (idx.size,))
        else:  # a route without coded provenance: its distinct texts
            texts, codes = np.unique(np.broadcast_to(np.asarray(pos.source, dtype=object), (idx.size,)).astype(str),
                                     return_inverse=True)
            texts = texts.astype(object)
        if k > 0:
            texts = f"fallback to {route}: " + texts
        src_code[ok_rows] = codes.reshape(-1)[good] + src_size
        src_texts.append(texts)
        src_size += len(texts)
        fail_flags[idx[~good]] |= np.asarray(pos.flags, dtype=np.int64)[~good]
        route_of[ok_rows] = k
        done[ok_rows] = True
    texts = np.concatenate(src_texts)
    out.source_codes = (texts, src_code)
    out.source = texts[src_code]
    return out, done, route_of, fail_flags


#: Roles read for other faces (plots, reports) but not needed to classify a row.
_UNUSED_ROLES = ("id",)


def _compute(sub, opts: ClassifyOptions, offset: int = 0) -> dict:
    """Our columns (canonical names, numpy arrays) for one chunk given as an astropy Table."""
    from .classifier import classify_hr

    mapping = opts.mapping
    n = len(sub)
    words = {}
    values, status = extract_roles(sub, mapping, words, skip=_UNUSED_ROLES)
    if n == 0:
        return {c: np.zeros(0, dtype=_dtype(c)) for c in _our_columns(opts)}
    if "logl" in values or "lum" in values:
        values["logl"], values["logl_err"], status["logl"] = _log_lum(values, status)
        status["logl_err"] = np.where(np.isfinite(values["logl_err"]), OK, MISSING).astype(np.int8)

    in_flags = np.zeros(n, dtype=np.int64)
    if "feh" in values:
        feh = values["feh"].copy()
    else:
        feh = np.full(n, np.nan)
    no_feh = ~np.isfinite(feh)
    feh[no_feh] = 0.0 if opts.feh is None else opts.feh
    if opts.feh is None:
        in_flags[no_feh] |= F.NO_METALLICITY
    # no [Fe/H] column: every row shares one value, passed as a scalar so that the classifier uses
    # the map at exactly that [Fe/H] (arrays use the nearest grid map per row)
    feh_clf = feh if "feh" in values else float(0.0 if opts.feh is None else opts.feh)

    pos, done, route_of, fail_flags = _positions(values, status, mapping, opts, feh, n)

    # why a row is unclassified, and MISSING_INPUT / BAD_INPUT
    first = mapping.routes[0]
    not_done = np.flatnonzero(~done)
    reason_text = np.full(not_done.size, "", dtype=object)
    if not_done.size:
        in_flags[not_done] |= fail_flags[not_done]      # why the routes failed (e.g. parallax <= 0)
        lacks = np.zeros(not_done.size, dtype=bool)
        for role in _ROUTE_NEEDS[first]:
            if role in status:
                st = status[role][not_done]
                lacks |= st != OK
                in_flags[not_done[(st == NONPHYSICAL) | (st == NOT_A_NUMBER)]] |= F.BAD_INPUT
                in_flags[not_done[(st == MISSING) | (st == SENTINEL)]] |= F.MISSING_INPUT
        text = np.full(not_done.size, "", dtype=object)
        if lacks.any():
            text[lacks] = _status_reason(first, status, mapping, not_done[lacks], words)
        rest = ~lacks
        if rest.any():
            text[rest] = F.describe_many(fail_flags[not_done[rest]])
        routes = " / ".join(_ROUTE_TEXT[r] for r in mapping.routes)
        reason_text = f"unclassified: no HR position from {routes}: " + text
    # MISSING_INPUT only marks a value the row's route needs (the row is then unclassified, above);
    # an optional input that is absent (errors, [Fe/H], MK type, mass) does not set it: [Fe/H] has
    # NO_METALLICITY, missing errors give a point classification, a missing MK type is not checked.

    mass = values.get("mass")
    res = classify_hr(pos.logt, pos.logl, logt_err=_nan_none(pos.logt_err), logl_err=_nan_none(pos.logl_err),
                      corr=pos.corr, feh=feh_clf, mass=mass, n_draws=opts.n_draws,
                      seed=_chunk_seed(opts.seed, offset), **opts.params)
    cols = dict(res.to_columns(coded=True))
    # the Teff as given (or derived), not 10**log10(Teff), which adds float noise (6023.000000000001)
    cols["teff_used"] = np.where(np.isfinite(pos.teff), pos.teff, cols["teff_used"])
    src_texts, src_codes = pos.source_codes
    src_codes = np.where(done, src_codes, len(src_texts))
    cols["hr_source"] = CodedText(np.append(src_texts, "none"), src_codes)
    stage_code = np.where(done, res.code, _UNCLASSIFIED_CODE)
    cols["stage"] = CodedText(STAGES, stage_code)
    extra_bits = in_flags | pos.flags
    flags_all = np.asarray(cols.get("flags", np.zeros(n, dtype=np.int64)), dtype=np.int64) | extra_bits
    # readable text: our reasons first, then the classifier's, then the bits nobody described
    own_bits = extra_bits & ~np.asarray(cols.get("flags", 0), dtype=np.int64)
    own_notes = [_bits_note(own_bits)]   # after the classifier's notes (built only if written)

    if opts.check_sptypes and "sptype" in values:
        from .sptype import check_types

        chk = check_types(values["sptype"], pos.logt, pos.logl, logt_err=_nan_none(pos.logt_err),
                          logl_err=_nan_none(pos.logl_err), feh=feh_clf)
        cols.update(chk.to_columns())
        sp_flags = np.asarray(chk.flags, dtype=np.int64)
        own_notes.append(_bits_note(sp_flags & ~flags_all))
        flags_all |= sp_flags
    cols["flags"] = flags_all
    wanted = _our_columns(opts, sptype="sptype_verdict" in cols)
    if "flag_text" in wanted:   # the reasons are formatted only when they are written
        notes = [(not_done, reason_text), *res.flag_notes(), *own_notes]
        cols["flag_text"] = CodedText(*join_coded(n, notes))
    out = {}
    for c in wanted:
        if c in cols:
            v = cols[c]
            want = COLUMNS[c].dtype
            if want in ("f4", "f8") and v.dtype != want:
                v = v.astype(want)
            out[c] = v
    return out


def _bits_note(bits):
    """The readable description of flag bits as a note ``(rows, (texts, codes))`` over the rows
    where any bit is set (one description per distinct combination of bits)."""
    idx = np.flatnonzero(bits)
    return idx, F.describe_codes(bits[idx])


def _nan_none(a):
    a = np.asarray(a, dtype=float)
    return None if not np.isfinite(a).any() else a


def _chunk_seed(seed, offset):
    if offset == 0:
        return seed
    return int(np.random.SeedSequence([int(seed), int(offset)]).generate_state(1)[0])


def _our_columns(opts, sptype=False):
    names = list(CLASSIFY_COLUMNS)
    if sptype or (opts.check_sptypes and opts.mapping is not None and "sptype" in opts.mapping.roles):
        names += list(SPTYPE_COLUMNS)
    if opts.add_columns is not None:
        names = [c for c in names if c in opts.add_columns]
    return names


def _dtype(name):
    d = COLUMNS[name].dtype
    return "U1" if d in ("U", "O") else d


def _table_meta(opts):
    return {"hrstage_version": __version__, "hrstage_profile": opts.mapping.profile,
            "hrstage_roles": opts.mapping.roles_text(), "hrstage_routes": ",".join(opts.mapping.routes),
            "hrstage_options": json.dumps(opts.settings(), sort_keys=True, default=str),
            "hrstage_caution": CAUTION}


# --------------------------------------------------------------------------------- public
def _is_arrow(obj):
    try:
        import pyarrow as pa
    except ImportError:  # pragma: no cover
        return False
    return isinstance(obj, (pa.Table, pa.RecordBatch))


def _arrow_infos(data, attrs):
    out = []
    for name in data.schema.names:
        info = attrs.get(name, {})
        ucd = (info.get("meta") or {}).get("ucd")
        out.append(ColumnInfo(name, info.get("unit"), ucd))
    return out


#: Our text columns with few distinct values: written as dictionary-encoded Arrow strings
#: (one copy of each text per chunk, integer codes per row).
DICTIONARY_COLUMNS = ("stage", "mass_method", "hr_source", "sptype_parsed", "sptype_lumclass", "sptype_stage",
                      "sptype_verdict", "sptype_suggested")

_YAML_CACHE: dict = {}


def _output_yaml(schema, attrs, opts):
    """``table_meta_yaml`` for an arrow output chunk: the input's column attributes, ours from
    :mod:`hrstage.columns`, the run's metadata; built once per (schema, options)."""
    from .catalog.arrow import meta_yaml, numpy_dtype_of

    key = (tuple(schema.names), tuple(str(t) for t in schema.types), id(attrs), id(opts.mapping), opts.prefix,
           opts.n_draws, opts.seed, opts.feh)
    hit = _YAML_CACHE.get(key)
    if hit is not None:
        return hit
    col_attrs = {k: v for k, v in (attrs or {}).items() if k != "__table_meta__"}
    for name in COLUMNS:
        full = opts.prefix + name
        if full in schema.names:
            spec = COLUMNS[name]
            col_attrs[full] = {"unit": spec.unit, "description": spec.description,
                               "meta": {"ucd": spec.ucd} if spec.ucd else None}
    table_meta = dict((attrs or {}).get("__table_meta__", {}))
    table_meta.update(_table_meta(opts))
    fields = [(f.name, numpy_dtype_of(f.type)) for f in schema]
    yaml = meta_yaml(fields, col_attrs, table_meta)
    if len(_YAML_CACHE) > 64:
        _YAML_CACHE.clear()
    _YAML_CACHE[key] = yaml
    return yaml


def classify_chunk(table_or_batch, options: ClassifyOptions, *, offset: int = 0, attrs: dict | None = None,
                   dictionary: bool = True, describe: bool = True):
    """Classify one chunk; the result has the chunk's columns untouched plus ours.

    Parameters
    ----------
    table_or_batch : astropy.table.Table or pyarrow.Table or pyarrow.RecordBatch
        The rows. Only the columns of the mapping are converted; the others pass through as they are
        (for arrow input, without any copy).
    options : ClassifyOptions
        From :func:`make_options`; the mapping is detected on this chunk if not yet resolved
        (resolve it once with :func:`resolve_options` when processing many chunks).
    offset : int
        Index of the chunk's first row in the whole catalogue (seeds the Monte Carlo stream).
    attrs : dict, optional
        Column attributes (units, UCDs) of an arrow input, from
        :func:`hrstage.catalog.arrow.header_from_schema` (read from its schema when omitted).
    dictionary : bool, default True
        Arrow output only: our low-cardinality text columns (:data:`DICTIONARY_COLUMNS`) as
        dictionary-encoded strings; ``False`` gives plain strings.
    describe : bool, default True
        Arrow output only: attach ``table_meta_yaml`` (units, descriptions, UCDs, run metadata) to
        the result's schema, so it can be written to Parquet as it is.

    Returns
    -------
    astropy.table.Table or pyarrow.Table
        Same kind as the input.
    """
    from astropy.table import Column, MaskedColumn, Table

    if _is_arrow(table_or_batch):
        import pyarrow as pa

        from .catalog.arrow import arrow_to_table, header_from_schema

        data = table_or_batch
        if attrs is None:
            attrs = header_from_schema(data.schema)
        opts = resolve_options(_arrow_infos(data, attrs), options)
        needed = list(dict.fromkeys(c for r, c in opts.mapping.roles.items() if r not in _UNUSED_ROLES))
        sub = arrow_to_table(data.select(needed), attrs)
        cols = _compute(sub, opts, offset)
        arrays, names = list(data.columns), list(data.schema.names)
        for name, values in cols.items():
            arrays.append(_numpy_to_arrow(values, dictionary and name in DICTIONARY_COLUMNS))
            names.append(opts.prefix + name)
        out = pa.Table.from_arrays(arrays, names=names)
        if describe:
            out = out.replace_schema_metadata({b"table_meta_yaml": _output_yaml(out.schema, attrs, opts)})
        return out

    if not isinstance(table_or_batch, Table):
        raise HrstageInputError(f"expected an astropy Table or a pyarrow table, got {type(table_or_batch).__name__}")
    opts = resolve_options(infos_from_table(table_or_batch), options)
    cols = _compute(table_or_batch, opts, offset)
    out = Table(table_or_batch, copy=False)  # new table object, input columns shared, untouched
    for name, values in cols.items():
        spec = COLUMNS[name]
        if isinstance(values, CodedText):
            values = values.to_numpy()
        col_cls = MaskedColumn if np.ma.isMaskedArray(values) else Column
        out[opts.prefix + name] = col_cls(values, name=opts.prefix + name, unit=spec.unit,
                                          description=spec.description,
                                          meta={"ucd": spec.ucd} if spec.ucd else None, copy=False)
    out.meta.update(_table_meta(opts))
    return out


def _used_codes(codes):
    """(the distinct codes in use, in order of first appearance; each row's index among them).

    First-appearance order is what ``pyarrow`` ``dictionary_encode`` gives: dictionary pages
    then come out as they did from encoding the row texts.
    """
    codes = np.asarray(codes, dtype=np.int64)
    used, inv = int_codes(codes)
    if len(used) > 1:
        if len(used) <= 64:
            first = np.array([np.argmax(inv == k) for k in range(len(used))])
        else:
            first = np.unique(inv, return_index=True)[1]
        order = np.argsort(first, kind="stable")
        rank = np.empty_like(order)
        rank[order] = np.arange(len(order))
        used, inv = used[order], rank[inv]
    return used, inv


def _numpy_to_arrow(values, dictionary: bool = False):
    """One of our columns -> arrow array: text as (dictionary-encoded) strings, numbers zero-copy."""
    import pyarrow as pa

    if isinstance(values, CodedText):   # distinct texts + codes: no per-row string is made
        if not dictionary:
            return pa.array(values.texts, type=pa.string(), from_pandas=False).take(
                pa.array(np.asarray(values.codes, dtype=np.int32)))
        used, codes = _used_codes(values.codes)
        texts = values.texts[used]
        # two codes may carry the same text (e.g. two stages with one mass method): a dictionary
        # holds each text once, in order of first appearance
        slot: dict = {}
        merge = np.array([slot.setdefault(t, len(slot)) for t in texts.tolist()], dtype=np.int64)
        if len(slot) < len(texts):
            texts = np.array(list(slot), dtype=object)
            codes = merge[codes]
        return pa.DictionaryArray.from_arrays(pa.array(codes.astype(np.int32, copy=False)),
                                              pa.array(texts, type=pa.string(), from_pandas=False))
    arr = np.asarray(values)
    if arr.dtype.kind in "UO":
        text = pa.array(arr, type=pa.string(), from_pandas=False)
        return text.dictionary_encode() if dictionary else text
    return pa.array(arr)


def classify_table(table, **options):
    """Label every star of an astropy Table with its evolutionary stage.

    Parameters
    ----------
    table : astropy.table.Table
        The catalogue. Columns are found by profile (``docs/catalog.md``); a table with ``teff`` (K)
        and ``lum`` (Lsun), optionally ``feh``, ``logg`` and errors, needs no options.
    **options
        ``profile`` (``"direct"``, ``"gaia"``, ``"johnson"``, ``"spectroscopic"``, ``"none"``);
        role names as keywords to name columns (``teff="TEFF"``, ``lum="LUM"``, ``sptype="SpT"``)
        or ``columns={role: name}``; ``feh`` (a column name, or a number for rows without one);
        ``n_draws`` (Monte Carlo draws for probabilities, default 0), ``seed``;
        ``min_parallax_snr`` (default 5), ``parallax_zp`` (mas, subtracted), ``r_v``;
        ``prefix`` for our column names; ``check_sptypes`` (default True); ``params`` (dict for
        :func:`hrstage.classifier.classify_hr`); ``add_columns`` (``"all"``, the default;
        ``"brief"``: :data:`BRIEF_COLUMNS`; or a list of our column names - ``stage`` and
        ``flags`` always come).

    Returns
    -------
    astropy.table.Table
        The input columns, in order and untouched, then ``stage``, the probabilities, mass estimate,
        the Teff and L used, ``hr_source``, ``flags``, ``flag_text`` (and the ``sptype_*`` columns
        when an MK type column is present), or those ``add_columns`` asks for. ``meta`` records
        the profile, roles and options.

    Raises
    ------
    HrstageInputError
        No usable columns, a named column missing, a whole-column unit mistake, a name clash.
    """
    from astropy.table import Table

    if not isinstance(table, Table):
        raise HrstageInputError(f"classify expects an astropy Table, got {type(table).__name__}")
    opts = make_options(**options)
    opts = resolve_options(infos_from_table(table), opts)
    return classify_chunk(table, opts)


def resolve_workers(workers) -> int:
    """Number of worker processes for :func:`classify_file`: a positive integer, or ``"auto"`` for
    the cores this process may run on (``os.sched_getaffinity`` where available)."""
    import os

    if isinstance(workers, str):
        if workers.strip().lower() != "auto":
            try:
                workers = int(workers)
            except ValueError:
                raise HrstageInputError(f"workers must be a positive whole number or 'auto', got {workers!r}") from None
        else:
            try:
                return max(1, len(os.sched_getaffinity(0)))
            except AttributeError:  # pragma: no cover (macOS, Windows)
                return max(1, os.cpu_count() or 1)
    if workers is None:
        return 1
    if isinstance(workers, float) and not workers.is_integer():
        raise HrstageInputError(f"workers must be a whole number, got {workers}")
    workers = int(workers)
    if workers < 1:
        raise HrstageInputError(f"workers must be >= 1 (or 'auto'), got {workers}")
    return workers


#: What a worker process of :func:`classify_file` needs: (options, attrs), set by the pool initializer
#: (inherited, not pickled, under the fork start method).
_WORKER_STATE: tuple | None = None


def _worker_init(opts, attrs, spill, out_format):
    global _WORKER_STATE
    _WORKER_STATE = (opts, attrs, spill, out_format)


def _classify_one(chunk, opts, offset, attrs):
    from .catalog.formats import describe_columns

    try:
        res = classify_chunk(chunk, opts, offset=offset, attrs=attrs)
    except HrstageInputError as exc:
        if offset == 0:
            raise
        n = _rows_of(chunk)  # rows in the message are counted within the chunk: say which chunk
        raise HrstageInputError(f"{exc} (in the chunk of data rows {offset}-{offset + n - 1}, "
                                f"counted from 0; row numbers above are within the chunk)") from None
    if attrs is None:
        describe_columns(res, prefix=opts.prefix)
    return res


def _worker_task(chunk, offset):
    """Classify one chunk in a worker; returns ``(kind, payload, tally)``.

    For a CSV output the worker also formats the rows (``"csv"``: the text without header and the
    column names), the slow part of CSV writing. Otherwise an Arrow result goes back as an Arrow IPC
    file in the run's spill folder (``"file"``: the parent memory-maps it; pickling ~300 bytes per
    row through a pipe was measured as the parent's main cost), an astropy Table as it is
    (``"table"``). ``tally`` is :func:`_chunk_tally` of the result.
    """
    import os

    opts, attrs, spill, out_format = _WORKER_STATE
    res = _classify_one(chunk, opts, offset, attrs)
    tally = _chunk_tally(res, opts.prefix)
    if out_format == "csv":
        from .catalog.arrow import arrow_to_table
        from .catalog.formats import arrow_csv, csv_supported, csv_text

        if _is_arrow(res) and csv_supported(res.schema):
            return "csv", (arrow_csv(res, header=False), list(res.schema.names)), tally
        table = arrow_to_table(res) if _is_arrow(res) else res
        return "csv", (csv_text(table, header=False), list(table.colnames)), tally
    if spill is None or not _is_arrow(res):
        return "table", res, tally
    import pyarrow as pa

    path = os.path.join(spill, f"chunk-{offset}.arrow")
    with pa.OSFile(path, "wb") as sink, pa.ipc.new_file(sink, res.schema) as ipc:
        ipc.write_table(res)
    return "file", path, tally


def _chunk_tally(res, prefix):
    """(stage names, counts, flag integers, rows) of one classified chunk."""
    stage, fl = _chunk_counts(res, prefix)
    return stage[0], np.asarray(stage[1]), fl, _rows_of(res)


class _Received:
    """A worker's result in the parent: the table, and the memory map to release after writing."""

    def __init__(self, item):
        kind, value, self.tally = item
        self.kind = kind
        self.path = self.source = None
        if kind in ("table", "csv"):
            self.table = value
            return
        import pyarrow as pa

        self.path = value
        self.source = pa.memory_map(value, "r")
        self.table = pa.ipc.open_file(self.source).read_all()

    def release(self):
        import os

        self.table = None
        if self.source is not None:
            self.source.close()
            os.unlink(self.path)


class _ReadAhead:
    """Iterate ``items`` with the next item fetched in a background thread while the caller works
    on the current one (pyarrow's readers release the GIL). One item ahead, in order; an exception
    of the source is raised, unchanged, where that item would have been handed out."""

    def __init__(self, items, pool):
        self._items = iter(items)
        self._pool = pool
        self._next = None
        self._started = False

    def _fetch(self):
        try:
            return False, next(self._items)
        except StopIteration:
            return True, None

    def __iter__(self):
        return self

    def __next__(self):
        if not self._started:
            self._started = True
            self._next = self._pool.submit(self._fetch)
        if self._next is None:
            raise StopIteration
        future, self._next = self._next, None
        done, item = future.result()
        if done:
            raise StopIteration
        self._next = self._pool.submit(self._fetch)
        return item

    def settle(self) -> None:
        """Wait until the background fetch (if any) has finished; its item is kept."""
        if self._next is not None:
            _wait_quietly(self._next)

    def close(self) -> None:
        """Wait for the fetch in flight, drop its item, close the source."""
        future, self._next = self._next, None
        if future is not None:
            _wait_quietly(future)
        close = getattr(self._items, "close", None)
        if close is not None:
            close()


class _WriteBehind:
    """Run calls one at a time, in order, in a background thread; at most one runs while the caller
    prepares the next. :meth:`submit` and :meth:`wait` re-raise the exception of an earlier call
    unchanged (a failed write stops the run; nothing more is written)."""

    def __init__(self, pool):
        self._pool = pool
        self._future = None

    def submit(self, fn, *args) -> None:
        self.wait()
        self._future = self._pool.submit(fn, *args)

    def wait(self) -> None:
        future, self._future = self._future, None
        if future is not None:
            future.result()

    def drain(self) -> None:
        """Wait for the call in flight, ignoring its outcome (used when the run already failed)."""
        future, self._future = self._future, None
        if future is not None:
            _wait_quietly(future)


def _wait_quietly(future) -> None:
    from concurrent.futures import wait

    wait([future])


def _pool_context():
    """``fork`` where the platform has it (children inherit the stage maps already built, copy on
    write), else ``spawn`` (each worker builds the maps it needs once)."""
    import multiprocessing as mp

    return mp.get_context("fork" if "fork" in mp.get_all_start_methods() else "spawn")


#: Our numeric columns with few distinct values (probabilities are multiples of 1/draws, flags a
#: few bit patterns, [Fe/H] used a few grid or input values): dictionary-encoded in a Parquet
#: output, like the texts of :data:`DICTIONARY_COLUMNS`; the other numbers are written plain.
FEW_VALUED_NUMBERS = ("stage_prob", *(f"prob_{s}" for s in STAGES), "flags", "feh_used")


def _writer_columns(prefix):
    """``ChunkWriter`` keywords naming our columns (``added``) and those worth a dictionary."""
    return {"added": [prefix + n for n in COLUMNS],
            "added_dictionary": [prefix + n for n in (*DICTIONARY_COLUMNS, *FEW_VALUED_NUMBERS)]}


def _rows_of(chunk) -> int:
    return chunk.num_rows if _is_arrow(chunk) else len(chunk)


def classify_file(input_path, output_path, *, chunk_rows: int | None = None, overwrite: bool = False,
                  progress: bool = False, input_format: str | None = None, output_format: str | None = None,
                  workers=1, **options) -> dict:
    """Classify a catalogue file into a new file, chunk by chunk, atomically.

    Parameters
    ----------
    input_path, output_path : path-like
        Formats from the suffixes unless given. The output may not be the input.
    chunk_rows : int, optional
        Rows per chunk (default :data:`hrstage.catalog.DEFAULT_CHUNK_ROWS`); peak memory follows it
        for Parquet, CSV and FITS input and Parquet or CSV output (``docs/catalog.md``). The next
        chunk is read and the previous one written in background threads while one is classified
        (about three chunks in memory).
    overwrite : bool
        Replace an existing output.
    progress : bool
        Show a progress bar (tqdm) on standard error.
    workers : int or "auto", default 1
        Worker processes classifying chunks in parallel (``"auto"``: one per usable core). This
        process reads, keeps the order and writes; at most two chunks per worker are in flight, so
        memory grows with ``workers x chunk_rows``; Arrow results come back through files in a
        temporary folder (system temporary directory), removed at the end. The result is the same,
        byte for byte, as with one process (the Monte Carlo stream of a chunk depends only on its first row's index). The
        first chunk is classified here before the workers start, so they inherit its stage maps.
    **options
        As for :func:`classify_table`.

    Returns
    -------
    dict
        ``rows``, ``stages`` (count per stage), ``flagged`` (rows with a flag other than the
        no-metallicity note), ``sptype_conflicts``, ``mapping`` (text), ``notes``, ``output``,
        ``workers`` (processes used).
    """
    import shutil
    import tempfile
    from collections import deque
    from concurrent.futures import ThreadPoolExecutor

    from .catalog import DEFAULT_CHUNK_ROWS, ChunkWriter, count_rows, format_of, iter_chunks
    from .catalog.atomic import check_output_path
    from .catalog.streaming import iter_arrow_chunks

    inp, out = Path(input_path), Path(output_path)
    in_fmt = format_of(inp, input_format)
    format_of(out, output_format)
    check_output_path(out, overwrite=overwrite, inputs=[inp])
    chunk_rows = DEFAULT_CHUNK_ROWS if chunk_rows is None else int(chunk_rows)
    n_workers = resolve_workers(workers)
    opts = make_options(source=inp.name, **options)
    total = count_rows(inp, in_fmt)
    bar = None
    if progress:
        from tqdm.auto import tqdm

        bar = tqdm(total=total, unit="rows", unit_scale=True, desc=f"hrstage {inp.name}", leave=False)
    counts = np.zeros(len(STAGES), dtype=np.int64)
    tally = {"flagged": 0, "conflicts": 0, "rows": 0}
    quiet_bits = F.NO_METALLICITY | F.NO_EXTINCTION
    stage_code = {st: i for i, st in enumerate(STAGES)}
    if in_fmt in ("parquet", "csv"):        # Arrow end to end: no astropy Table per chunk
        attrs, chunks = iter_arrow_chunks(inp, chunk_rows, in_fmt)
    else:
        attrs, chunks = None, iter_chunks(inp, chunk_rows, in_fmt)
    used = 1
    pool = spill = None
    io = ThreadPoolExecutor(2, thread_name_prefix="hrstage-io")
    ahead = _ReadAhead(chunks, io)
    behind = _WriteBehind(io)
    try:
        with ChunkWriter(out, output_format, overwrite=overwrite, inputs=[inp],
                         **_writer_columns(opts.prefix)) as writer:

            def count(names, cnt, fl, n):
                for name, c in zip(names, cnt):
                    counts[stage_code[name]] += c
                tally["flagged"] += int(((fl & ~quiet_bits) != 0).sum())
                tally["conflicts"] += int(((fl & F.SPTYPE_CONFLICT) != 0).sum())
                tally["rows"] += n
                if bar is not None:
                    bar.update(n)

            def take(res):          # in the writing thread
                writer.write(res)
                count(*_chunk_tally(res, opts.prefix))

            def take_from(async_result):    # in the writing thread: a worker's result, in order
                got = _Received(async_result.get())
                try:
                    if got.kind == "csv":
                        writer.write_csv_text(got.table[0], got.table[1], got.tally[3])
                    else:
                        writer.write(got.table)
                    count(*got.tally)
                finally:
                    got.release()

            try:
                offset = 0
                pending: deque = deque()
                for chunk in ahead:
                    if opts.mapping is None:
                        infos = _arrow_infos(chunk, attrs) if attrs is not None else infos_from_table(chunk)
                        opts = resolve_options(infos, opts)
                    n = _rows_of(chunk)
                    if pool is None and (n_workers == 1 or offset == 0):
                        res = _classify_one(chunk, opts, offset, attrs)   # here: builds the maps it needs
                        behind.submit(take, res)     # written while the next chunk is classified
                        del res
                    else:
                        if pool is None:    # second chunk: start the workers, after the maps exist
                            # no thread of ours may be inside pyarrow while the workers fork
                            behind.wait()
                            ahead.settle()
                            spill = tempfile.mkdtemp(prefix="hrstage-chunks-")
                            pool = _pool_context().Pool(n_workers, initializer=_worker_init,
                                                        initargs=(opts, attrs, spill, writer.format))
                            used = n_workers
                        pending.append(pool.apply_async(_worker_task, (chunk, offset)))
                        while len(pending) >= 2 * n_workers:
                            behind.submit(take_from, pending.popleft())
                    offset += n
                    del chunk
                while pending:
                    behind.submit(take_from, pending.popleft())
                behind.wait()
            except BaseException:
                # let the thread finish the chunk it is writing before the writer is aborted
                behind.drain()
                raise
    finally:
        behind.drain()
        ahead.close()
        io.shutdown(wait=True, cancel_futures=True)
        if pool is not None:
            pool.terminate()
            pool.join()
        if spill is not None:
            shutil.rmtree(spill, ignore_errors=True)
        if bar is not None:
            bar.close()
    return {"rows": tally["rows"], "stages": {s: int(c) for s, c in zip(STAGES, counts)},
            "flagged": tally["flagged"], "sptype_conflicts": tally["conflicts"],
            "mapping": opts.mapping.describe() if opts.mapping else "",
            "notes": list(opts.mapping.notes) if opts.mapping else [], "output": str(out), "workers": used}


def _chunk_counts(res, prefix):
    """(stage names, counts) and the flag integers of one classified chunk (arrow or astropy)."""
    if _is_arrow(res):
        import pyarrow.compute as pc

        vc = pc.value_counts(res.column(prefix + "stage"))
        names = [str(v) for v in vc.field("values").to_pylist()]
        return (names, vc.field("counts").to_numpy()), res.column(prefix + "flags").to_numpy()
    names, cnt = np.unique(np.asarray(res[prefix + "stage"]).astype(str), return_counts=True)
    return (list(names), cnt), np.asarray(res[prefix + "flags"], dtype=np.int64)
