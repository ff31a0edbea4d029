"""HR diagram of the bundled demo catalogue (invented stars), with uncertainties drawn."""

from astropy.table import Table

import hrstage
from hrstage.cli.commands import demo_catalogue_path
from hrstage.plot import hr_diagram

tagged = hrstage.classify(Table.read(demo_catalogue_path()))
ax = hr_diagram(tagged, error_bars=True, title="Demo catalogue (invented stars)", figsize=(7.5, 7.5))
