"""The stage regions and every boundary curve at solar and at low metallicity (no stars)."""

import numpy as np
from matplotlib.figure import Figure

from hrstage.plot import hr_diagram

fig = Figure(figsize=(12.0, 6.5), layout="constrained")
for k, feh in enumerate((0.0, -1.5)):
    ax = fig.add_subplot(1, 2, k + 1)
    hr_diagram(logt=np.array([np.nan]), logl=np.array([np.nan]), feh=feh, ax=ax, show_curves="all",
               legend=False, right_axis=None, title=f"[Fe/H] = {feh:+.1f}")
