"""Column profiles: detection by name, unit and UCD; explicit mapping; the 'nothing fits' message.

Column names of real catalogues are checked on the headers of the external validation files
(SOURCES.md: Hipparcos new reduction, van Leeuwen 2007 + ESA 1997; APOKASC-3, Pinsonneault et al.
2025; Gaia EDR3 white dwarfs, Gentile Fusillo et al. 2021) and on the Gaia DR3 ``gaia_source`` data
model names (an open standard of the trade).
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.table import Table

from hrstage.catalog import detect_profile
from hrstage.catalog.profiles import ColumnInfo, normalise
from hrstage.errors import HrstageInputError


def cols(*names):
    return Table({n: [1.0] for n in names})


def test_direct_needs_no_options():
    m = detect_profile(cols("teff", "lum", "feh", "teff_err", "lum_err"))
    assert m.profile == "direct"
    assert m.roles == {"teff": "teff", "teff_err": "teff_err", "lum": "lum", "lum_err": "lum_err", "feh": "feh"}
    assert m.routes[0] == "teff_lum"


def test_gaia_dr3_names():
    # Gaia DR3 gaia_source / astrophysical_parameters column names (ESA data model)
    m = detect_profile(cols("source_id", "phot_g_mean_mag", "bp_rp", "parallax", "parallax_error",
                            "teff_gspphot", "logg_gspphot", "mh_gspphot", "ag_gspphot", "ebpminrp_gspphot"))
    assert m.profile == "gaia"
    assert m.roles["g"] == "phot_g_mean_mag" and m.roles["parallax_err"] == "parallax_error"
    assert m.roles["a_g"] == "ag_gspphot" and m.roles["e_bp_rp"] == "ebpminrp_gspphot"
    assert m.routes[0] == "gaia"


def test_hipparcos_header(validation_file):
    # bright_stars_hip.csv: hip, plx_mas, e_plx_mas, vmag, sptype, b_v, hd, hr (SOURCES.md)
    header = validation_file("bright_stars_hip.csv").read_text().splitlines()[0].split(",")
    m = detect_profile([ColumnInfo(n) for n in header])
    assert m.profile == "johnson"
    assert m.roles["v"] == "vmag" and m.roles["b_v"] == "b_v"
    assert m.roles["parallax"] == "plx_mas" and m.roles["parallax_err"] == "e_plx_mas"
    assert m.roles["sptype"] == "sptype" and m.roles["id"] == "hip"


def test_apokasc_header(validation_file):
    # APOKASC-3 Table 4: Teff, S_Teff, Radius, S_Radius, [Fe/H], Mass (Pinsonneault et al. 2025)
    header = validation_file("apokasc3_gold_apoor_rgb_rc.csv").read_text().splitlines()[0].split(",")
    m = detect_profile([ColumnInfo(n) for n in header])
    assert m.profile == "direct"
    assert m.roles["teff"] == "Teff" and m.roles["teff_err"] == "S_Teff"
    assert m.roles["radius"] == "Radius" and m.roles["radius_err"] == "S_Radius"
    assert m.roles["feh"] == "[Fe/H]" and m.roles["mass"] == "Mass"
    assert m.routes[0] == "teff_radius"


def test_gaia_white_dwarf_header(validation_file):
    # Gentile Fusillo et al. 2021 (VizieR names Plx, Gmag, BPmag, RPmag): BP and RP give BP-RP
    header = validation_file("gaia_white_dwarfs.csv").read_text().splitlines()[0].split(",")
    m = detect_profile([ColumnInfo(n) for n in header if n])
    assert m.profile == "gaia"
    assert (m.roles["g"], m.roles["bp"], m.roles["rp"], m.roles["parallax"]) == ("Gmag", "BPmag", "RPmag", "Plx")
    # ... and the Bailer-Jones et al. 2021 geometric distance with its 16th/84th percentiles (VizieR
    # names rgeo, b_rgeo, B_rgeo: the bounds differ only by the case of b_/B_)
    assert (m.roles["distance"], m.roles["distance_lo"], m.roles["distance_hi"]) == ("rgeo", "b_rgeo", "B_rgeo")


def test_distance_columns_by_name_unit_and_explicit():
    # Gaia archive names of the same distances (external.gaiaedr3_distance: r_med_geo, r_lo_geo, r_hi_geo)
    m = detect_profile([ColumnInfo("phot_g_mean_mag"), ColumnInfo("bp_rp"), ColumnInfo("r_med_photogeo", "pc"),
                        ColumnInfo("r_lo_photogeo", "pc"), ColumnInfo("r_hi_photogeo", "pc")])
    assert m.profile == "gaia" and m.routes[0] == "gaia"
    assert (m.roles["distance"], m.roles["distance_lo"], m.roles["distance_hi"]) == \
        ("r_med_photogeo", "r_lo_photogeo", "r_hi_photogeo")
    # a cross-match separation called "dist" in arcsec is not a distance
    m = detect_profile([ColumnInfo("gmag"), ColumnInfo("bp_rp"), ColumnInfo("plx"), ColumnInfo("dist", "arcsec")])
    assert "distance" not in m.roles
    # the UCD pos.distance and an explicit --col
    m = detect_profile([ColumnInfo("vmag"), ColumnInfo("b_v"), ColumnInfo("d_bj", "kpc", "pos.distance")])
    assert m.profile == "johnson" and m.roles["distance"] == "d_bj"
    m = detect_profile([ColumnInfo("vmag"), ColumnInfo("b_v"), ColumnInfo("my_d")], explicit={"distance": "my_d"})
    assert m.roles["distance"] == "my_d" and "johnson" in m.routes


def test_spectroscopic_and_normalised_names():
    assert normalise("[Fe/H]") == "feh" and normalise("BP-RP") == "bprp"
    m = detect_profile(cols("TEFF", "LOGG", "FE_H", "E_TEFF"))
    assert m.profile == "spectroscopic"
    assert m.roles == {"teff": "TEFF", "teff_err": "E_TEFF", "logg": "LOGG", "feh": "FE_H"}


def test_log_unit_makes_log_role():
    t = cols("teff", "lum")
    t["lum"].unit = "dex(solLum)"
    m = detect_profile(t)
    assert m.roles["logl"] == "lum" and "lum" not in m.roles
    assert m.notes


def test_ucd_fallback():
    # IVOA UCD1+ words phys.temperature.effective and phys.luminosity (UCD list v1.6)
    t = cols("T_e", "Lbolo")
    t["T_e"].meta["ucd"] = "phys.temperature.effective"
    t["Lbolo"].meta["ucd"] = "phys.luminosity"
    m = detect_profile(t)
    assert m.roles["teff"] == "T_e" and m.roles["lum"] == "Lbolo"


def test_explicit_mapping_overrides_and_checks():
    t = cols("teff", "lum", "T2", "L2")
    m = detect_profile(t, explicit={"teff": "T2", "lum": "l2"})      # case-insensitive fallback
    assert m.roles["teff"] == "T2" and m.roles["lum"] == "L2"
    assert "T2" not in [c for r, c in m.roles.items() if r != "teff"]
    with pytest.raises(HrstageInputError, match="'TX' given for role teff is not in the table"):
        detect_profile(t, explicit={"teff": "TX"})
    with pytest.raises(HrstageInputError, match="unknown role 'temperature'"):
        detect_profile(t, explicit={"temperature": "teff"})


def test_forced_profile_and_none():
    t = cols("a", "b", "phot_g_mean_mag", "bp_rp", "parallax", "teff", "lum")
    assert detect_profile(t, profile="gaia").profile == "gaia"
    m = detect_profile(t, profile="none", explicit={"teff": "a", "logl": "b"})
    assert m.roles == {"teff": "a", "logl": "b"} and m.routes == ("teff_lum",)
    with pytest.raises(HrstageInputError, match="unknown profile"):
        detect_profile(t, profile="2mass")


def test_nothing_fits_lists_found_and_missing():
    with pytest.raises(HrstageInputError) as info:
        detect_profile(cols("ra", "dec", "teff", "phot_g_mean_mag"), source="targets.csv")
    text = str(info.value)
    assert "\n" not in text
    assert "targets.csv" in text and "columns: ra, dec, teff, phot_g_mean_mag" in text
    assert "teff=teff" in text and "g=phot_g_mean_mag" in text
    assert "direct lacks lum|logl" in text and "bp_rp|bp&rp + parallax" in text
    assert "--col ROLE=NAME" in text
