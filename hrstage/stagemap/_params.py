"""Named tolerances of the stage map, with their defaults and the reasons for them."""

from __future__ import annotations

from dataclasses import asdict, dataclass, fields

from ..errors import HrstageInputError


@dataclass(frozen=True)
class StageParams:
    """Tolerances and choices that turn the model loci into stage regions.

    Every value is a documented choice, not a fitted number; see ``docs/stagemap.md``.

    Parameters
    ----------
    ms_below_zams : float, default 0.12
        Depth (dex in log L) below the ZAMS still counted as main sequence. Covers the fit
        accuracy of Tout et al. (1996) (a few per cent in L and R), a moderate metallicity error
        and the zero-point mismatch between the fits' Z = 0.02 scale and modern solar models.
    ms_hot_logt : float, default 0.025
        Shift (dex in log Teff) of the lower main-sequence edge to the hot side of the ZAMS, where
        the ZAMS is steep (O/B stars and M dwarfs) and a vertical tolerance alone is almost nil:
        about 6 per cent in Teff, the usual Teff uncertainty of hot stars.
    ms_cool_logt : float, default 0.04
        Shift (dex in log Teff) of the upper main-sequence edge to the cool side for low masses
        (full below 0.45 Msun, tapering to zero at 0.7 Msun in log M). The fits' low-mass ZAMS is
        too hot: observed M1V-M4V dwarfs (Pecaut & Mamajek 2013) lie 0.02 dex cooler at the same
        L, and the PARSEC v1.2S Z = 0.014 main-sequence points older than 0.3 Gyr of fits masses
        0.13-0.5 Msun need at most 0.035 dex (Bressan et al. 2012; measured here). At the steep
        M-dwarf main sequence 0.01 dex in log T is about 0.1 dex in log L, so a larger shift would
        swallow young stars above the main sequence (it was 0.10 before the pre-main-sequence
        stage existed).
    ms_cool_logt_lowest : float, default 0.09
        The same shift at 0.1 Msun and below (the extension), tapering to ``ms_cool_logt`` at
        0.13 Msun: PARSEC v1.2S 0.09-0.12 Msun main-sequence points lie up to 0.078 dex cooler
        than the fits' upper edge at the same L.
    binary_offset : float, default 0.30
        Height (dex) above the main-sequence upper edge of the unresolved-binary band: an
        equal-mass pair is twice as bright (log 2 = 0.30, i.e. 0.75 mag) at the same colour.
    binary_promote : bool, default False
        False: stars in the binary band stay ``main_sequence`` and get the POSSIBLE_BINARY flag
        (the design rule "flag, do not promote"). True: they keep the label of the region below
        the band (usually subgiant) and are still flagged.
    max_age_myr : float, default 13800
        Age of the Universe (Myr). Masses whose main-sequence lifetime is longer get, as the
        main-sequence upper edge, their position at this age instead of the TAMS; the subgiant
        region starts at the mass that just reaches its TAMS at this age.
    supergiant_mass : float or None, default None
        Initial mass (Msun) from which post-main-sequence stars are supergiants. None: the
        carbon-ignition mass of HPT2000 eq. 66 for the core mass ``supergiant_core_mass`` at the
        base of the AGB, at the map's metallicity.
    supergiant_core_mass : float, default 2.25
        Core mass at the base of the AGB (Msun) that defines the default ``supergiant_mass``:
        2.25 Msun is the HPT2000 split between ONe white dwarfs and core collapse, 8.2 Msun at
        Z = 0.02 (log L about 3.9 at the TAMS), the usual "about 8 Msun" supergiant threshold.
    bright_giant_width : float, default 0.8
        Depth (dex) of the bright-giant band below the supergiant lower edge. Class II sits about
        0.8 dex below class Ib at G5-M0 in the Straizys & Kuriliene (1981) calibration.
    wd_mass_min, wd_mass_max : float, default 0.2, 1.35
        Mass range (Msun) of the white-dwarf band, between the constant-radius lines of the
        HPT2000 eq. 91 mass-radius relation.
    wd_tolerance : float, default 0.25
        Widening (dex in log L) of the white-dwarf band on both sides: eq. 91 is a zero-temperature
        relation, hot and low-mass white dwarfs with hydrogen envelopes are larger.
    wd_envelope_tolerance : float, default 0.15
        Extra widening (dex in log L) of the upper (low-mass) edge of the white-dwarf band only:
        low-mass (0.2-0.4 Msun) white dwarfs with thick hydrogen envelopes are larger than the
        zero-temperature eq. 91 radius. 30 of the 50 Gentile Fusillo et al. (2021) Gaia EDR3 white
        dwarfs (L from their TeffH, loggH, MassH) outside the band lay within 0.15 dex above it.
    wd_teff_min : float, default 4000
        Coolest Teff (K) of the white-dwarf band (design: "Teff > ~4000 K").
    subdwarf_depth : float, default 1.2
        Depth (dex) below the lower main-sequence edge down to which cool stars are subdwarfs
        (metal-poor dwarfs lie up to about 1 dex under the solar ZAMS at fixed Teff).
    hot_subdwarf_teff : tuple of float, default (20000, 45000)
        Teff range (K) of the hot-subdwarf box between the white-dwarf band and the ZAMS.
    hb_height : float, default 0.4
        Height (dex in log L) of the core-helium-burning (horizontal-branch) band above the
        zero-age horizontal branch (HPT2000 eq 53) of low-mass stars (M < M_HeF): horizontal-branch
        and red-clump stars brighten by about 0.3-0.5 dex while they burn helium in the core before
        leaving for the AGB. 0 switches the band off. Where the band overlaps the Hertzsprung gap
        its cells are labelled giant (the gap is crossed in a few Myr, core-He burning lasts
        ~100 Myr).
    hb_depth : float, default 0.1
        Depth (dex) of the band below the ZAHB: fit accuracy of eq 53 and a metallicity or helium
        mismatch (MIST v1.2 at [Fe/H] = -1.35 puts its ZAHB 0.03 dex under eq 53).
    hb_teff_max : float, default 20000
        Hottest Teff (K) of the band. Hotter core-He burners (extreme HB) are the hot subdwarfs,
        which have their own region from ``hot_subdwarf_teff``.
    wd_hot_tolerance : float, default 0.4
        Extra widening (dex in log L) of the upper edge of the white-dwarf band for hot white
        dwarfs, growing linearly in log Teff from 0 at 30 kK to the full value at 100 kK and
        above: eq 91 is a zero-temperature relation and young, hot white dwarfs still have
        inflated, non-degenerate envelopes (log g about 7.0-7.5 instead of 7.9 for 0.55 Msun near
        100 kK in MIST v1.2 cooling tracks).
    wd_elm_logg : float, default 6.0
        Cooler than the hot-subdwarf box (``hot_subdwarf_teff``), the upper edge of the white-dwarf
        band is raised to this surface gravity (log g, cgs) for ``wd_mass_min``, where that lies
        above the eq. 91 edge: extremely-low-mass (He-core, ~0.1-0.3 Msun) white dwarfs keep thick
        hydrogen envelopes and have log g 5-7 (Brown et al. 2016, ApJ 818, 155, the ELM Survey;
        from memory), far larger than the zero-temperature radius. Hotter, the region belongs to
        the hot subdwarfs (log g 5-6). No main-sequence or subdwarf star lies there: at 10 000 K
        the edge is at log L -1.3, the subdwarf region ends near log L 0. 8 switches it off.
    pms_logl_max : float, default 1.5
        Top (log L) of the pre-main-sequence region and of the zone where a young star and an
        evolved one cannot be told apart. 99.6 % of the PARSEC v1.2S Z = 0.014 pre-main-sequence
        points cooler than 6000 K and younger than a third of their arrival time on the main
        sequence lie below it (Bressan et al. 2012; measured here); brighter young stars are
        still embedded (above the birthline) or already near the ZAMS.
    pms_rgb_margin : float, default 0.03
        Shift (dex in log Teff) to the cool side of the giant branch of the oldest population
        (HPT2000 eq 46 for the 13.8 Gyr turn-off mass) before cooler stars count as certainly
        young: metal-richer giants than the map's metallicity lie cooler (PARSEC Z = 0.03 vs
        0.014 giants: about 0.02-0.03 dex at log L 0.5-1.5).
    pms_hayashi_logt : float, default 0.13
        Shift (dex in log Teff) to the cool side of the Hayashi line of the lowest-mass stars
        (HPT2000 eq 46, the fully convective giant-branch radius, at 0.1 Msun) that bounds the
        pre-main-sequence region on the cool side. The fits' low-mass stars are too hot: the
        youngest PARSEC v1.2S Z = 0.014 points of 0.09-0.14 Msun lie up to 0.116 dex cooler than
        that line at log L -2.5..-1.5 (Bressan et al. 2012; measured here).
        Cooler positions stay unclassified (no star in hydrostatic equilibrium sits there;
        brown dwarfs or a bad Teff).
    young_prior : float, default 0.05
        Share of young (pre-main-sequence) stars among the stars at a position where the HR
        diagram cannot tell a young star from an evolved one (above the unresolved-binary band,
        hotter than the oldest giant branch, below ``pms_logl_max``). The label stays the evolved
        one (subgiant / giant) while the share is at most 0.5 and the probability
        ``prob_pre_main_sequence`` gets this share; above 0.5 (a young target list, e.g. a
        star-forming region: pass 0.9) the label is ``pre_main_sequence``. The default is a field
        population: young stars are a few per cent of the stars there (from memory).
    n_mass : int, default 360
        Number of log-spaced masses (0.1-100 Msun) on which the loci are sampled; extra masses
        are added around M_HeF, M_FGB, the supergiant mass and the age-limit mass.
    """

    ms_below_zams: float = 0.12
    ms_hot_logt: float = 0.025
    ms_cool_logt: float = 0.04
    ms_cool_logt_lowest: float = 0.09
    binary_offset: float = 0.30
    binary_promote: bool = False
    max_age_myr: float = 13800.0
    supergiant_mass: float | None = None
    supergiant_core_mass: float = 2.25
    bright_giant_width: float = 0.8
    wd_mass_min: float = 0.2
    wd_mass_max: float = 1.35
    wd_tolerance: float = 0.25
    wd_envelope_tolerance: float = 0.15
    wd_teff_min: float = 4000.0
    subdwarf_depth: float = 1.2
    hot_subdwarf_teff: tuple = (20000.0, 45000.0)
    hb_height: float = 0.4
    hb_depth: float = 0.1
    hb_teff_max: float = 20000.0
    wd_hot_tolerance: float = 0.4
    wd_elm_logg: float = 6.0
    pms_logl_max: float = 1.5
    pms_rgb_margin: float = 0.03
    pms_hayashi_logt: float = 0.13
    young_prior: float = 0.05
    n_mass: int = 360

    def __post_init__(self):
        checks = [
            ("ms_below_zams", 0.0 <= self.ms_below_zams <= 1.0, "between 0 and 1 dex"),
            ("ms_hot_logt", 0.0 <= self.ms_hot_logt <= 0.2, "between 0 and 0.2 dex"),
            ("ms_cool_logt", 0.0 <= self.ms_cool_logt <= 0.3, "between 0 and 0.3 dex"),
            ("ms_cool_logt_lowest", 0.0 <= self.ms_cool_logt_lowest <= 0.3, "between 0 and 0.3 dex"),
            ("binary_offset", 0.0 <= self.binary_offset <= 1.0, "between 0 and 1 dex"),
            ("max_age_myr", 100.0 <= self.max_age_myr <= 2.0e4, "between 100 and 20000 Myr"),
            ("supergiant_core_mass", 1.0 <= self.supergiant_core_mass <= 3.0, "between 1 and 3 Msun"),
            ("bright_giant_width", 0.0 <= self.bright_giant_width <= 2.0, "between 0 and 2 dex"),
            ("wd_mass_min", 0.1 <= self.wd_mass_min < self.wd_mass_max, "0.1 <= wd_mass_min < wd_mass_max"),
            ("wd_mass_max", self.wd_mass_max <= 1.43, "at most 1.43 Msun (below the Chandrasekhar mass 1.44)"),
            ("wd_tolerance", 0.0 <= self.wd_tolerance <= 1.0, "between 0 and 1 dex"),
            ("wd_envelope_tolerance", 0.0 <= self.wd_envelope_tolerance <= 1.0, "between 0 and 1 dex"),
            ("wd_elm_logg", 5.0 <= self.wd_elm_logg <= 8.0, "between 5 and 8 (log g, cgs)"),
            ("wd_teff_min", 2000.0 <= self.wd_teff_min <= 20000.0, "between 2000 and 20000 K"),
            ("subdwarf_depth", 0.0 <= self.subdwarf_depth <= 5.0, "between 0 and 5 dex"),
            ("hb_height", 0.0 <= self.hb_height <= 1.5, "between 0 and 1.5 dex"),
            ("hb_depth", 0.0 <= self.hb_depth <= 0.5, "between 0 and 0.5 dex"),
            ("hb_teff_max", 5000.0 <= self.hb_teff_max <= 50000.0, "between 5000 and 50000 K"),
            ("wd_hot_tolerance", 0.0 <= self.wd_hot_tolerance <= 1.5, "between 0 and 1.5 dex"),
            ("pms_logl_max", -1.0 <= self.pms_logl_max <= 4.0, "between -1 and 4 dex"),
            ("pms_rgb_margin", 0.0 <= self.pms_rgb_margin <= 0.2, "between 0 and 0.2 dex"),
            ("pms_hayashi_logt", 0.0 <= self.pms_hayashi_logt <= 0.3, "between 0 and 0.3 dex"),
            ("young_prior", 0.0 <= self.young_prior <= 1.0, "between 0 and 1"),
            ("n_mass", 50 <= int(self.n_mass) <= 5000, "between 50 and 5000"),
        ]
        if self.supergiant_mass is not None:
            checks.append(("supergiant_mass", 2.0 <= float(self.supergiant_mass) <= 60.0, "between 2 and 60 Msun"))
        lo, hi = self.hot_subdwarf_teff
        checks.append(("hot_subdwarf_teff", 8000.0 <= lo < hi <= 100000.0, "(low, high) with 8000 <= low < high <= 1e5 K"))
        for name, ok, what in checks:
            if not ok:
                raise HrstageInputError(f"stage parameter {name}={getattr(self, name)!r}: expected {what}")
        object.__setattr__(self, "hot_subdwarf_teff", (float(lo), float(hi)))

    @classmethod
    def names(cls) -> tuple[str, ...]:
        """Names of all parameters."""
        return tuple(f.name for f in fields(cls))

    @classmethod
    def from_kwargs(cls, **kwargs) -> "StageParams":
        """Build from keyword arguments, with a one-line error for an unknown name."""
        unknown = sorted(set(kwargs) - set(cls.names()))
        if unknown:
            raise HrstageInputError(
                f"unknown stage parameter(s) {', '.join(unknown)}; known: {', '.join(cls.names())}"
            )
        return cls(**kwargs)

    def as_dict(self) -> dict:
        """Plain dict of the values (for table metadata)."""
        d = asdict(self)
        d["hot_subdwarf_teff"] = list(self.hot_subdwarf_teff)
        return d
