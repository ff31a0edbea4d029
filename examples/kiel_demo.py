"""Kiel diagram (log Teff against log g) of the demo catalogue, log g from mass_est."""

from astropy.table import Table

import hrstage
from hrstage.cli.commands import demo_catalogue_path
from hrstage.plot import kiel_diagram

tagged = hrstage.classify(Table.read(demo_catalogue_path()))
ax = kiel_diagram(tagged, title="Kiel diagram of the demo catalogue", figsize=(7.5, 7.5))
