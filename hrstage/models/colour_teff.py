"""Index of hrstage's colour-Teff relations (one published relation per module).

============================  ================================  =========================================
name                          module                            use in hrstage
============================  ================================  =========================================
``casagrande2021``            :mod:`.casagrande2021`            default Gaia (BP-RP)_0 -> Teff (DR3 or DR2)
``mucciarelli2021``           :mod:`.mucciarelli2021`           alternative Gaia EDR3 (BP-RP)_0 -> Teff
``casagrande2010``            :mod:`.casagrande2010`            Johnson/2MASS dwarfs & subgiants (V-Ks, B-V)
``flower1996``                :mod:`.flower_teff`               Johnson B-V, all classes (giants, fallback)
``ballesteros2012``           :mod:`.ballesteros2012`           display colours only, never for the HRD
============================  ================================  =========================================

Each module carries its citation, validity range (enforced: NaN outside) and scatter; the tests
in ``tests/models/test_colour_teff.py`` hold the check values. :func:`describe` gives the one-line
citation used in the ``hr_source`` strings.
"""

from __future__ import annotations

from . import ballesteros2012, casagrande2010, casagrande2021, flower_teff, mucciarelli2021

MODULES = {
    "casagrande2021": casagrande2021,
    "mucciarelli2021": mucciarelli2021,
    "casagrande2010": casagrande2010,
    "flower1996": flower_teff,
    "ballesteros2012": ballesteros2012,
}

GAIA_RELATIONS = ("casagrande2021", "mucciarelli2021")


def describe(name: str) -> str:
    """Citation string of relation ``name`` (a key of :data:`MODULES`)."""
    try:
        return MODULES[name].CITATION
    except KeyError:
        raise ValueError(f"unknown colour-Teff relation {name!r}; expected one of {sorted(MODULES)}") from None
