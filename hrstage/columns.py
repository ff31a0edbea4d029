"""The columns hrstage adds to a catalogue: names, units, descriptions and UCDs.

One table of truth for the classifier (which fills them), the catalogue writer (which attaches
units / descriptions / UCDs) and the plot and report faces (which read them). UCDs come from
the IVOA UCD1+ vocabulary where one fits; ``None`` where none does.

Probabilities, masses, errors, the correlation and the [Fe/H] used are single precision (7
significant digits: finer than the Monte Carlo resolution 1/n_draws and than the relations'
accuracy), which halves their share of the output; Teff and log L used stay double precision.
"""

from __future__ import annotations

from dataclasses import dataclass

from .stages import STAGES


@dataclass(frozen=True)
class OutputColumn:
    name: str
    dtype: str          # numpy dtype string ("f8", "f4", "i8", "U", "O" for text)
    unit: str | None
    description: str
    ucd: str | None


_COLUMNS = [
    OutputColumn("stage", "U", None, "Evolutionary stage from the HR position (indicative)", "src.class"),
    OutputColumn("stage_prob", "f4", None, "Probability of the assigned stage (Monte Carlo over the errors)", "stat.probability"),
    *[
        OutputColumn(f"prob_{s}", "f4", None, f"Probability that the star is {s.replace('_', ' ')}", "stat.probability")
        for s in STAGES
    ],
    # giant branch (hrstage.branches); not_giant for the other stages
    OutputColumn("branch", "U", None, "Giant branch: red giant branch, red clump, horizontal branch, blue loop, early / thermally pulsing AGB, post-AGB (needs log g), unresolved (indicative)", "src.class"),
    OutputColumn("branch_prob", "f4", None, "Probability of the named branch's phase (hypotheses weighed over a Kroupa-IMF, constant-star-formation population)", "stat.probability"),
    *[
        OutputColumn(f"prob_{h}", "f4", None, f"Probability that the giant is {w}", "stat.probability")
        for h, w in (("rgb", "on the first-ascent red giant branch"), ("core_he", "core-helium burning (clump / horizontal branch)"),
                     ("agb", "on the asymptotic giant branch"))
    ],
    OutputColumn("mass_est", "f4", "solMass", "Mass estimate from the stellar relations (initial mass; current mass for core-He burners and from g R^2/G)", "phys.mass"),
    OutputColumn("mass_err", "f4", "solMass", "Uncertainty of mass_est (first-order propagation of the log Teff and log L errors)", "stat.error;phys.mass"),
    OutputColumn("mass_method", "U", None, "How mass_est was obtained", "meta.code"),
    OutputColumn("mass_ms_teff", "f4", "solMass", "Main-sequence mass implied by Teff", "phys.mass"),
    OutputColumn("mass_ms_lum", "f4", "solMass", "Main-sequence mass implied by the luminosity", "phys.mass"),
    OutputColumn("teff_used", "f8", "K", "Effective temperature used for the classification", "phys.temperature.effective"),
    OutputColumn("logl_used", "f8", "dex(solLum)", "log10 luminosity used for the classification", "phys.luminosity"),
    OutputColumn("logt_err", "f4", "dex", "1-sigma error of log10 Teff", "stat.error;phys.temperature.effective"),
    OutputColumn("logl_err", "f4", "dex", "1-sigma error of log10 L", "stat.error;phys.luminosity"),
    OutputColumn("logt_logl_corr", "f4", None, "Correlation coefficient of the log Teff and log L errors", "stat.correlation"),
    OutputColumn("hr_source", "U", None, "Where Teff and L came from (input path and relations used)", "meta.note"),
    OutputColumn("feh_used", "f4", None, "[Fe/H] used for the stage map", "phys.abund.Z"),
    OutputColumn("flags", "i8", None, "Flag bits (see hrstage.flags)", "meta.code.qual"),
    OutputColumn("flag_text", "U", None, "Readable reasons behind the flags, in words (the numbers are in the other columns)", "meta.note"),
    # on request only (named in add_columns): one text per flagged star, bulky and slow on big catalogues
    OutputColumn("flag_detail", "U", None, "The reasons of flag_text with the star's own numbers", "meta.note"),
    # MK spectral-type check (layer 4); present only when an MK type column is given
    OutputColumn("sptype_parsed", "U", None, "Normalised reading of the catalogued MK type", "src.spType"),
    OutputColumn("sptype_lumclass", "U", None, "Luminosity class read from the MK type", "src.spType"),
    OutputColumn("sptype_stage", "U", None, "Stage implied by the catalogued luminosity class", "src.class"),
    OutputColumn("sptype_verdict", "U", None, "Consistency of the MK type with the HR position", "meta.code.qual"),
    OutputColumn("sptype_suggested", "U", None, "Luminosity class the HR position suggests", "src.spType"),
    OutputColumn("sptype_nsigma", "f8", None, "Disagreement in units of the calibration scatter", "stat.value"),
    OutputColumn("sptype_reason", "U", None, "Basis of the MK-type verdict (calibration or stage check, expected vs HR stage)", "meta.note"),
]

COLUMNS = {c.name: c for c in _COLUMNS}
#: Columns written only when asked for by name (``add_columns="all,flag_detail"``).
ON_REQUEST_COLUMNS = ("flag_detail",)
CLASSIFY_COLUMNS = tuple(c.name for c in _COLUMNS if not c.name.startswith("sptype_") and c.name not in ON_REQUEST_COLUMNS)
SPTYPE_COLUMNS = tuple(c.name for c in _COLUMNS if c.name.startswith("sptype_"))
