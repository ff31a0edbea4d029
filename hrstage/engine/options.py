"""Run options: what the caller asked for, checked once and resolved against the input's columns.

:func:`make_options` turns keyword options (Python API, CLI, Dask face) into a
:class:`ClassifyOptions`; :func:`resolve_options` fixes the role -> column mapping from the input's
column names, units and UCDs. Also the list of our columns a run writes and the run metadata.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace

from .._version import __version__
from ..catalog.profiles import ROLES, ColumnMapping, detect_profile
from ..columns import CLASSIFY_COLUMNS, COLUMNS, ON_REQUEST_COLUMNS, SPTYPE_COLUMNS
from ..defaults import DEFAULT_DRAWS, DEFAULT_SEED, check_draws, check_feh
from ..errors import HrstageInputError

CAUTION = ("Stage labels are indicative: they follow from the HR position and analytic stellar relations "
           "and do not replace a spectroscopic analysis; luminosities from low signal-to-noise parallaxes "
           "and relations used outside their range are flagged.")

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
        Monte Carlo draws per star for the stage probabilities (default
        :data:`hrstage.defaults.DEFAULT_DRAWS`; 0: point classification).
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
    n_draws: int = DEFAULT_DRAWS
    seed: int = DEFAULT_SEED
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
    """``add_columns`` option -> tuple of our column names, or None for the default set (all but
    the on-request columns). The words ``all`` and ``brief`` stand for their sets and combine with
    names: ``"all,flag_detail"``."""
    if value is None:
        return None
    if isinstance(value, str):
        value = [v for v in value.split(",") if v.strip()]
    names = [str(v).strip() for v in value]
    words = {v.lower() for v in names} & {"all", "brief"}
    names = [v for v in names if v.lower() not in ("all", "brief")]
    if words == {"all"} and not names:
        return None
    known = (*CLASSIFY_COLUMNS, *SPTYPE_COLUMNS, *ON_REQUEST_COLUMNS)
    bad = [v for v in names if v not in known]
    if bad:
        raise HrstageInputError(f"unknown column(s) to add: {', '.join(bad)}; choose 'all', 'brief' or "
                                f"names among {', '.join(known)}")
    chosen = set(names) | set(ALWAYS_ADDED)
    if "all" in words:
        chosen |= {*CLASSIFY_COLUMNS, *SPTYPE_COLUMNS}
    if "brief" in words:
        chosen |= set(BRIEF_COLUMNS)
    return tuple(c for c in known if c in chosen)


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
            kw["feh"] = check_feh(value, "feh")
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
        start = f"the input already has column(s) {', '.join(clash)} that hrstage would add; "
        end = " (input columns are never overwritten)"
        raise HrstageInputError(start + "pass a prefix for ours, e.g. prefix='hrs_'" + end,
                                cli=start + "pass a prefix for ours, e.g. --prefix hrs_" + end)
    return replace(opts, mapping=mapping)


def our_columns(opts, sptype=False):
    """Our columns a run writes, in their order (the on-request ones after ``flag_text``)."""
    names = []
    for c in CLASSIFY_COLUMNS:
        names.append(c)
        if c == "flag_text" and opts.add_columns is not None:
            names += [r for r in ON_REQUEST_COLUMNS if r in opts.add_columns]
    if sptype or (opts.check_sptypes and opts.mapping is not None and "sptype" in opts.mapping.roles):
        names += list(SPTYPE_COLUMNS)
    if opts.add_columns is not None:
        names = [c for c in names if c in opts.add_columns]
    return names


def column_dtype(name):
    d = COLUMNS[name].dtype
    return "U1" if d in ("U", "O") else d


def table_meta(opts):
    return {"hrstage_version": __version__, "hrstage_profile": opts.mapping.profile,
            "hrstage_roles": opts.mapping.roles_text(), "hrstage_routes": ",".join(opts.mapping.routes),
            "hrstage_options": json.dumps(opts.settings(), sort_keys=True, default=str),
            "hrstage_caution": CAUTION}

