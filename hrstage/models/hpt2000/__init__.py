"""Hurley, Pols & Tout (2000) analytic stellar-evolution formulae used for stage boundaries.

Citation: Hurley J. R., Pols O. R., Tout C. A., 2000, "Comprehensive analytic formulae for stellar
evolution as a function of mass and metallicity", MNRAS 315, 543.

Modules, split by topic:

- :mod:`.coefficients` -- the Z-dependent a_n, b_n constants (Appendix) and critical masses
  (eqs 1-3);
- :mod:`.main_sequence` -- t_BGB, t_hook, t_MS (eqs 4-7), L_TMS, R_TMS (eqs 8-9), and the MS
  evolution L(t), R(t) (eqs 12-24);
- :mod:`.giant_branch` -- L_BGB (eq 10), giant-branch radius R_GB (eq 46), He ignition L_HeI,
  R_HeI (eqs 49-50), minimum CHeB radius (eq 55), AGB radius (eq 74), core mass at the base of the
  AGB (eq 66) and the carbon-ignition mass derived from it;
- :mod:`.core_helium` -- core-helium burning of low-mass stars: helium-star ZAMS L and R (eqs 77-78),
  minimum CHeB luminosity (eq 51), core mass at the helium flash (eqs 37-38 at L_HeI), zero-age
  horizontal-branch luminosity and radius (eqs 53-54), core-He-burning lifetime (eqs 57, 79);
- :mod:`.white_dwarf` -- white-dwarf radius (eq 91).

Equation numbers come from code comments of public implementations and were not checked against
the paper PDF. Validity: 0.1-100 Msun (NaN outside), 1e-4 <= Z <= 0.03 (``ValueError`` outside).
Where public implementations differ, the original SSE Fortran forms are used (see each module).
The fits describe single, non-rotating stellar models: stage labels built on them are indicative.
"""

from .coefficients import Coefficients, coefficients, critical_masses
from .giant_branch import (
    carbon_ignition_mass,
    l_bgb,
    l_hei,
    mc_bagb,
    r_agb,
    r_gb,
    r_hei,
    r_mhe,
)
from .core_helium import l_minhe, l_zahb, l_zhe, mc_hei, r_zahb, r_zhe, t_he, t_hems
from .main_sequence import l_tms, ms_luminosity_radius, r_tms, t_bgb, t_hook, t_ms
from .white_dwarf import WD_MASS_RANGE, wd_radius

__all__ = [
    "Coefficients",
    "coefficients",
    "critical_masses",
    "t_bgb",
    "t_hook",
    "t_ms",
    "l_tms",
    "r_tms",
    "ms_luminosity_radius",
    "l_bgb",
    "r_gb",
    "l_hei",
    "r_hei",
    "r_mhe",
    "r_agb",
    "mc_bagb",
    "carbon_ignition_mass",
    "wd_radius",
    "WD_MASS_RANGE",
    "l_zhe",
    "r_zhe",
    "l_minhe",
    "mc_hei",
    "l_zahb",
    "r_zahb",
    "t_he",
    "t_hems",
]
