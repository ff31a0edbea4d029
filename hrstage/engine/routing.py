"""Routing: every row of a chunk to an HR position, by the first route of the profile whose inputs
the row has (Teff+L, Teff+R, Gaia photometry+parallax, Johnson+parallax, Teff+log g), falling
back row by row to the next route; and the words for a row no route could place.
"""

from __future__ import annotations

import numpy as np

from ..catalog.sanity import MISSING, NOT_A_NUMBER, OK, STATUS_TEXT
from .readings import carry_other

#: Roles whose absence makes a row's route impossible, per route (first alternative is the one read).
ROUTE_NEEDS = {
    "teff_lum": ("teff", "logl"),
    "teff_radius": ("teff", "radius"),
    "gaia": ("g", "bp_rp", "parallax"),
    "johnson": ("v", "b_v", "parallax"),
    "teff_logg": ("teff", "logg"),
}
ROUTE_TEXT = {
    "teff_lum": "Teff and L", "teff_radius": "Teff and radius", "gaia": "Gaia G, BP-RP and parallax",
    "johnson": "V, B-V and parallax", "teff_logg": "Teff and log g",
}


# ----------------------------------------------------------------------------------- rows
def _ok(status, role):
    return status[role] == OK if role in status else None


def log_lum(values, status):
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


def _parallax(values, idx):
    """The parallax of the rows (NaN where the table has only published distances)."""
    return values["parallax"][idx] if "parallax" in values else np.full(idx.size, np.nan)


def _distances(values, idx):
    """Published distance (median, 16th / 84th percentiles) of the rows, where the table has them."""
    return {k: values[r][idx] for k, r in (("distance", "distance"), ("distance_lo", "distance_lo"),
                                           ("distance_hi", "distance_hi")) if r in values}


def _run_route(route, idx, values, opts, feh):
    """Call the derive function of one route on the rows ``idx``; returns an HRPosition."""
    from .. import derive

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
        return derive.from_gaia(values["g"][idx], values["bp_rp"][idx], _parallax(values, idx), **_distances(values, idx),
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
        return derive.from_johnson(values["v"][idx], values["b_v"][idx], _parallax(values, idx), **_distances(values, idx),
                                   v_err=_opt(values, "v_err", idx), b_v_err=_opt(values, "b_v_err", idx),
                                   parallax_err=_opt(values, "parallax_err", idx), v_ks=v_ks, v_ks_err=v_ks_err,
                                   e_b_v=_opt(values, "ebv", idx), a_v=_opt(values, "a_v", idx), r_v=opts.r_v,
                                   feh=f, teff=teff, teff_err=teff_err, parallax_zp=opts.parallax_zp,
                                   min_parallax_snr=opts.min_parallax_snr)
    raise ValueError(route)  # pragma: no cover


def status_reason(route, status, mapping, rows, words=None):
    """Per-row text for rows whose route inputs are not all usable (loops over the few distinct
    combinations of statuses; the text of an entry that is not a number is quoted per row)."""
    needs = [r for r in ROUTE_NEEDS[route] if r in status]
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


def positions(values, status, mapping, opts, feh, n):
    """HR positions for all rows, route by route with row-wise fall-back.

    ``source_codes`` of the result holds the provenance texts of every route used and a code per
    row (rows no route placed point at "").
    """
    from ..derive import HRPosition

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
        needs = ROUTE_NEEDS[route]
        usable = ~done
        for role in needs:
            ok = (status[role] == OK) if role in status else False
            if role == "parallax" and "distance" in status:   # a published distance stands in for it
                ok = ok | (status["distance"] == OK)
            usable &= ok
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
        carry_other(out, pos, idx, good)      # a second photometric reading (engine/readings.py)
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


