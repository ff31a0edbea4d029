"""Hypothesis strategies shared by the reliability tests (inputs only, no expected values).

Nothing here knows the answer: these are generators of HR positions, hostile floats and text, used
by properties whose truth follows from the definitions (probabilities sum to one) or from stellar
physics stated in the test that uses them.
"""

from __future__ import annotations

import numpy as np
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

#: Any float64 at all, NaN and +-inf included.
any_float = st.floats(allow_nan=True, allow_infinity=True, width=64)

#: Values that stress arithmetic: exact zeros, signed zeros, subnormals, huge, non-finite.
nasty_float = st.sampled_from(
    [0.0, -0.0, 5e-324, -5e-324, 1e-300, 1e300, -1e300, np.finfo(float).max, -np.finfo(float).max,
     np.nan, np.inf, -np.inf]
)

#: A float that is usually nasty or arbitrary and sometimes plausible.
hostile_float = st.one_of(nasty_float, any_float)

#: The HR box in which stars live (log Teff 3.3..5.0, i.e. 2000..100 000 K; log L -5..7).
logt_box = st.floats(3.3, 5.0, allow_nan=False, allow_infinity=False)
logl_box = st.floats(-5.0, 7.0, allow_nan=False, allow_infinity=False)
#: What classify_hr accepts as log Teff (documented: 2 <= logt <= 6.5, or not finite = missing;
#: a finite value outside is taken as a unit mistake and raises HrstageInputError).
logt_domain = st.one_of(st.floats(2.0, 6.5), st.sampled_from([2.0, 6.5, np.nan, np.inf, -np.inf]))
#: Metallicities the analytic fits are meant for, and a little beyond (clipping path).
feh_box = st.floats(-2.5, 0.5, allow_nan=False, allow_infinity=False)


def float_arrays(n: int, elements=hostile_float):
    """Arrays of ``n`` float64 values drawn from ``elements``."""
    return hnp.arrays(np.float64, n, elements=elements)


@st.composite
def hostile_hr_inputs(draw, max_rows: int = 40):
    """Keyword arguments for ``classify_hr`` where every value may be hostile.

    log Teff stays inside the classifier's documented domain (or is not finite); log L, [Fe/H]
    and mass may be anything.

    Errors are non-negative, NaN or infinite (a negative sigma is a different contract: the row
    must be rejected with a reason, tested separately); the correlation lies in [-1, 1] or is NaN.
    """
    n = draw(st.integers(1, max_rows))
    kwargs = {
        "logt": draw(float_arrays(n, st.one_of(logt_domain, logt_box))),
        "logl": draw(float_arrays(n, st.one_of(hostile_float, logl_box))),
    }
    if draw(st.booleans()):
        err = st.one_of(st.floats(0.0, 5.0), st.sampled_from([0.0, 1e-300, 1e300, np.nan, np.inf]))
        kwargs["logt_err"] = draw(float_arrays(n, err))
        kwargs["logl_err"] = draw(float_arrays(n, err))
        if draw(st.booleans()):
            kwargs["corr"] = draw(float_arrays(n, st.one_of(st.floats(-1.0, 1.0), st.just(np.nan))))
        kwargs["n_draws"] = draw(st.sampled_from([0, 8, 32]))
    if draw(st.booleans()):
        kwargs["feh"] = draw(float_arrays(n, st.one_of(hostile_float, feh_box)))
    if draw(st.booleans()):
        kwargs["mass"] = draw(float_arrays(n, st.one_of(hostile_float, st.floats(0.08, 60.0))))
    return kwargs


# --- text ---------------------------------------------------------------------------------
_MK_TCLASS = st.sampled_from(list("OBAFGKM"))
_MK_SUB = st.sampled_from(["0", "1", "2", "3", "5", "7", "8", "9", "0.5", "9.5", "2.5"])
_MK_LUM = st.sampled_from(["", "V", "IV", "III", "II", "Ib", "Iab", "Ia", "IV-V", "III-IV", "II-III", "IIIb"])
_MK_PEC = st.sampled_from(["", "e", "p", "n", "var", " Fe-1", "m", ":", "(n)", " CN0.5"])
_MK_SEP = st.sampled_from(["", " "])


@st.composite
def mk_like(draw):
    """Strings in the shape of catalogue MK types (letter, subclass, luminosity class, suffix)."""
    return draw(_MK_TCLASS) + draw(_MK_SUB) + draw(_MK_SEP) + draw(_MK_LUM) + draw(_MK_PEC)


#: Arbitrary unicode (control characters included, surrogates excluded as they are not text).
any_text = st.text(alphabet=st.characters(exclude_categories=("Cs",)), max_size=200)

#: Text that is mostly the parser's own alphabet, glued in odd orders (more interesting for a parser).
mk_alphabet_text = st.text(alphabet=st.sampled_from(list("OBAFGKMLTYDWCSNsdgcIVab0123456789.+-/:?()[] epnkmvar")),
                           max_size=60)

#: Either of the above, or an MK-shaped string with junk attached.
parser_text = st.one_of(any_text, mk_alphabet_text, mk_like(), st.tuples(mk_like(), any_text).map("".join))
