"""Parser for MK spectral-type strings as catalogues print them.

The grammar and the disambiguation rules R1–R14 follow the project's research note on MK
notation (grammar §1, real strings §2); the code is our own hand-written scanner. The parser
never raises: anything it cannot read comes back as ``SpType(ok=False, kind='unparsed',
reason=...)``, and text it cannot place after a readable type is kept verbatim in
``unparsed_tail``.

Continuous temperature index (``numeric``): O0 = 0, B0 = 10, A0 = 20, F0 = 30, G0 = 40, K0 = 50,
M0 = 60, L0 = 70, T0 = 80, Y0 = 90, plus the decimal subtype; a quarter mark ``+``/``-`` adds
±0.25; a range (``G8/K0``, ``B1-2``, ``M6e-M8.5e``) is its midpoint, with the ends in ``t_range``;
a class with no subtype (``K``, ``Ap``) spans its whole class (``t_range`` = 50–59.5 for K).
White dwarfs, Wolf–Rayet, carbon and S stars keep ``numeric`` = NaN: they are not on the MK
temperature sequence (a white dwarf keeps its temperature index 50400/Teff in ``subtype``).

Conventions of Mount Wilson prefixes (R11): ``d`` -> V, ``g`` -> III, ``c``/``sg`` -> I; the cool
subdwarf prefixes ``sd``/``esd``/``usd`` on F–M types -> VI; ``sdO``/``sdB``/``sdOB`` are hot
subdwarfs (a different family, R-note §1.4 "family trap").
"""

from __future__ import annotations

import math
import re
from dataclasses import asdict, dataclass, field, replace

import numpy as np

from .lumclass import lum_one_range, normalise_lumclass

__all__ = ["SpType", "parse", "parse_many", "TCLASS_BASE", "MAX_LENGTH", "MAX_COMPONENTS"]

#: zero point of each MK temperature class on the continuous index
TCLASS_BASE = {"O": 0, "B": 10, "A": 20, "F": 30, "G": 40, "K": 50, "M": 60, "L": 70, "T": 80, "Y": 90}

KINDS = ("mk", "white_dwarf", "wolf_rayet", "carbon", "s_type", "hot_subdwarf", "am_ap", "special", "unparsed")


@dataclass(frozen=True)
class SpType:
    """One parsed spectral-type string (or one component of a composite).

    Attributes
    ----------
    raw : str
        The text as given (for a component: its own slice of the field).
    ok : bool
        True when a spectral class was read. A partly read string is ``ok`` with a non-empty
        ``unparsed_tail``.
    reason : str
        Why the string could not be read (``ok`` False), or a remark on a partial reading.
    kind : str
        ``'mk'``, ``'white_dwarf'``, ``'wolf_rayet'``, ``'carbon'``, ``'s_type'``,
        ``'hot_subdwarf'``, ``'am_ap'``, ``'special'`` or ``'unparsed'``.
    components : tuple of SpType
        The components of a composite field (``A+B``), primary first; empty otherwise.
    prefix : str
        ``'d'``, ``'g'``, ``'c'``, ``'sg'``, ``'sd'``, ``'esd'``, ``'usd'`` or ``''``.
    tclass : str
        Temperature class letter (``'K'``), white-dwarf class (``'DA'``), WR sequence (``'WN'``),
        carbon class (``'C'``, ``'C-R'``, ``'N'``), S class (``'S'``, ``'MS'``, ``'SC'``), or ``''``.
    subtype : float
        Decimal subtype as written (NaN when none; the temperature index for white dwarfs).
    numeric : float
        Continuous temperature index (see module docstring); NaN off the MK sequence.
    t_range : tuple of float
        (lo, hi) of ``numeric`` allowed by the string (equal for a plain type).
    lumclass : str
        Normalised luminosity class: ``'V'``, ``'IIIb'``, ``'IV-V'``, ``'Iab-Ib'``, ``'0'``
        (hypergiant), ``'VI'`` (cool subdwarf), ``'sdB'``/``'sdO'``/``'sdOB'`` (hot subdwarf),
        ``'D'`` (white dwarf), or ``''`` when the string gives none (R14: unknown, not V).
    lum_range : tuple of float
        (lo, hi) on the numeric luminosity scale of :mod:`hrstage.sptype.lumclass`; (NaN, NaN)
        when no class is given.
    lum_uncertain, temp_uncertain : bool
        An uncertainty mark (``:``, ``::``, ``?``) follows the class / the temperature type.
    peculiarities : tuple of str
        Peculiarity codes and remarks as written, uncertainty marks kept (``'Mn:'``, ``'((f))'``).
    indices : dict
        Named strength indices: Keenan indices (``{'CN': -0.5}``), C2/ZrO/abundance indices of
        carbon and S stars, ``'k_type'``/``'h_type'``/``'m_type'`` of the Am notation, Roman-
        numeral indices as strings (``{'CN': 'II'}``).
    composite : bool
        Two or more spectra (``+`` or the remark ``comp``).
    unparsed_tail : str
        Text after the readable part that the grammar does not place, verbatim.
    notes : tuple of str
        Ambiguities and traps met while reading (R-rules of the research note).
    quarter : str
        Keenan quarter-subtype mark of the (first) type, ``'+'``, ``'-'`` or ``''``.
    """

    raw: str
    ok: bool = False
    reason: str = ""
    kind: str = "unparsed"
    components: tuple = ()
    prefix: str = ""
    tclass: str = ""
    subtype: float = math.nan
    numeric: float = math.nan
    t_range: tuple = (math.nan, math.nan)
    lumclass: str = ""
    lum_range: tuple = (math.nan, math.nan)
    lum_uncertain: bool = False
    temp_uncertain: bool = False
    peculiarities: tuple = ()
    indices: dict = field(default_factory=dict, hash=False, compare=True)
    composite: bool = False
    unparsed_tail: str = ""
    notes: tuple = ()
    quarter: str = ""

    def has_pec(self, code: str) -> bool:
        """True when peculiarity ``code`` is present (uncertainty marks ignored)."""
        return any(p.rstrip(":?") == code for p in self.peculiarities)

    @property
    def normalised(self) -> str:
        """Our canonical rendering: ``'K0 IIIb CN-0.5'``, ``'G2 0'``, ``'B0 Ia + WC5:'``; ``''`` if unparsed."""
        if not self.ok:
            return ""
        if self.components:
            return " + ".join(c._render() for c in self.components)
        return self._render()

    def _render(self) -> str:
        if self.kind == "unparsed":
            return "?"
        if self.kind == "special":
            return self.prefix + (self.tclass or "") + " ".join(self.peculiarities) or "?"
        head = self.prefix if self.prefix not in ("d", "g", "c", "sg") else ""
        if self.kind == "am_ap" and "h_type" in self.indices:
            head += f"k{self.indices['k_type']}h{self.indices['h_type']}"
            if "m_type" in self.indices:
                head += f"m{self.indices['m_type']}"
        else:
            head += _render_temp(self)
        in_head = ["abundance", "ZrO", "wr_range_to", "line_group", "wr_type"]
        c2 = self.indices.get("C2")
        if self.kind == "carbon" and isinstance(c2, float) and 0 <= c2 < 10 and (4 * c2).is_integer():
            head += f",{_quarter_text(c2)}"  # Keenan's C2 band index after the comma: 'C6+,3'
            in_head.append("C2")
        # Wolf-Rayet line qualifiers are written on the type ('WN6h', 'WN5b', 'WC8+abs'): a separate
        # word after the type would not read back as one
        wr_tail = [p for p in self.peculiarities if p in _WR_SUFFIXES] if self.kind == "wolf_rayet" else []
        for k in in_head[:5]:
            if k == "line_group" and wr_tail:
                head += "".join(wr_tail)
            if k in self.indices:
                head += _render_index(k, self.indices[k])
        if self.temp_uncertain:
            head += ":"
        parts = [head]
        if self.lumclass and self.kind != "white_dwarf" and not self.lumclass.startswith("sd"):
            # a range from the hypergiant class renders '0/Ia', '0/Iab': '0-Ia' is the hypergiant's own spelling
            lc = "0/" + self.lumclass[2:] if self.lumclass.startswith("0-") else self.lumclass
            parts.append(lc + (":" if self.lum_uncertain else ""))
        for k, v in self.indices.items():
            if k in ("k_type", "h_type", "m_type", "he_type") or k in in_head:
                continue
            parts.append(_render_index(k, v).strip())
        cno = _cno(self) if self.kind in ("mk", "am_ap") else ""
        skip = {cno} if cno else _WD_SUFFIXES if self.kind == "white_dwarf" else set()
        skip = skip | set(wr_tail)
        parts.extend(p for p in self.peculiarities if p not in skip)
        return " ".join(parts)

    def as_dict(self) -> dict:
        """Plain-dict view (components as nested dicts), e.g. for JSON output."""
        d = asdict(self)
        d["normalised"] = self.normalised
        return d


def _fmt_num(x: float) -> str:
    if math.isnan(x):
        return ""
    return f"{x:g}"


def _fmt_index(v) -> str:
    if isinstance(v, float):
        return f"{v:+g}" if v < 0 else f"{v:g}"
    return str(v)


def _numeric_to_text(x: float) -> str:
    for letter, base in sorted(TCLASS_BASE.items(), key=lambda kv: -kv[1]):
        if x >= base - 1e-9:
            return f"{letter}{x - base:g}"
    return f"?{x:g}"


def _render_temp(t: SpType) -> str:
    """Temperature part of the normal form.

    A single type renders as written (``K0+``, ``G``). A range keeps the end written first (so
    ``tclass``, ``subtype`` and ``quarter`` read back unchanged, also for reversed ranges such as
    ``K8/G`` -> ``K8-G0``) and renders the other end as a decimal subtype of its own class, which
    reads back to the same ``t_range`` (a bare class spans its whole class, so ``G/K`` and ``G-K``
    both cover G0-K9.5 and render ``G-K``; an upper end at x9.5 renders as the bare class). After
    a quarter mark the separator is ``/`` (``K0+/K1``). An interval that extends the first end on both sides (only
    after chained ranges) renders as ``first-lo/hi``.
    """
    if t.kind in ("mk", "am_ap", "wolf_rayet") and t.tclass in TCLASS_BASE:
        lo, hi = t.t_range
        if math.isnan(t.subtype):
            first = t.tclass
            _, a, b = _type_numeric(t.tclass, None, None)
        else:
            first = f"{t.tclass}{_cno(t)}{t.subtype:g}{t.quarter}"
            _, a, b = _type_numeric(t.tclass, f"{t.subtype:g}", t.quarter or None)
        if math.isnan(lo) or (lo == a and hi == b):
            return first
        sep = "/" if t.quarter else "-"  # 'K0+/K1': a quarter mark is never followed by '-'
        if lo < a and hi > b:
            for letter, base in TCLASS_BASE.items():
                if lo == base and hi == base + 9.5:
                    return f"{first}{sep}{letter}"
            return f"{first}{sep}{_numeric_to_text(lo)}/{_end_text(hi, a)}"
        return f"{first}{sep}{_numeric_to_text(lo) if lo < a else _end_text(hi, a)}"
    if t.kind in ("carbon", "s_type"):
        return f"{t.tclass}{_quarter_text(t.subtype) if not math.isnan(t.subtype) else ''}"
    if t.kind == "white_dwarf":  # Sion et al. 1983 suffixes are part of the class: 'DA3PV'
        sfx = "".join(p for p in t.peculiarities if p in _WD_SUFFIXES)
        return f"{t.tclass}{_fmt_num(t.subtype)}{sfx}"
    sub = _fmt_num(t.subtype)
    return f"{t.tclass}{sub}{t.quarter}"


def _end_text(x: float, own_lo: float) -> str:
    """Upper end of a range: the last subtype (x9.5) of a class wholly above the first end renders
    as the bare class (``G8-K``)."""
    for letter, base in TCLASS_BASE.items():
        if x == base + 9.5 and base >= own_lo:
            return letter
    return _numeric_to_text(x)


def _quarter_text(v) -> str:
    """A carbon/S subtype or index with a Keenan quarter (5.25, 6.75) written as ``5+``/``7-``:
    their grammar reads a decimal point after one digit as the Keenan comma (R4)."""
    if isinstance(v, float) and math.isfinite(v):
        frac = round((v - math.floor(v)) * 4) % 4
        if abs(v * 4 - round(v * 4)) < 1e-9 and frac in (1, 3):
            return f"{math.floor(v):d}+" if frac == 1 else f"{math.floor(v) + 1:d}-"
    return _fmt_index(v) if not isinstance(v, float) or v >= 0 else f"{v:g}"


_WD_SUFFIXES = {"P", "H", "E", "V", "X", "d", "pec"}


def _cno(t: SpType) -> str:
    """The CNO-anomaly letter of an ON/OC/BN/BC type ('' otherwise); it renders inside the class."""
    if t.tclass in ("O", "B") and not math.isnan(t.subtype):
        for p in t.peculiarities:
            if p in ("N", "C"):
                return p
    return ""


def _render_index(k: str, v) -> str:
    if k == "abundance":
        return f"/{_quarter_text(v)}"
    if k == "ZrO":
        return f",{_quarter_text(v)}"
    if k == "line_group":
        return f"-{v}"
    if k == "wr_type":
        return f"/{v}"
    if k == "wr_range_to":
        return f"-{_fmt_index(v)}"
    sep = " " if k[-1].isdigit() else ""
    return f" {k}{sep}{_fmt_index(v)}"


# ---------------------------------------------------------------------------------------------
# scanner
# ---------------------------------------------------------------------------------------------


class _Scan:
    """A cursor over one component string."""

    __slots__ = ("s", "i")

    def __init__(self, s: str):
        self.s = s
        self.i = 0

    def rest(self) -> str:
        return self.s[self.i:]

    def done(self) -> bool:
        return self.i >= len(self.s)

    def match(self, rx: re.Pattern):
        m = rx.match(self.s, self.i)
        if m:
            self.i = m.end()
        return m

    def peek(self, rx: re.Pattern):
        return rx.match(self.s, self.i)

    def blanks(self) -> None:
        while self.i < len(self.s) and self.s[self.i] == " ":
            self.i += 1


_R = re.compile
_TEMP = _R(r"([OBAFGKMLTY])((?<=[OB])N|(?<=[OB])C)?(?=\d)|([OBAFGKMLTY])")
_SUB = _R(r"\d(?:\.\d{1,2})?")
_QUARTER = _R(r"([+-])(?=[IV0 ]|/|$|[a-z(:?.]|-[OBAFGKMLTY]?\d)")
_TRANGE = _R(r"([-/])(?:([OBAFGKMLTY])(?![a-z]))?(\d(?:\.\d{1,2})?)?([+-](?![\d]))?")
_UNC = _R(r"::|:|\?")
_HYPER = _R(r"0-Ia|Ia-0|Ia0|Ia\+|0(?![.\d])")
_ROMAN = _R(r"(VIII|VII|VI|IV|V|III|II|I)(?:(ab|a|b)(?!lpha|eta))?")
_LUMSEP = _R(r"[-/](?=0-Ia|Ia|I|V)")
_PREFIX = _R(r"(esd|usd|sd|sg|d|g|c)(?=[OBAFGKMLTY])")

_ELEMENTS = "Si|Sr|Cr|Eu|Hg|Mn|He|Ca|Ba|Ti|Fe|Ga|Ho|Pr"
_P_DOTS = _R(r"\.\.\.|\.\.")
_P_PAREN = _R(r"\(\([^()]*\)\)|\([^()]*\)")
_P_HEANOM = _R(r"He-(?:weak|wk|w|strong|str|s|rich|r)")
_P_LAMBOO = _R(r"lambda ?Boo|λ ?Boo|lam ?Boo")
_P_GRAV = _R(r"alpha|beta|gamma|delta|α|β|γ|δ|FLD-G|INT-G|VL-G")
_P_REMARK = _R(r"SB2|SB1|SB(?![a-z])")
_P_DELDEL = _R(r"delta Del|del Del|d Del")
_P_MICHIGAN_MN = _R(r"MN(?=[a-z.:? ]|$)")
_P_INDEX = _R(r"(Hdel|CN|CH|Ba|Ca|Mg|Fe|C2|Zr|Ti|MS|He|j) ?([+-]?\d+(?:\.\d+)?|[+-]?\.\d+)([+-](?!\d))?")
_P_INDEX_ROMAN = _R(
    r"(CN|Ba)(0-Ia|Ia0|VIII|VII|VI|IV|V|III|II|I)(ab|a|b)?(?:([-/])(VIII|VII|VI|IV|V|III|II|I)(ab|a|b)?)?"
)
_P_ELEMENT = _R(rf"({_ELEMENTS})(\d{{4}})?")
_P_CODE = _R(
    r"shell|Shell|pec|Pec|var|neb|comp|nn|wk|wl|vw|vs|sh|ss|em|er|eq|kee|ke|\[e\]|f\*|f\+|fc|fp(?![a-z])|Tc|CN|CH"
    r"|e|n|p|s|m|w|k|v|q|f|z|h|S"
)
_P_TYPERANGE = _R(r"[-/](?=[OBAFGKMLTY]\d)")
_P_SLASHWR = _R(r"/(?=W[NCO])")

_WD = _R(r"D([ABOQZCXFGK]+)(\d+(?:\.\d+)?|\.\d)?((?:P|H|E|V|X|d|pec)*)(::|:|\?)?")
#: the Wolf-Rayet line qualifiers read on the type itself (group 4 of :data:`_WR`)
_WR_SUFFIXES = ("ha", "(h)", "h", "b", "w", "s", "d", "pec", "+abs")
_WR_QUALIFIER = "|".join(re.escape(q) for q in _WR_SUFFIXES)   # longest first where one starts another
_WR = _R(r"W([NCOR])(\d+(?:\.\d)?)?(?:[-/](\d+))?((?:" + _WR_QUALIFIER + r")*)(?:-([AB]))?(::|:|\?)?")
_CARBON = _R(r"C(?:-(Hd|R|N|J|H))?(\d(?:\.\d)?)?([+-](?![\d]))?(?:,(\d)([+-])?)?")
_HARVARD_C = _R(r"([RN])(\d)?(?![a-zA-Z]{2,}\d)")
_STYPE = _R(r"(SC|MS|S)(\d(?:\.\d)?)([+-])?(?:([/,])(\d+(?:\.\d)?)([+-])?)?")
_HOTSD = _R(r"sd(OB|O|B)(\d(?:\.\d)?)?(\([OBAFGKM]\))?(e)?")
_AM = _R(r"k([OBAFGKM]\d(?:\.\d{1,2})?)")
_AM_OLD = _R(r"([AF])m(?=[BAF]\d)")
_AM_OLD2 = _R(r"([AF]\d(?:\.\d)?)m([AF]\d(?:\.\d)?)")
_LUM_SHORT = _R(r"[-/](ab|b)(?![a-z])")
_BARE_PEC_CLASS = _R(r"(Am|Ap|Bp|Fm|Fp|Gp)(?![A-Za-z0-9])")

_COMPONENT_START = _R(r" *(?:[OBAFGKMLTYWDCSNRQ?(]|sd|esd|usd|d[OBAFGKM]|g[OBAFGKM]|c[OBAFGKM]|k[OBAFGKM]|\.\.)")

_CHEMICAL = set(_ELEMENTS.split("|"))


#: largest value of the temperature index (Y9.75)
_NUMERIC_MAX = 99.75


def _type_numeric(letter: str, sub: str | None, quarter: str | None) -> tuple[float, float, float]:
    """(subtype, lo, hi) of one temperature type; a class without subtype spans the class."""
    base = TCLASS_BASE[letter]
    if sub is None:
        return math.nan, float(base), float(base) + 9.5
    s = float(sub)
    q = 0.25 if quarter == "+" else -0.25 if quarter == "-" else 0.0
    # rounded so that the decimal rendering of the normal form reads back to the same float;
    # kept on the O0-Y9.75 scale (an 'O0-' or 'Y9.9+' cannot leave it)
    v = min(max(round(base + s + q, 6), 0.0), _NUMERIC_MAX)
    return s, v, v


class _Comp:
    """Mutable accumulator for one component while it is scanned."""

    def __init__(self, raw: str):
        self.raw = raw
        self.kind = "mk"
        self.prefix = ""
        self.tclass = ""
        self.subtype = math.nan
        self.lo = math.nan
        self.hi = math.nan
        self.lum_tokens: list[tuple[str, str | None]] = []
        self.lum_unc = False
        self.temp_unc = False
        self.pecs: list[str] = []
        self.indices: dict = {}
        self.tail = ""
        self.notes: list[str] = []
        self.quarter = ""
        self.hot_sd_class = ""

    def has_m(self) -> bool:
        """Metallic-line code 'm' present."""
        return any(p.rstrip(":?") == "m" for p in self.pecs)

    def lum(self) -> tuple[str, tuple[float, float]]:
        if not self.lum_tokens:
            return "", (math.nan, math.nan)
        los, his, names = [], [], []
        for a, b in self.lum_tokens:
            for t in (a, b):
                if t is None:
                    continue
                r = lum_one_range(t)
                if r is not None:
                    los.append(r[0])
                    his.append(r[1])
            names.append(normalise_lumclass(a, b))
        if not los:
            return "", (math.nan, math.nan)
        if len(names) == 1:
            name = names[0]
        else:
            # full-type ranges 'F6Ib-G2Ib', 'F2V/F3IV/V': the class range spans the brightest and the
            # faintest class of both ends, so that the name and ``lum_range`` say the same
            toks = [t for a, b in self.lum_tokens for t in (a, b) if t is not None and lum_one_range(t)]
            bright = min(toks, key=lambda t: lum_one_range(t)[0])
            faint = max(toks, key=lambda t: lum_one_range(t)[1])
            name = normalise_lumclass(bright, faint)
        return name, (min(los), max(his))

    def freeze(self) -> SpType:
        name, lr = self.lum()
        numeric = (self.lo + self.hi) / 2 if not math.isnan(self.lo) else math.nan
        reason = ""
        if self.tail:
            reason = f"partly read: tail {self.tail!r} not understood"
        return SpType(
            raw=self.raw,
            ok=True,
            reason=reason,
            kind=self.kind,
            prefix=self.prefix,
            tclass=self.tclass,
            subtype=self.subtype,
            numeric=numeric,
            t_range=(self.lo, self.hi),
            lumclass=name,
            lum_range=lr,
            lum_uncertain=self.lum_unc,
            temp_uncertain=self.temp_unc,
            peculiarities=tuple(dict.fromkeys(self.pecs)),
            indices=dict(self.indices),
            composite="comp" in self.pecs,
            unparsed_tail=self.tail,
            notes=tuple(dict.fromkeys(self.notes)),
            quarter=self.quarter,
        )


def _read_temp(sc: _Scan, c: _Comp, first: bool = True) -> bool:
    """Temperature class, subtype, quarter and range. Returns False when no class letter."""
    m = sc.match(_TEMP)
    if not m:
        return False
    letter = m.group(1) or m.group(3)
    cno = m.group(2)
    sub_m = sc.match(_SUB) if m.group(1) or sc.peek(_SUB) else None
    sub = sub_m.group(0) if sub_m else None
    quarter = None
    if sub is not None:
        qm = sc.match(_QUARTER)
        if qm:
            quarter = qm.group(1)
    s, lo, hi = _type_numeric(letter, sub, quarter)
    if cno:
        c.pecs.append(cno)  # ON/OC, BN/BC: CNO anomaly
        c.notes.append(f"{letter}{cno}: CNO-anomaly class read as {letter} with code {cno}")
    # range of subtypes or classes (R2/R3)
    rm = sc.peek(_TRANGE)
    if rm and (rm.group(2) or rm.group(3)):
        sc.match(_TRANGE)
        letter2 = rm.group(2) or letter
        s2, lo2, hi2 = _type_numeric(letter2, rm.group(3), rm.group(4))
        lo, hi = min(lo, lo2), max(hi, hi2)
    if first:
        c.tclass = letter
        c.subtype = s
        c.quarter = quarter or ""
        c.lo, c.hi = lo, hi
    else:
        c.lo, c.hi = min(c.lo, lo), max(c.hi, hi)
    um = sc.match(_UNC)
    if um:
        c.temp_unc = True
    return True


def _read_lum(sc: _Scan, c: _Comp) -> None:
    sc.blanks()
    first = _lum_one(sc, c)
    if first is None:
        return
    second = None
    short = sc.peek(_LUMSEP) is None and first in ("Ia", "Iab") and sc.peek(_LUM_SHORT)
    if short:
        sc.match(_LUM_SHORT)
        second = "I" + short.group(1)
        c.notes.append(f"short class range {first}-{short.group(1)} read as {first}-{second}")
    elif sc.peek(_LUMSEP):
        save = sc.i
        sc.i += 1
        second = _lum_one(sc, c)
        if second is None:
            sc.i = save
    c.lum_tokens.append((first, second))
    if sc.match(_UNC):
        c.lum_unc = True


def _lum_one(sc: _Scan, c: _Comp) -> str | None:
    m = sc.match(_HYPER)
    if m:
        return m.group(0)
    m = sc.match(_ROMAN)
    if m:
        tok = m.group(1) + (m.group(2) or "")
        if m.group(2) and sc.s[sc.i:sc.i + 1] == "s":
            rest = sc.s[sc.i:].split(" ")[0]
            c.notes.append(f"ambiguous run {m.group(2) + rest!r} after {m.group(1)}: read as {tok} + {rest!r} (R6)")
        return tok
    return None


def _read_pecs(sc: _Scan, c: _Comp) -> None:
    """Peculiarity codes, indices, remarks; also full-type ranges and slash-WR partners."""
    while True:
        sc.blanks()
        if sc.done():
            return
        m = sc.match(_P_DOTS)
        if m:
            c.pecs.append("...")
            if m.group(0) == "..":
                c.notes.append("'..' read as a truncated '...' (R9)")
            continue
        if sc.s[sc.i] == "!":
            sc.i += 1
            c.pecs.append("!")
            continue
        m = sc.match(_P_PAREN)
        if m:
            c.pecs.append(m.group(0) + _unc(sc))
            continue
        m = sc.match(_P_TYPERANGE)
        if m:
            # variable-star range of full types 'M6e-M8.5e', 'F6Ib-G2Ib' (R13)
            if _read_temp(sc, c, first=False):
                _read_lum(sc, c)
                c.notes.append("range of full types: midpoint used, tolerance widened (R13)")
                continue
            sc.i = m.start()
            break
        m = sc.match(_P_SLASHWR)
        if m:
            wr = sc.match(_WR)
            if wr:
                c.kind = "wolf_rayet"
                c.indices["wr_type"] = wr.group(0).rstrip(":?")
                if wr.group(6):
                    c.temp_unc = True
                c.notes.append(f"transition (slash) star O/WR: {wr.group(0)}")
                continue
            sc.i = m.start()
            break
        m = sc.match(_P_HEANOM)
        if m:
            c.pecs.append(m.group(0) + _unc(sc))
            continue
        m = sc.match(_P_LAMBOO)
        if m:
            c.pecs.append("lambda Boo")
            continue
        m = sc.match(_P_DELDEL)
        if m:
            c.pecs.append("delta Del")
            continue
        m = sc.match(_P_GRAV)
        if m:
            c.pecs.append(m.group(0))
            continue
        m = sc.match(_P_REMARK)
        if m:
            c.pecs.append(m.group(0) + _unc(sc))
            continue
        m = sc.match(_P_MICHIGAN_MN)
        if m:
            c.pecs.append("Mn" + _unc(sc))
            c.notes.append("'MN' read as the element code Mn (upper-case spelling of the Michigan catalogue)")
            continue
        m = sc.match(_P_INDEX_ROMAN)
        if m:
            a = m.group(2) + (m.group(3) or "")
            b = (m.group(5) + (m.group(6) or "")) if m.group(5) else None
            c.indices[m.group(1)] = normalise_lumclass(a, b) if b else a
            c.notes.append(f"{m.group(1)} index written as a luminosity class ({m.group(0)})")
            _unc(sc)
            continue
        m = sc.match(_P_INDEX)
        if m:
            v = float(m.group(2))
            if m.group(3):
                v += 0.25 if m.group(3) == "+" else -0.25
            c.indices[m.group(1)] = v
            if _unc(sc):
                c.notes.append(f"index {m.group(1)} uncertain")
            continue
        m = sc.match(_P_ELEMENT)
        if m:
            c.pecs.append(m.group(0) + _unc(sc))
            if m.group(2):
                c.notes.append(f"line-strength code {m.group(0)} kept verbatim")
            continue
        m = sc.match(_P_CODE)
        if m:
            tok = m.group(0)
            if tok == "Pec":
                tok = "pec"
            elif tok == "Shell":
                tok = "shell"
            elif tok == "vs":
                c.notes.append("code 'vs' of unclear meaning kept verbatim")
            c.pecs.append(tok + _unc(sc))
            continue
        break
    c.tail = sc.rest().strip()


def _unc(sc: _Scan) -> str:
    m = sc.match(_UNC)
    return m.group(0) if m else ""


def _parse_mk(sc: _Scan, c: _Comp) -> bool:
    pm = sc.match(_PREFIX)
    if pm:
        c.prefix = pm.group(1)
    if not _read_temp(sc, c):
        return False
    _read_lum(sc, c)
    _read_pecs(sc, c)
    if c.prefix and not c.lum_tokens:
        implied = {"d": "V", "g": "III", "c": "I", "sg": "I", "sd": "VI", "esd": "VI", "usd": "VI"}[c.prefix]
        c.lum_tokens.append((implied, None))
        c.notes.append(f"prefix {c.prefix!r} read as luminosity class {implied} (R11)")
    elif c.prefix:
        c.notes.append(f"prefix {c.prefix!r} and a luminosity class both given; the class is used")
    # chemically peculiar / metallic-line stars
    chem = any(p.rstrip(":?")[:2] in _CHEMICAL for p in c.pecs)
    is_p = "p" in [p.rstrip(":?") for p in c.pecs]
    if (c.tclass in ("B", "A", "F") and (chem or c.has_m())) or (c.tclass == "A" and is_p):
        c.kind = "am_ap"
    return True


def _parse_am(sc: _Scan, c: _Comp) -> bool:
    """Gray & Garrison k/h/m notation: kA2hA5mA7V, kA5hA7VmA7, kB8hB8HeB9.5IVHgMn:, kA2hA0pSrCr."""
    km = sc.match(_AM)
    if not km:
        return False
    c.kind = "am_ap"
    c.indices["k_type"] = km.group(1)
    if sc.s.startswith("h", sc.i):
        sc.i += 1
        start = sc.i
        if not _read_temp(sc, c):
            return False
        c.indices["h_type"] = sc.s[start:sc.i].rstrip(":?")
    else:
        return False
    _read_lum(sc, c)
    if sc.s.startswith("m", sc.i) and re.match(r"[OBAFGKM]\d", sc.s[sc.i + 1:sc.i + 3]):
        sc.i += 1
        mm = sc.match(_R(r"[OBAFGKM]\d(?:\.\d{1,2})?"))
        c.indices["m_type"] = mm.group(0)
        _read_lum(sc, c)
    if sc.s.startswith("He", sc.i) and re.match(r"[OBAFGKM]\d", sc.s[sc.i + 2:sc.i + 4]):
        sc.i += 2
        hm = sc.match(_R(r"[OBAFGKM]\d(?:\.\d{1,2})?"))
        c.indices["he_type"] = hm.group(0)
        _read_lum(sc, c)
    if len(c.lum_tokens) > 1:
        c.lum_tokens = c.lum_tokens[-1:]
    _read_pecs(sc, c)
    c.notes.append("Am notation: temperature from the hydrogen-line type")
    return True


def _parse_am_old2(sc: _Scan, c: _Comp) -> bool:
    """Older Am form 'A3mA6', 'F2mF5IIp' = K-line type, then metallic-line type."""
    m = sc.match(_AM_OLD2)
    if not m:
        return False
    c.kind = "am_ap"
    k, mt = m.group(1), m.group(2)
    c.indices["k_type"] = k
    c.indices["m_type"] = mt
    s1, lo1, _ = _type_numeric(k[0], k[1:], None)
    _, lo2, _ = _type_numeric(mt[0], mt[1:], None)
    c.tclass, c.subtype = k[0], s1
    c.lo, c.hi = min(lo1, lo2), max(lo1, lo2)
    tr = sc.match(_TRANGE)
    if tr and (tr.group(2) or tr.group(3)):
        _, lo3, hi3 = _type_numeric(tr.group(2) or mt[0], tr.group(3), tr.group(4))
        c.lo, c.hi = min(c.lo, lo3), max(c.hi, hi3)
    c.pecs.append("m")
    c.notes.append("older Am form: K-line type, then metallic-line type; Teff taken between them")
    if sc.match(_UNC):
        c.temp_unc = True
    _read_lum(sc, c)
    _read_pecs(sc, c)
    return True


def _parse_am_old(sc: _Scan, c: _Comp) -> bool:
    """Older Am form 'AmA3-F0V:' = K-line type A3, metallic-line type F0."""
    m = sc.match(_AM_OLD)
    if not m:
        return False
    c.kind = "am_ap"
    start = sc.i
    if not _read_temp(sc, c):
        return False
    text = sc.s[start:sc.i]
    ends = re.split(r"[-/]", text.rstrip(":?"))
    c.indices["k_type"] = ends[0]
    if len(ends) > 1:
        end = ends[1] if re.match(r"[OBAFGKM]", ends[1]) else ends[0][0] + ends[1]
        c.indices["m_type"] = end
    c.pecs.append("m")
    c.notes.append("older Am form: K-line and metallic-line types given as a range; Teff uncertain")
    _read_lum(sc, c)
    _read_pecs(sc, c)
    return True


def _parse_wd(sc: _Scan, c: _Comp) -> bool:
    m = sc.match(_WD)
    if not m:
        return False
    c.kind = "white_dwarf"
    c.tclass = "D" + m.group(1)
    if m.group(2):
        c.subtype = float(m.group(2))
    suffix = m.group(3) or ""
    for tok in re.findall(r"pec|P|H|E|V|X|d", suffix):
        c.pecs.append(tok)
    if m.group(4):
        c.temp_unc = True
    if set(m.group(1)) & set("FGK"):
        c.notes.append("pre-1983 white-dwarf class (DF/DG/DK, now DZ)")
    c.lum_tokens = []
    _read_pecs(sc, c)
    return True


def _parse_wr(sc: _Scan, c: _Comp) -> bool:
    m = sc.match(_WR)
    if not m:
        return False
    c.kind = "wolf_rayet"
    c.tclass = "W" + m.group(1)
    if m.group(2):
        c.subtype = float(m.group(2))
    if m.group(3):
        c.indices["wr_range_to"] = float(m.group(3))
    for tok in re.findall(_WR_QUALIFIER, m.group(4) or ""):
        c.pecs.append(tok)
    if m.group(5):
        c.indices["line_group"] = m.group(5)
        c.notes.append(f"old WN line-width group -{m.group(5)} (Hiltner & Schild 1966)")
    if m.group(6):
        c.temp_unc = True
    _read_pecs(sc, c)
    return True


def _parse_carbon(sc: _Scan, c: _Comp) -> bool:
    if sc.s.startswith("C", sc.i) and not re.match(r"C(?:-(?:Hd|R|N|J|H)|\d|$|[ :?,]|[IV]|[a-z])", sc.s[sc.i:]):
        return False
    m = sc.match(_CARBON)
    if m and sc.s[m.start():m.end()]:
        c.kind = "carbon"
        c.tclass = "C" + (f"-{m.group(1)}" if m.group(1) else "")
        sub = m.group(2)
        if sub is not None:
            if "." in sub and not sub.endswith(".5"):
                whole, frac = sub.split(".")
                c.subtype = float(whole)
                c.indices["C2"] = float(frac)
                c.notes.append(f"'{sub}' read as C{whole},{frac}: the point is taken as the Keenan comma (R4)")
            else:
                c.subtype = float(sub)
        if m.group(3):
            c.subtype += 0.25 if m.group(3) == "+" else -0.25
        if m.group(4):
            v = float(m.group(4)) + (0.25 if m.group(5) == "+" else -0.25 if m.group(5) == "-" else 0.0)
            c.indices["C2"] = v
        if sc.match(_UNC):
            c.temp_unc = True
        _read_lum(sc, c)
        _read_pecs(sc, c)
        return True
    return False


def _parse_harvard_carbon(sc: _Scan, c: _Comp) -> bool:
    m = sc.match(_HARVARD_C)
    if not m:
        return False
    c.kind = "carbon"
    c.tclass = m.group(1)
    if m.group(2):
        c.subtype = float(m.group(2))
    if sc.match(_UNC):
        c.temp_unc = True
    c.notes.append(f"Harvard carbon class {m.group(1)}")
    _read_lum(sc, c)
    _read_pecs(sc, c)
    return True


def _parse_s(sc: _Scan, c: _Comp) -> bool:
    m = sc.match(_STYPE)
    if not m:
        return False
    c.kind = "s_type"
    c.tclass = m.group(1)
    sub = m.group(2)
    if "." in sub and not sub.endswith(".5") and m.group(4) is None:
        whole, frac = sub.split(".")
        c.subtype = float(whole)
        c.indices["ZrO"] = float(frac)
        c.notes.append(f"'{sub}' read as S{whole},{frac}: the point is taken as the Keenan comma (R4)")
    else:
        c.subtype = float(sub)
    if m.group(3):
        c.subtype += 0.25 if m.group(3) == "+" else -0.25
    if m.group(4):
        v = float(m.group(5)) + (0.25 if m.group(6) == "+" else -0.25 if m.group(6) == "-" else 0.0)
        c.indices["abundance" if m.group(4) == "/" else "ZrO"] = v
    if sc.match(_UNC):
        c.temp_unc = True
    _read_lum(sc, c)
    _read_pecs(sc, c)
    return True


def _parse_hot_sd(sc: _Scan, c: _Comp) -> bool:
    m = sc.match(_HOTSD)
    if not m:
        return False
    c.kind = "hot_subdwarf"
    c.prefix = "sd"
    c.tclass = m.group(1)
    if m.group(2):
        c.subtype = float(m.group(2))
        base = TCLASS_BASE[m.group(1)[0]]
        c.lo = c.hi = base + c.subtype
    else:
        c.lo, c.hi = (0.0, 19.5) if m.group(1) == "OB" else (float(TCLASS_BASE[m.group(1)]), TCLASS_BASE[m.group(1)] + 9.5)
    if m.group(3):
        c.pecs.append(m.group(3))
    if m.group(4):
        c.pecs.append("e")
    rm = sc.match(_R(r"VIII|VII|VI"))
    if rm:
        c.lum_tokens.append((rm.group(0), None))
        if sc.match(_UNC):
            c.lum_unc = True
    hm = sc.match(_R(r"He(\d+)"))
    if hm:
        c.indices["He"] = float(hm.group(1))
        if sc.match(_UNC):
            c.notes.append("He class uncertain")
    if sc.match(_UNC):
        c.temp_unc = True
    _read_pecs(sc, c)
    if not c.lum_tokens:
        c.hot_sd_class = "sd" + m.group(1)
    return True


def _parse_component(text: str) -> SpType:
    raw = text
    s = text.strip()
    if not s:
        return SpType(raw=raw, reason="empty component")
    # companion seen but not classified / inferred companion in parentheses
    if s in ("...", "..", "."):
        return SpType(raw=raw, ok=True, kind="special", peculiarities=("...",),
                      notes=("companion seen, not classified",))
    if s.startswith("(") and s.endswith(")"):
        inner = _parse_component(s[1:-1])
        if inner.ok:
            return replace(inner, raw=raw, notes=inner.notes + ("companion inferred (in parentheses)",))
    if s in ("pec", "Pec", "Q", "P", "?"):
        meaning = {"pec": "peculiar, no type", "Pec": "peculiar, no type", "Q": "nova", "P": "planetary nebula",
                   "?": "type unknown"}[s]
        return SpType(raw=raw, ok=True, kind="special", peculiarities=("pec",) if s.lower() == "pec" else (s,),
                      notes=(meaning,))
    if s == "sd":
        return SpType(raw=raw, ok=True, kind="special", prefix="sd", lumclass="sd",
                      lum_range=(7.0, 7.0), notes=("subdwarf of unstated temperature class",))
    sc = _Scan(s)
    c = _Comp(raw)
    ok = False
    first = s[0]
    if first == "D":
        ok = _parse_wd(sc, c)
    elif first == "W":
        ok = _parse_wr(sc, c)
    elif s.startswith("sd") and sc.peek(_HOTSD):
        ok = _parse_hot_sd(sc, c)
    elif first == "k" and sc.peek(_AM):
        ok = _parse_am(sc, c)
        if not ok:
            sc.i = 0
            c = _Comp(raw)
    elif sc.peek(_STYPE):
        ok = _parse_s(sc, c)
    elif first == "C":
        ok = _parse_carbon(sc, c)
    elif first in "RN" and sc.peek(_HARVARD_C):
        ok = _parse_harvard_carbon(sc, c)
    elif sc.peek(_AM_OLD):
        ok = _parse_am_old(sc, c)
    elif sc.peek(_AM_OLD2):
        ok = _parse_am_old2(sc, c)
    if not ok:
        sc = _Scan(s)
        c = _Comp(raw)
        ok = _parse_mk(sc, c)
    if not ok:
        return SpType(raw=raw, reason=f"no spectral class found at {s[:20]!r}")
    out = c.freeze()
    hs = c.hot_sd_class
    if hs:
        out = replace(out, lumclass=hs, lum_range=(8.0, 9.0))
    if out.kind == "white_dwarf":
        out = replace(out, lumclass="D", lum_range=(math.nan, math.nan))
    if not (out.tclass or out.lumclass or out.peculiarities):
        return SpType(raw=raw, reason=f"no spectral class found at {s[:20]!r}")
    return out


def _split_components(s: str) -> list[str]:
    """Split a field at '+' signs that start a new component (R1)."""
    parts, depth, start = [], 0, 0
    i = 0
    while i < len(s):
        ch = s[i]
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth = max(0, depth - 1)
        elif ch == "+" and depth == 0 and i > 0:
            nxt = s[i + 1:]
            if _COMPONENT_START.match(nxt) and nxt.strip():
                parts.append(s[start:i])
                start = i + 1
        i += 1
    parts.append(s[start:])
    return parts


#: longest field read (characters, after runs of blanks are collapsed); real catalogue SpType
#: fields are 12 (Hipparcos H76) to a few tens of characters
MAX_LENGTH = 256
#: longest field looked at before blanks are collapsed (fixed-width padding)
MAX_RAW_LENGTH = 4 * MAX_LENGTH
#: most components of a composite field ('A+B+C...'); real multiple systems have a handful
MAX_COMPONENTS = 8


def _too_long(text: str, what: str) -> SpType:
    return SpType(raw=text, reason=f"too long: {what}; not read")


def _parse_uncached(text: str) -> SpType:
    if len(text) > MAX_RAW_LENGTH:
        return _too_long(text, f"{len(text)} characters (at most {MAX_LENGTH} are read)")
    s = re.sub(r"\s+", " ", text).strip()
    if not s:
        return SpType(raw=text, reason="empty string")
    if len(s) > MAX_LENGTH:
        return _too_long(text, f"{len(s)} characters (at most {MAX_LENGTH} are read)")
    pieces = _split_components(s)
    if len(pieces) > MAX_COMPONENTS:
        return _too_long(text, f"{len(pieces)} components (at most {MAX_COMPONENTS} are read)")
    comps = [_parse_component(p) for p in pieces]
    primary = comps[0]
    if not primary.ok:
        return replace(primary, raw=text, kind="unparsed")
    if len(comps) == 1:
        return replace(primary, raw=text)
    bad = [c.raw.strip() for c in comps[1:] if not c.ok]
    tail = " + ".join(bad)
    reason = primary.reason
    if bad:
        reason = (reason + "; " if reason else "") + f"companion {tail!r} not understood"
    return replace(
        primary,
        raw=text,
        reason=reason,
        components=tuple(comps),
        composite=True,
        unparsed_tail=" + ".join(x for x in (primary.unparsed_tail, tail) if x),
    )


_CACHE: dict[str, SpType] = {}
_CACHE_MAX = 200_000


def parse(text) -> SpType:
    """Read one catalogue spectral-type string. Never raises.

    Parameters
    ----------
    text : str or None
        The SpType field as the catalogue prints it (``'K0IIIbCN-0.5'``, ``'B0Ia+WC5:'``,
        ``'DA3.5'``). ``None``, NaN, masked values and non-strings give an unparsed result.

    Returns
    -------
    SpType
        ``ok`` False with ``reason`` when nothing could be read.

    Examples
    --------
    >>> p = parse("G20-Ia")          # one digit before the point (R5): G2 + hypergiant 0-Ia
    >>> p.tclass, p.subtype, p.lumclass
    ('G', 2.0, '0')
    """
    if isinstance(text, bytes):
        try:
            text = text.decode("utf-8", "replace")
        except Exception:  # pragma: no cover - decode with 'replace' does not fail
            return SpType(raw=repr(text), reason="undecodable bytes")
    if text is None or text is np.ma.masked:
        return SpType(raw="", reason="no spectral type (missing value)")
    if not isinstance(text, str):
        if isinstance(text, float) and math.isnan(text):
            return SpType(raw="", reason="no spectral type (missing value)")
        return SpType(raw=repr(text), reason=f"not a string: {type(text).__name__}")
    if len(text) > MAX_RAW_LENGTH:  # before hashing: cheap for a 10^6-character field
        return _too_long(text, f"{len(text)} characters (at most {MAX_LENGTH} are read)")
    hit = _CACHE.get(text)
    if hit is not None:
        return hit
    try:
        out = _parse_uncached(text)
    except Exception as exc:  # never raise on catalogue garbage; say what happened
        out = SpType(raw=text, reason=f"internal parser error ({type(exc).__name__}: {exc})")
    if len(_CACHE) < _CACHE_MAX:
        _CACHE[text] = out
    return out


_MISSING_KEY = "\x00missing"


def _as_key(v):
    return v if isinstance(v, str) else _MISSING_KEY


_as_keys = np.frompyfunc(_as_key, 1, 1)


def parse_many(texts) -> np.ndarray:
    """Parse a column of spectral types; each distinct string is read once.

    Parameters
    ----------
    texts : iterable of str
        A list, numpy array, astropy Column or MaskedColumn (masked entries and non-strings
        -> unparsed, reason "no spectral type").

    Returns
    -------
    numpy.ndarray of SpType (dtype object), same length and order as ``texts``.
    """
    if np.ma.isMaskedArray(texts):
        m = np.ma.getmaskarray(texts)
        values = np.asarray(np.ma.getdata(texts)).astype(object).ravel()
        values[m.ravel()] = None
    elif isinstance(texts, np.ndarray):
        values = texts.ravel()
    else:
        values = np.array(list(texts), dtype=object).ravel()
    if values.dtype.kind == "S":
        values = np.char.decode(values, "utf-8", "replace")
    if values.dtype.kind == "U":
        keys = values
    else:
        keys = _as_keys(values.astype(object)).astype(str) if values.size else np.array([], dtype=str)
    uniq, inverse = np.unique(keys, return_inverse=True)
    parsed = np.empty(len(uniq), dtype=object)
    for j, k in enumerate(uniq):  # one parse per distinct string
        parsed[j] = parse(None if k == _MISSING_KEY else str(k))
    return parsed[inverse.ravel()]
