"""Published stellar relations (layer 1): pure numpy, vectorised, no I/O.

One module per published relation, each with its citation, validity range and units:

- :mod:`hrstage.models.metallicity` -- the fits' metallicity variable (Z_sun = 0.02 scale),
  [Fe/H] <-> Z, validity range 1e-4 <= Z <= 0.03, clipping and checking.
- :mod:`hrstage.models.tout1996` -- Tout, Pols, Eggleton & Han (1996) ZAMS luminosity and radius.
- :mod:`hrstage.models.hpt2000` -- Hurley, Pols & Tout (2000) analytic evolution formulae:
  critical masses, main-sequence lifetime and evolution, terminal-age main sequence, base of the
  giant branch, giant-branch and AGB radii, helium ignition, white-dwarf radius.
- :mod:`hrstage.models.eker2018` -- Eker et al. (2018) empirical main-sequence mass-luminosity,
  mass-radius and mass-temperature relations.
- :mod:`hrstage.models.stellar` -- Stefan-Boltzmann law, surface gravity and bolometric
  magnitudes with the IAU 2015 nominal solar values (astropy).
- :mod:`hrstage.models.bolometric` -- bolometric corrections (photometry area).
- :mod:`hrstage.models.colour_teff` -- colour-temperature relations (photometry area), with one
  module per paper beside it (``ballesteros2012``, ``casagrande2010``, ``casagrande2021``,
  ``flower_teff``, ``mucciarelli2021``, ``riello2021``).

Conventions: masses in Msun, luminosities in Lsun, radii in Rsun, times in Myr, temperatures in K;
plain float arrays in and out, broadcasting mass against metallicity. Masses outside a relation's
validity range give NaN (masked); metallicities outside 1e-4..0.03 raise unless clipped first with
:func:`hrstage.models.metallicity.clip_z`.

These are fits to stellar models. Stages derived from them are indicative and do not replace a
spectroscopic analysis.
"""
