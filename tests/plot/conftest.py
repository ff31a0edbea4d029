"""Synthetic tagged catalogues for the figure tests (an invented scenario: no real stars)."""

import numpy as np
import pytest

from hrstage import flags as F
from hrstage.stages import STAGES


@pytest.fixture(scope="session")
def real_stage_map():
    stagemap = pytest.importorskip("hrstage.stagemap")
    return stagemap.stage_map(feh=0.0)


@pytest.fixture(scope="session")
def tagged(real_stage_map):
    """About 15 stars in each stage region of the solar stage map, with flags and errors."""
    from astropy.table import Table

    rng = np.random.default_rng(20240611)
    lt = rng.uniform(3.45, 4.65, 6000)
    ll = rng.uniform(-4.2, 6.0, 6000)
    code = np.asarray(real_stage_map.locate(lt, ll)).astype(int)
    keep = np.concatenate([np.flatnonzero(code == c)[:15] for c in range(len(STAGES) - 1)])
    lt, ll, code = lt[keep], ll[keep], code[keep]
    n = lt.size
    flags = np.zeros(n, dtype=np.int64)
    flags[::7] |= F.COOL_BUT_MASSIVE
    flags[3::9] |= F.LOW_PARALLAX_SNR
    flags[5::11] |= F.SPTYPE_CONFLICT
    flags |= F.NO_METALLICITY
    return Table(
        {
            "name": [f"Synth-{i:03d}" for i in range(n)],
            "teff_used": 10**lt,
            "logl_used": ll,
            "stage": np.array(STAGES, dtype=object)[code].astype(str),
            "stage_prob": rng.uniform(0.5, 1.0, n),
            "flags": flags,
            "logt_err": np.full(n, 0.01),
            "logl_err": np.full(n, 0.08),
            "logt_logl_corr": np.full(n, 0.4),
        }
    )
