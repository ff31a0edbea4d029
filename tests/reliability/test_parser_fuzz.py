"""Robustness of the MK spectral-type parser: properties, a mutation fuzz pass, giant strings.

Contract under test (docs/sptype.md, DEVELOPERS.md): ``parse(text)`` never raises on any input
and says why when it cannot read a string (``ok`` False, non-empty ``reason``); a successful parse
has a canonical rendering ``normalised`` that reads back to itself (idempotence of the
normal form: common practice for a canonicaliser).
"""

from __future__ import annotations

import csv
import math

import numpy as np
import pytest

pytest.importorskip("hypothesis")
from hypothesis import HealthCheck, given, settings  # noqa: E402

from hr_strategies import mk_like, parser_text  # noqa: E402

sptype = pytest.importorskip("hrstage.sptype", reason="spectral-type layer not importable")
parse, parse_many = sptype.parse, sptype.parse_many

HUGE = 10**6


def _same_floats(a, b):
    return all((x == y) or (math.isnan(x) and math.isnan(y)) for x, y in zip(a, b))


def _check_one(text, p):
    assert isinstance(p.ok, (bool, np.bool_))
    if p.ok:
        norm = p.normalised
        assert isinstance(norm, str) and norm
        again = parse(norm)
        assert again.ok, (text, norm, again.reason)
        assert again.normalised == norm, (text, norm, again.normalised)
        # the same reading: classes, kind, temperature range and luminosity range
        assert (again.tclass, again.lumclass, again.kind) == (p.tclass, p.lumclass, p.kind), (text, norm)
        assert _same_floats(again.t_range, p.t_range), (text, norm, p.t_range, again.t_range)
        assert _same_floats(again.lum_range, p.lum_range), (text, norm, p.lum_range, again.lum_range)
        if not (isinstance(p.numeric, float) and math.isnan(p.numeric)):
            assert again.numeric == p.numeric
    else:
        assert isinstance(p.reason, str) and p.reason.strip(), repr(text)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(parser_text)
def test_parse_never_raises_and_normal_form_is_a_fixed_point(text):
    _check_one(text, parse(text))


@settings(max_examples=150, deadline=None)
@given(mk_like())
def test_mk_shaped_strings_parse_and_round_trip(text):
    p = parse(text)
    assert p.ok, (text, p.reason)  # letter + subclass is an MK type in every catalogue convention
    _check_one(text, p)


@pytest.mark.parametrize(
    "text",
    [
        "x" * HUGE,
        "K0III" + "x" * HUGE,
        "K0" + "I" * HUGE,
        "G2V" + "+G2V" * (HUGE // 4),
        "(" * HUGE,
        "(" * (HUGE // 2) + "K0III" + ")" * (HUGE // 2),
        "\x00" * HUGE,
        "é" * HUGE,
        "\u202e" + "M" * HUGE,
        " " * HUGE,
        "9" * HUGE,
        "-" * HUGE,
        "/".join(["B1"] * (HUGE // 3)),
    ],
    ids=["x", "k0iii+x", "many-I", "many-companions", "open-parens", "nested-parens", "nul", "e-acute",
         "rtl-override", "blanks", "digits", "dashes", "many-ranges"],
)
def test_million_character_fields(text):
    # one parse of the giant string (through parse_many, next to an ordinary and a missing
    # value); the round trip of normal forms is the property test's job
    out = parse_many(np.array([text, "G2V", None], dtype=object))
    assert len(out) == 3 and out[1].ok and not out[2].ok
    p = out[0]
    assert isinstance(p.ok, (bool, np.bool_))
    # every one of these is far beyond the documented cap: refused unread, with the reason (a run of
    # NULs arrives empty: numpy text arrays drop trailing NULs, so parse_many sees '')
    assert not p.ok
    assert p.reason.startswith("too long" if text.strip("\x00") else "empty"), p.reason[:80]
    assert parse(text).reason.startswith("too long")


def test_length_and_component_caps():
    """The parser's work is capped (docs/sptype.md): at most MAX_LENGTH characters after blanks are
    collapsed and MAX_COMPONENTS components; beyond that the string is unparsed, reason 'too long'."""
    cap, ncomp = sptype.parser.MAX_LENGTH, sptype.parser.MAX_COMPONENTS
    at_cap = "K0III" + " " + "e" * (cap - 6)
    assert len(at_cap) == cap and parse(at_cap).ok
    over = at_cap + "e"
    p = parse(over)
    assert not p.ok and p.reason.startswith("too long") and str(cap) in p.reason
    # padding blanks do not count: a fixed-width field with a short type is read
    assert parse("G2V" + " " * (2 * cap)).lumclass == "V"
    many = "+".join(["G2V"] * ncomp)
    assert len(parse(many).components) == ncomp
    p = parse(many + "+G2V")
    assert not p.ok and p.reason.startswith("too long") and "components" in p.reason
    # the check counts a refused string as unparsed (flag SPTYPE_UNPARSED), never as consistent
    chk = sptype.check_types([over, "G2V"], [3.76, 3.76], [0.0, 0.0])
    assert chk.verdict[0] == "not_checkable:unparsed" and chk.verdict[1] == "consistent"


def test_non_text_values():
    for value in (None, math.nan, 3.5, 7, b"K0III", b"\xff\xfe", np.ma.masked, ["K0III"], {"a": 1}, object()):
        p = parse(value)
        assert isinstance(p.ok, (bool, np.bool_))
        if not p.ok:
            assert p.reason.strip()
    many = parse_many(np.ma.MaskedArray(["K0III", "G2V", "zz"], mask=[False, True, False]))
    assert len(many) == 3 and many[0].ok and not many[1].ok


# --- mutation fuzz over real catalogue strings ---------------------------------------------
def _mutate(rng: np.random.Generator, s: str) -> str:
    """One random edit: delete, insert, replace, duplicate a slice, swap, truncate or join."""
    alphabet = "OBAFGKMLTYDWCSNIVab0123456789.+-/:?()[] epnkmvar\t\x00é"
    op = rng.integers(7)
    i = int(rng.integers(len(s) + 1))
    ch = alphabet[int(rng.integers(len(alphabet)))]
    if op == 0 and s:
        return s[:i] + s[i + 1:]
    if op == 1:
        return s[:i] + ch + s[i:]
    if op == 2 and s:
        return s[:i] + ch + s[i + 1:]
    if op == 3:
        j = int(rng.integers(i, len(s) + 1))
        return s[:j] + s[i:j] + s[j:]
    if op == 4 and len(s) > 1:
        j = int(rng.integers(len(s)))
        lst = list(s)
        lst[min(i, len(s) - 1)], lst[j] = lst[j], lst[min(i, len(s) - 1)]
        return "".join(lst)
    if op == 5:
        return s[:i]
    return s + "+" + s[::-1]


@pytest.mark.validation
def test_fuzz_mutants_of_real_catalogue_types(validation_file):
    """Mutants of the 5,112 Hipparcos SpType strings of the bright stars (ESA 1997, field H76;
    compilation in bright_stars_hip.csv, see SOURCES.md) never make the parser raise, and every
    successful parse has a normal form that reads back to itself."""
    with open(validation_file("bright_stars_hip.csv"), newline="", encoding="utf-8") as fh:
        real = [row["sptype"] for row in csv.DictReader(fh)]
    assert len(real) > 5000
    rng = np.random.default_rng(20240611)
    picks = rng.choice(len(real), 3000)
    mutants = []
    for k in picks:
        s = real[k]
        for _ in range(int(rng.integers(1, 4))):
            s = _mutate(rng, s)
        mutants.append(s)
    parsed = parse_many(np.array(mutants, dtype=object))
    assert len(parsed) == len(mutants)
    failures = []
    for text, p in zip(mutants, parsed):
        try:
            _check_one(text, p)
        except AssertionError as exc:
            failures.append(f"{text!r} -> {p.normalised!r}: {str(exc).splitlines()[0][:160]}")
    assert not failures, f"{len(failures)} of {len(mutants)} mutants fail:\n" + "\n".join(failures[:15])
    # the originals themselves: parse_many agrees with parse, element by element
    originals = parse_many(np.array(real, dtype=object))
    for text, p in zip(real[:500], originals[:500]):
        assert p == parse(text)
