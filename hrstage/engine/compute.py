"""The per-chunk computation: one chunk's role columns in, our columns out (numpy arrays and coded
texts, canonical names). Reads and cleans the role columns (:mod:`hrstage.catalog.sanity`), places
the rows (:mod:`.routing`), labels them (:func:`hrstage.classifier.classify_hr`), checks MK types
(:func:`hrstage.sptype.check_types`) and assembles the flags and their readable reasons.
"""

from __future__ import annotations

import numpy as np

from .. import flags as F
from ..catalog.sanity import MISSING, NONPHYSICAL, NOT_A_NUMBER, OK, SENTINEL, extract_roles
from ..classifier._text import CodedText, join_coded
from ..columns import COLUMNS
from ..stages import STAGES, UNCLASSIFIED as _UNCLASSIFIED_CODE
from .options import ClassifyOptions, column_dtype, our_columns
from .routing import ROUTE_NEEDS, ROUTE_TEXT, log_lum, positions, status_reason
from .readings import mix_other_reading

#: Roles read for other faces (plots, reports) but not needed to classify a row.
UNUSED_ROLES = ("id",)


def compute_columns(sub, opts: ClassifyOptions, offset: int = 0) -> dict:
    """Our columns (canonical names, numpy arrays) for one chunk given as an astropy Table."""
    from ..classifier import classify_hr

    mapping = opts.mapping
    n = len(sub)
    words = {}
    values, status = extract_roles(sub, mapping, words, skip=UNUSED_ROLES)
    if n == 0:
        return {c: np.zeros(0, dtype=column_dtype(c)) for c in our_columns(opts)}
    bad_errors = _bad_errors(status)       # before the log L error's status is rewritten below
    if "logl" in values or "lum" in values:
        values["logl"], values["logl_err"], status["logl"] = log_lum(values, status)
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

    pos, done, route_of, fail_flags = positions(values, status, mapping, opts, feh, n)

    # why a row is unclassified, and MISSING_INPUT / BAD_INPUT
    first = mapping.routes[0]
    not_done = np.flatnonzero(~done)
    reason_text = np.full(not_done.size, "", dtype=object)
    if not_done.size:
        in_flags[not_done] |= fail_flags[not_done]      # why the routes failed (e.g. parallax <= 0)
        lacks = np.zeros(not_done.size, dtype=bool)
        for role in ROUTE_NEEDS[first]:
            if role in status:
                st = status[role][not_done]
                lacks |= st != OK
                in_flags[not_done[(st == NONPHYSICAL) | (st == NOT_A_NUMBER)]] |= F.BAD_INPUT
                in_flags[not_done[(st == MISSING) | (st == SENTINEL)]] |= F.MISSING_INPUT
        text = np.full(not_done.size, "", dtype=object)
        if lacks.any():
            text[lacks] = status_reason(first, status, mapping, not_done[lacks], words)
        rest = ~lacks
        if rest.any():
            text[rest] = F.describe_many(fail_flags[not_done[rest]])
        routes = " / ".join(ROUTE_TEXT[r] for r in mapping.routes)
        reason_text = f"unclassified: no HR position from {routes}: " + text
    # MISSING_INPUT only marks a value the row's route needs (the row is then unclassified, above);
    # an optional input that is absent (errors, [Fe/H], MK type, mass) does not set it: [Fe/H] has
    # NO_METALLICITY, missing errors give a point classification, a missing MK type is not checked.

    mass = values.get("mass")
    # log g decides the giant branch on the Kiel position; where L did not come from log g, the
    # mass is g R^2 / G (the teff_logg route derives L from log g through the mass: not independent)
    logg = values.get("logg")
    if logg is not None and "logg" in status:
        logg = np.where(status["logg"] == OK, logg, np.nan)
    kiel_route = np.asarray([r == "teff_logg" for r in mapping.routes] + [False], dtype=bool)
    res = classify_hr(pos.logt, pos.logl, logt_err=_nan_none(pos.logt_err), logl_err=_nan_none(pos.logl_err),
                      corr=pos.corr, feh=feh_clf, mass=mass, n_draws=opts.n_draws,
                      seed=chunk_seed(opts.seed, offset), logg=logg, logg_err=values.get("logg_err"),
                      gravity_mass=~kiel_route[route_of], **opts.params)
    cols = dict(res.to_columns(coded=True))
    # the Teff as given (or derived), not 10**log10(Teff), which adds float noise (6023.000000000001)
    cols["teff_used"] = np.where(np.isfinite(pos.teff), pos.teff, cols["teff_used"])
    src_texts, src_codes = pos.source_codes
    src_codes = np.where(done, src_codes, len(src_texts))
    cols["hr_source"] = CodedText(np.append(src_texts, "none"), src_codes)
    stage_code = np.where(done, res.code, _UNCLASSIFIED_CODE)
    cols["stage"] = CodedText(STAGES, stage_code)
    mix_other_reading(cols, pos, lambda rows, *hr: classify_hr(  # two photometric readings: mixed probabilities
        hr[0], hr[1], logt_err=hr[2], logl_err=hr[3], corr=hr[4], n_draws=opts.n_draws,
        feh=feh_clf if np.ndim(feh_clf) == 0 else feh_clf[rows], seed=chunk_seed(opts.seed, offset), **opts.params))
    err_note = _no_false_certainty(cols, bad_errors, done, mapping, in_flags)
    extra_bits = in_flags | pos.flags
    flags_all = np.asarray(cols.get("flags", np.zeros(n, dtype=np.int64)), dtype=np.int64) | extra_bits
    # readable text: our reasons first, then the classifier's, then the bits nobody described
    own_bits = extra_bits & ~np.asarray(cols.get("flags", 0), dtype=np.int64)
    own_notes = [_bits_note(own_bits)]   # after the classifier's notes (built only if written)

    if opts.check_sptypes and "sptype" in values:
        from ..sptype import check_types

        chk = check_types(values["sptype"], pos.logt, pos.logl, logt_err=_nan_none(pos.logt_err),
                          logl_err=_nan_none(pos.logl_err), feh=feh_clf, logg=logg,
                          logg_err=values.get("logg_err") if logg is not None else None, hr_flags=pos.flags)
        cols.update(chk.to_columns())
        sp_flags = np.asarray(chk.flags, dtype=np.int64)
        own_notes.append(_bits_note(sp_flags & ~flags_all))
        flags_all |= sp_flags
    cols["flags"] = flags_all
    wanted = our_columns(opts, sptype="sptype_verdict" in cols)
    # the reasons are formatted only when they are written: in words (a few distinct texts) and, on
    # request, with each star's numbers (one text per flagged star: slow and bulky on big catalogues)
    for name, detail in (("flag_text", False), ("flag_detail", True)):
        if name in wanted:
            notes = [(not_done, reason_text), *err_note, *res.flag_notes(detail=detail), *own_notes]
            cols[name] = CodedText(*join_coded(n, notes))
    out = {}
    for c in wanted:
        if c in cols:
            v = cols[c]
            want = COLUMNS[c].dtype
            if want in ("f4", "f8") and v.dtype != want:
                v = v.astype(want)
            out[c] = v
    return out


def _bad_errors(status) -> dict:
    """``{role: rows}`` of the uncertainty columns whose value is no uncertainty (negative,
    infinite, or a word); a missing error is not one of them (the row gets a point label)."""
    out = {}
    for role, st in status.items():
        if role.endswith("_err"):
            bad = (st == NONPHYSICAL) | (st == NOT_A_NUMBER)
            if bad.any():
                out[role] = bad
    return out


#: Our columns that become unknown (NaN) on a row whose uncertainty is unusable.
_UNKNOWN_WITHOUT_ERRORS = ("stage_prob", "logt_err", "logl_err", "logt_logl_corr", "mass_err")


def _no_false_certainty(cols, bad_errors, done, mapping, in_flags) -> list:
    """Rows whose given uncertainty is negative, infinite or text keep the label of their position,
    but not the certainty of an exact one: their stage probabilities and errors become unknown
    (NaN), they are flagged ``BAD_INPUT`` and their reason names the column. Returns the notes."""
    if not bad_errors:
        return []
    any_bad = np.zeros(len(done), dtype=bool)
    notes = []
    for role, bad in bad_errors.items():
        rows = np.flatnonzero(bad & done)
        if rows.size == 0:
            continue
        any_bad[rows] = True
        col = mapping.roles.get(role, role)
        text = (f"{col} is not a usable uncertainty (negative, infinite or not a number): "
                "stage probabilities and errors unknown")
        notes.append((rows, (np.array([text], dtype=object), np.zeros(rows.size, dtype=np.int64))))
    if not any_bad.any():
        return []
    in_flags[any_bad] |= F.BAD_INPUT
    names = [c for c in cols if c in _UNKNOWN_WITHOUT_ERRORS or c.startswith("prob_")]
    for name in names:
        v = np.array(cols[name], dtype=np.result_type(np.asarray(cols[name]).dtype, np.float32), copy=True)
        v[any_bad] = np.nan
        cols[name] = v
    return notes


def _bits_note(bits):
    """The readable description of flag bits as a note ``(rows, (texts, codes))`` over the rows
    where any bit is set (one description per distinct combination of bits)."""
    idx = np.flatnonzero(bits)
    return idx, F.describe_codes(bits[idx])


def _nan_none(a):
    a = np.asarray(a, dtype=float)
    return None if not np.isfinite(a).any() else a


def chunk_seed(seed, offset):
    if offset == 0:
        return seed
    return int(np.random.SeedSequence([int(seed), int(offset)]).generate_state(1)[0])


