"""Points filled by the metallicity used for each star; the marker shows its stage."""

from astropy.table import Table

import hrstage
from hrstage.cli.commands import demo_catalogue_path
from hrstage.plot import hr_diagram

tagged = hrstage.classify(Table.read(demo_catalogue_path()))
ax = hr_diagram(tagged, color_by="feh_used", radius_lines=None, title="Coloured by [Fe/H] used",
                figsize=(8.0, 7.5))
