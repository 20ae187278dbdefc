#!/usr/bin/env python3
"""Regenerate ``data/species.yaml``, the eqdesign species database.

Run from anywhere::

    python data/build_species.py            # writes data/species.yaml and species.json beside it
    python data/build_species.py --check    # exit 1 if a file on disk differs

Inputs (read locally, no network):

* the NASA 7-coefficient polynomials of B. J. McBride, S. Gordon, M. A. Reno,
  *Coefficients for Calculating Thermodynamic and Transport Properties of Individual
  Species*, NASA TM-4513 (1993), as shipped in the data folder of the ``cantera``
  package (``nasa_gas.yaml``, ``nasa_condensed.yaml``);
* critical constants from the ``critical-properties.yaml`` file in the same folder,
  and, for species that file lacks, values recalled from B. E. Poling,
  J. M. Prausnitz, J. P. O'Connell, *The Properties of Gases and Liquids*, 5th ed.
  (2001), Appendix A (from memory, marked as such in the output);
* molar masses from the IUPAC 2021 standard atomic weights (table below).

The species we carry, their names, phases and the NASA record each one comes from
are listed explicitly in ``GAS_SPECIES`` and ``CONDENSED_SPECIES``. The script checks
every record it writes (composition against its formula, 7 coefficients per range,
increasing temperature bounds, unique names and aliases) and fails loudly otherwise.
Output is deterministic: running it twice gives byte-identical files.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import re
import sys
from decimal import Decimal

import yaml

SCHEMA = "eqdesign.species/1"

# ---------------------------------------------------------------------------------
# References. Every number written to species.yaml points at one of these keys.
# ---------------------------------------------------------------------------------
REF_NASA = "TM4513"
REF_ATOMIC_WEIGHTS = "IUPAC2021"
REF_CRIT_FILE = "CANTERA_CRITPROPS"
REF_POLING = "POLING2001"
REF_WUSTITE = "FEO_RANGE"

REFERENCES = {
    REF_NASA: {
        "cite": (
            "B. J. McBride, S. Gordon, M. A. Reno, Coefficients for Calculating "
            "Thermodynamic and Transport Properties of Individual Species, NASA TM-4513, "
            "NASA Langley (1993). https://ntrs.nasa.gov/citations/19940013151"
        ),
        "note": (
            "Polynomials taken from the files nasa_gas.yaml and nasa_condensed.yaml "
            "bundled with the cantera package (converted there from the NASA thermo.dat "
            "text); data_note repeats each record's provenance note as it stands there."
        ),
        "standard_pressure_Pa": 100000.0,
    },
    REF_ATOMIC_WEIGHTS: {
        "cite": (
            "T. Prohaska et al., Standard atomic weights of the elements 2021 (IUPAC "
            "Technical Report), Pure Appl. Chem. 94, 573-600 (2022). "
            "https://doi.org/10.1515/pac-2019-0603 (citation details from memory)"
        ),
        "note": (
            "Abridged/conventional values are used where the standard atomic weight is "
            "an interval (H, Li, B, C, N, O, Mg, Si, S, Cl, Ar, Br). The values were "
            "recalled from memory and checked equal to the element table built into "
            "cantera 3.2. D (deuterium) is the atomic mass of 2H from the CODATA 2018 "
            "recommended values (from memory)."
        ),
    },
    REF_CRIT_FILE: {
        "cite": (
            "Critical constants as compiled in the critical-properties file bundled with "
            "cantera 3.x (critical-properties.yaml; initial compilation by C. Karakaya "
            "from various sources), whose stated sources include E. W. Lemmon, I. H. Bell, "
            "M. L. Huber, M. O. McLinden, Thermophysical Properties of Fluid Systems, in "
            "NIST Chemistry WebBook, NIST Standard Reference Database 69 (2022), "
            "https://doi.org/10.18434/T4D303, and C. L. Yaws, Matheson Gas Data Book, "
            "7th ed., McGraw-Hill (2001), ISBN 978-0-07-135854-5"
        ),
        "note": (
            "Per-entry notes in that file: the H2 row is attributed to Poling et al., "
            "5th ed.; the O2 and N2 acentric factors were computed from the Lemmon et al. "
            "(2022) saturation data; the CO2 acentric factor is from Yaws (2001)."
        ),
    },
    REF_POLING: {
        "cite": (
            "B. E. Poling, J. M. Prausnitz, J. P. O'Connell, The Properties of Gases and "
            "Liquids, 5th ed., McGraw-Hill, New York (2001), Appendix A "
            "(values from memory)"
        ),
        "note": (
            "Used for species absent from the cantera critical-properties file, and for "
            "styrene and 2-propanol, whose entries there disagree with the established "
            "critical temperature (styrene) and pressure (2-propanol)."
        ),
    },
    REF_WUSTITE: {
        "cite": (
            "M. W. Chase Jr., NIST-JANAF Thermochemical Tables, 4th ed., J. Phys. Chem. "
            "Ref. Data, Monograph 9 (1998), which tabulates wustite as Fe0.947O(s); "
            "L. S. Darken, R. W. Gurry, The System Iron-Oxygen. I. The Wustite Field and "
            "Related Equilibria, J. Am. Chem. Soc. 67, 1398 (1945) (citation from memory)"
        ),
        "note": (
            "Wustite is unstable below the Fe-FeO-Fe3O4 eutectoid, about 570 degC (843 K; "
            "value from memory, as shown on any Fe-O phase diagram). The TM-4513 FeO(s) "
            "record is stoichiometric FeO, not Fe0.947O, and with it wustite would appear "
            "stable down to about 450 K. No Fe0.947O record is bundled with cantera, so "
            "the FeO(s) polynomial is kept but its lower bound is raised to 843 K. The "
            "polynomial itself is the TM-4513 one, on its 1 bar standard state."
        ),
        "standard_pressure_Pa": 100000.0,
    },
}

# Lower bounds raised above the NASA record's own: our name -> (T_min [K], reference key).
RANGE_LIMITS = {"FeO(s)": (843.0, REF_WUSTITE)}

# IUPAC 2021 standard atomic weights [g/mol]; conventional values for interval
# elements. Kept as strings so that molar masses are summed exactly.
ATOMIC_WEIGHTS = {
    "H": "1.008",
    "He": "4.002602",
    "C": "12.011",
    "N": "14.007",
    "O": "15.999",
    "Ne": "20.1797",
    "Na": "22.98976928",
    "Mg": "24.305",
    "Al": "26.9815384",
    "Si": "28.085",
    "S": "32.06",
    "Cl": "35.45",
    "Ar": "39.95",
    "Ca": "40.078",
    "Fe": "55.845",
    "Ni": "58.6934",
    "Cu": "63.546",
    "Kr": "83.798",
    "Xe": "131.293",
    # elements of the species taken over without a curated row (see AUTO below)
    "D": "2.01410177812",
    "Li": "6.94",
    "Be": "9.0121831",
    "B": "10.81",
    "F": "18.998403162",
    "P": "30.973761998",
    "K": "39.0983",
    "Ti": "47.867",
    "V": "50.9415",
    "Cr": "51.9961",
    "Zn": "65.38",
    "Br": "79.904",
    "Sr": "87.62",
    "Zr": "91.224",
    "Nb": "92.90637",
    "Mo": "95.95",
    "I": "126.90447",
    "Cs": "132.90545196",
    "Ba": "137.327",
    "Ta": "180.94788",
    "Hg": "200.592",
    "Pb": "207.2",
}


# ---------------------------------------------------------------------------------
# Critical constants.
# ---------------------------------------------------------------------------------
def from_file(key, descriptive_name):
    """Critical constants taken from cantera's critical-properties.yaml.

    key : str  the entry's ``name`` in that file
    descriptive_name : str  its ``descriptive-name``, checked to catch a wrong match
    """
    return ("file", key, descriptive_name)


def poling(Tc, Pc_bar, omega):
    """Critical constants recalled from Poling et al. (2001), Appendix A (from memory).

    Tc : str  critical temperature [K]
    Pc_bar : str  critical pressure [bar]
    omega : str  acentric factor [-]
    """
    return ("poling", Tc, Pc_bar, omega)


# ---------------------------------------------------------------------------------
# The species table: our name, NASA record name, formula, common name, aliases,
# critical constants (or None). Group order is set by GROUPS below; within a group,
# species keep the order given here.
# ---------------------------------------------------------------------------------
GAS_SPECIES = [
    # --- permanent gases ---
    ("H2", "H2", "H2", "hydrogen", ["hydrogen"], from_file("H2", "hydrogen")),
    ("N2", "N2", "N2", "nitrogen", ["nitrogen"], from_file("N2", "nitrogen")),
    ("O2", "O2", "O2", "oxygen", ["oxygen"], from_file("O2", "oxygen")),
    ("Ar", "Ar", "Ar", "argon", ["argon"], poling("150.86", "48.98", "-0.002")),
    ("He", "He", "He", "helium", ["helium"], poling("5.19", "2.27", "-0.390")),
    ("Ne", "Ne", "Ne", "neon", ["neon"], poling("44.40", "26.53", "-0.038")),
    ("Kr", "Kr", "Kr", "krypton", ["krypton"], poling("209.35", "55.02", "-0.001")),
    ("Xe", "Xe", "Xe", "xenon", ["xenon"], poling("289.74", "58.40", "0.008")),
    # --- C-H-O: water, carbon oxides, hydrocarbons ---
    ("H2O", "H2O", "H2O", "water", ["water", "steam"], poling("647.14", "220.64", "0.344")),
    ("CO", "CO", "CO", "carbon monoxide", ["carbon monoxide"],
     from_file("CO", "carbon-monoxide")),
    ("CO2", "CO2", "CO2", "carbon dioxide", ["carbon dioxide"],
     from_file("CO2", "carbon-dioxide")),
    ("CH4", "CH4", "CH4", "methane", ["methane"], from_file("CH4", "methane")),
    ("C2H6", "C2H6", "C2H6", "ethane", ["ethane"], from_file("C2H6", "ethane")),
    ("C3H8", "C3H8", "C3H8", "propane", ["propane"], from_file("C3H8", "propane")),
    ("n-C4H10", "C4H10,n-butane", "C4H10", "n-butane", ["n-butane", "butane"],
     from_file("C4H10", "butane")),
    ("i-C4H10", "C4H10,isobutane", "C4H10", "isobutane", ["isobutane", "2-methylpropane"],
     from_file("C4H10-1", "2-methylpropane(isobutane)")),
    ("n-C5H12", "C5H12,n-pentane", "C5H12", "n-pentane", ["n-pentane", "pentane"],
     from_file("C5H12", "pentane")),
    ("i-C5H12", "C5H12,i-pentane", "C5H12", "isopentane", ["isopentane", "2-methylbutane"],
     from_file("C5H12-1", "2-methylbutane(isopentane)")),
    ("neo-C5H12", "CH3C(CH3)2CH3", "C5H12", "neopentane",
     ["neopentane", "2,2-dimethylpropane"], from_file("C5H12-2", "2,2-dimethypropane")),
    ("n-C7H16", "C7H16,n-heptane", "C7H16", "n-heptane", ["n-heptane", "heptane"],
     from_file("C7H16", "heptane")),
    ("n-C8H18", "C8H18,n-octane", "C8H18", "n-octane", ["n-octane", "octane"],
     from_file("C8H18", "octane")),
    ("i-C8H18", "C8H18,isooctane", "C8H18", "isooctane",
     ["isooctane", "2,2,4-trimethylpentane"], from_file("C8H18-14", "2,2,4-trimethylpentane")),
    ("C2H4", "C2H4", "C2H4", "ethylene", ["ethylene", "ethene"], from_file("C2H4", "ethylene")),
    ("C3H6", "C3H6,propylene", "C3H6", "propylene", ["propylene", "propene"],
     from_file("C3H6", "propene")),
    ("1-C4H8", "C4H8,1-butene", "C4H8", "1-butene", ["1-butene"],
     from_file("C4H8", "1-butene")),
    ("cis-2-C4H8", "C4H8,cis2-buten", "C4H8", "cis-2-butene", ["cis-2-butene"],
     from_file("C4H8-1", "2-butene,cis")),
    ("trans-2-C4H8", "C4H8,tr2-butene", "C4H8", "trans-2-butene", ["trans-2-butene"],
     from_file("C4H8-2", "2-butene,trans")),
    ("i-C4H8", "C4H8,isobutene", "C4H8", "isobutene",
     ["isobutene", "isobutylene", "2-methylpropene"], from_file("C4H8-3", "2-methylpropene")),
    ("1-C5H10", "C5H10,1-pentene", "C5H10", "1-pentene", ["1-pentene"],
     from_file("C5H10", "1-pentene")),
    ("1-C6H12", "C6H12,1-hexene", "C6H12", "1-hexene", ["1-hexene"],
     from_file("C6H12", "1-hexene")),
    ("C4H6", "C4H6,butadiene", "C4H6", "1,3-butadiene", ["1,3-butadiene", "butadiene"],
     from_file("C4H6-1", "1,3-butadiene")),
    ("C2H2", "C2H2,acetylene", "C2H2", "acetylene", ["acetylene", "ethyne"],
     from_file("C2H2", "acetylene(ethyne)")),
    ("p-C3H4", "C3H4,propyne", "C3H4", "propyne", ["propyne", "methylacetylene"],
     from_file("C3H4-1", "propyne(methylacetylene)")),
    ("a-C3H4", "C3H4,allene", "C3H4", "allene", ["allene", "propadiene"],
     from_file("C3H4", "allene(propadiene)")),
    ("c-C3H6", "C3H6,cyclo-", "C3H6", "cyclopropane", ["cyclopropane"],
     from_file("C3H6-1", "cyclopropane")),
    ("c-C5H10", "C5H10,cyclo-", "C5H10", "cyclopentane", ["cyclopentane"],
     from_file("C5H10-6", "cyclopentane")),
    ("c-C6H12", "C6H12,cyclo-", "C6H12", "cyclohexane", ["cyclohexane"],
     from_file("C6H12-17", "cyclohexane")),
    ("C6H6", "C6H6", "C6H6", "benzene", ["benzene"], from_file("C6H6", "benzene")),
    ("C7H8", "C7H8", "C7H8", "toluene", ["toluene"], from_file("C7H8", "toluene")),
    ("C8H10", "C8H10,ethylbenz", "C8H10", "ethylbenzene", ["ethylbenzene"],
     from_file("C8H10", "ethylbenzene")),
    ("C8H8", "C8H8,styrene", "C8H8", "styrene", ["styrene"],
     poling("636.0", "38.4", "0.297")),
    ("C10H8", "C10H8,naphthale", "C10H8", "naphthalene", ["naphthalene"],
     from_file("C10H8", "naphthalene")),
    # --- C-H-O: oxygenates ---
    ("CH3OH", "CH3OH", "CH3OH", "methanol", ["methanol"], from_file("CH4O", "methanol")),
    ("C2H5OH", "C2H5OH", "C2H5OH", "ethanol", ["ethanol"],
     from_file("C2H6O-1", "ethyl-alcohol")),
    ("n-C3H7OH", "C3H8O,1propanol", "C3H7OH", "1-propanol", ["1-propanol", "n-propanol"],
     from_file("C3H8O-1", "propyl-alcohol")),
    ("i-C3H7OH", "C3H8O,2propanol", "C3H7OH", "2-propanol",
     ["2-propanol", "isopropanol", "isopropyl alcohol"], poling("508.3", "47.62", "0.665")),
    ("CH3OCH3", "CH3OCH3", "CH3OCH3", "dimethyl ether", ["dimethyl ether", "dme"],
     from_file("C2H6O", "methyl-ether")),
    ("HCHO", "HCHO,formaldehy", "HCHO", "formaldehyde", ["formaldehyde"],
     from_file("CH2O", "formaldehyde")),
    ("CH3CHO", "CH3CHO,ethanal", "CH3CHO", "acetaldehyde", ["acetaldehyde", "ethanal"],
     from_file("C2H4O-1", "acetaldehyde")),
    ("HCOOH", "HCOOH", "HCOOH", "formic acid", ["formic acid"],
     from_file("CH2O2", "formic-acid")),
    ("CH3COOH", "CH3COOH", "CH3COOH", "acetic acid", ["acetic acid"],
     from_file("C2H4O2", "acetic-acid")),
    ("CH2CO", "CH2CO,ketene", "CH2CO", "ketene", ["ketene"], from_file("C2H2O", "ketene")),
    ("c-C2H4O", "C2H4O,ethylen", "C2H4O", "ethylene oxide", ["ethylene oxide", "oxirane"],
     from_file("C2H4O", "ethylene-oxide")),
    ("C6H5OH", "C6H5OH,phenol", "C6H5OH", "phenol", ["phenol"], from_file("C6H6O", "phenol")),
    ("H2O2", "H2O2", "H2O2", "hydrogen peroxide", ["hydrogen peroxide"], None),
    ("O3", "O3", "O3", "ozone", ["ozone"], None),
    # --- C-H-O: atoms and radicals (high temperature) ---
    ("H", "H", "H", "atomic hydrogen", [], None),
    ("O", "O", "O", "atomic oxygen", [], None),
    ("OH", "OH", "OH", "hydroxyl radical", [], None),
    ("HO2", "HO2", "HO2", "hydroperoxyl radical", [], None),
    ("C(g)", "C", "C", "atomic carbon (gas)", ["carbon vapour", "carbon vapor"], None),
    ("C2", "C2", "C2", "diatomic carbon", [], None),
    ("CH", "CH", "CH", "methylidyne radical", [], None),
    ("CH2", "CH2", "CH2", "methylene radical", [], None),
    ("CH3", "CH3", "CH3", "methyl radical", [], None),
    ("C2H", "C2H", "C2H", "ethynyl radical", [], None),
    ("C2H3", "C2H3,vinyl", "C2H3", "vinyl radical", [], None),
    ("C2H5", "C2H5", "C2H5", "ethyl radical", [], None),
    ("HCO", "HCO", "HCO", "formyl radical", [], None),
    ("CH3O", "CH3O", "CH3O", "methoxy radical", [], None),
    ("CH2OH", "CH2OH", "CH2OH", "hydroxymethyl radical", [], None),
    # --- N ---
    ("NH3", "NH3", "NH3", "ammonia", ["ammonia"], poling("405.40", "113.53", "0.257")),
    ("NO", "NO", "NO", "nitric oxide", ["nitric oxide", "nitrogen monoxide"],
     poling("180.15", "64.80", "0.583")),
    ("NO2", "NO2", "NO2", "nitrogen dioxide", ["nitrogen dioxide"],
     poling("431.35", "101.33", "0.851")),
    ("N2O", "N2O", "N2O", "nitrous oxide", ["nitrous oxide", "dinitrogen monoxide"],
     poling("309.57", "72.45", "0.142")),
    ("N2O3", "N2O3", "N2O3", "dinitrogen trioxide", ["dinitrogen trioxide"], None),
    ("N2O4", "N2O4", "N2O4", "dinitrogen tetroxide", ["dinitrogen tetroxide"], None),
    ("N2O5", "N2O5", "N2O5", "dinitrogen pentoxide", ["dinitrogen pentoxide"], None),
    ("HNO3", "HNO3", "HNO3", "nitric acid", ["nitric acid"], None),
    ("HNO2", "HNO2", "HNO2", "nitrous acid", ["nitrous acid"], None),
    ("N2H4", "N2H4", "N2H4", "hydrazine", ["hydrazine"], None),
    ("NH2OH", "NH2OH", "NH2OH", "hydroxylamine", ["hydroxylamine"], None),
    ("HCN", "HCN", "HCN", "hydrogen cyanide", ["hydrogen cyanide"],
     poling("456.65", "53.90", "0.410")),
    ("HNCO", "HNCO", "HNCO", "isocyanic acid", ["isocyanic acid"], None),
    ("CH3CN", "CH3CN", "CH3CN", "acetonitrile", ["acetonitrile"],
     from_file("C2H3N", "acetonitrile")),
    ("C2N2", "C2N2", "C2N2", "cyanogen", ["cyanogen"], from_file("C2N2", "cyanogen")),
    ("N", "N", "N", "atomic nitrogen", [], None),
    ("NH", "NH", "NH", "imidogen radical", [], None),
    ("NH2", "NH2", "NH2", "amino radical", [], None),
    ("NO3", "NO3", "NO3", "nitrate radical", [], None),
    ("HNO", "HNO", "HNO", "nitroxyl", [], None),
    ("CN", "CN", "CN", "cyano radical", [], None),
    ("NCO", "NCO", "NCO", "isocyanate radical", [], None),
    # --- S ---
    ("SO2", "SO2", "SO2", "sulfur dioxide", ["sulfur dioxide"],
     poling("430.75", "78.84", "0.245")),
    ("SO3", "SO3", "SO3", "sulfur trioxide", ["sulfur trioxide"],
     poling("490.90", "82.10", "0.424")),
    ("H2S", "H2S", "H2S", "hydrogen sulfide", ["hydrogen sulfide"],
     poling("373.40", "89.63", "0.090")),
    ("COS", "COS", "COS", "carbonyl sulfide", ["carbonyl sulfide"],
     from_file("COS", "carbonyl-sulfide")),
    ("CS2", "CS2", "CS2", "carbon disulfide", ["carbon disulfide"],
     from_file("CS2", "carbon-disulfide")),
    ("H2SO4", "H2SO4", "H2SO4", "sulfuric acid (vapour)", ["sulfuric acid vapour"], None),
    ("S2", "S2", "S2", "disulfur", ["disulfur"], None),
    ("S8", "S8", "S8", "octasulfur", ["octasulfur"], None),
    ("SO", "SO", "SO", "sulfur monoxide", ["sulfur monoxide"], None),
    ("S2O", "S2O", "S2O", "disulfur monoxide", ["disulfur monoxide"], None),
    ("S(g)", "S", "S", "atomic sulfur (gas)", ["sulfur vapour", "sulfur vapor"], None),
    ("SH", "SH", "SH", "sulfanyl radical", [], None),
    # --- Cl ---
    ("HCl", "HCL", "HCl", "hydrogen chloride", ["hydrogen chloride"],
     poling("324.65", "83.09", "0.131")),
    ("Cl2", "CL2", "Cl2", "chlorine", ["chlorine"], poling("417.15", "77.10", "0.069")),
    ("CH3Cl", "CH3CL", "CH3Cl", "chloromethane", ["chloromethane", "methyl chloride"],
     from_file("CH3CL", "chloromethane")),
    ("CH2Cl2", "CH2CL2", "CH2Cl2", "dichloromethane", ["dichloromethane"],
     from_file("CH2CL2", "dichloromethane")),
    ("CHCl3", "CHCL3", "CHCl3", "chloroform", ["chloroform", "trichloromethane"],
     from_file("CHCL3", "chloroform")),
    ("CCl4", "CCL4", "CCl4", "carbon tetrachloride", ["carbon tetrachloride"],
     from_file("CCL4", "carbon-tetrachloride")),
    ("COCl2", "COCL2", "COCl2", "phosgene", ["phosgene"], None),
    ("NOCl", "NOCL", "NOCl", "nitrosyl chloride", ["nitrosyl chloride"], None),
    ("SO2Cl2", "SO2CL2", "SO2Cl2", "sulfuryl chloride", ["sulfuryl chloride"], None),
    ("HOCl", "HOCL", "HOCl", "hypochlorous acid", ["hypochlorous acid"], None),
    ("Cl2O", "CL2O", "Cl2O", "dichlorine monoxide", ["dichlorine monoxide"], None),
    ("ClO2", "CLO2", "ClO2", "chlorine dioxide", ["chlorine dioxide"], None),
    ("Cl", "CL", "Cl", "atomic chlorine", [], None),
    ("ClO", "CLO", "ClO", "chlorine monoxide radical", [], None),
]

# Condensed species: (our name, NASA record name, formula, phase, common name, aliases).
CONDENSED_SPECIES = [
    ("C(gr)", "C(gr)", "C", "solid", "graphite", ["graphite"]),
    ("H2O(l)", "H2O(L)", "H2O", "liquid", "liquid water", ["liquid water"]),
    ("S(s)", "S(cr1)", "S", "solid", "orthorhombic sulfur",
     ["orthorhombic sulfur", "rhombic sulfur"]),
    ("S(l)", "S(L)", "S", "liquid", "liquid sulfur", ["liquid sulfur"]),
    ("CaCO3(s)", "CaCO3(caL)", "CaCO3", "solid", "calcite", ["calcite", "calcium carbonate"]),
    ("CaO(s)", "CaO(s)", "CaO", "solid", "lime", ["lime", "quicklime", "calcium oxide"]),
    ("Ca(OH)2(s)", "CaO2H2(s)", "Ca(OH)2", "solid", "calcium hydroxide",
     ["calcium hydroxide", "slaked lime", "portlandite"]),
    ("CaSO4(s)", "CaSO4(s)", "CaSO4", "solid", "anhydrite",
     ["anhydrite", "calcium sulfate"]),
    ("CaS(s)", "CaS(s)", "CaS", "solid", "calcium sulfide", ["calcium sulfide"]),
    ("Fe(s)", "Fe(a)", "Fe", "solid", "alpha iron", ["alpha iron", "iron"]),
    ("FeO(s)", "FeO(s)", "FeO", "solid", "wustite", ["wustite", "iron(ii) oxide"]),
    ("Fe2O3(s)", "Fe2O3(s)", "Fe2O3", "solid", "hematite", ["hematite", "iron(iii) oxide"]),
    ("Fe3O4(s)", "Fe3O4(s)", "Fe3O4", "solid", "magnetite", ["magnetite"]),
    ("FeS(s)", "FeS(a)", "FeS", "solid", "troilite (alpha iron sulfide)",
     ["troilite", "iron(ii) sulfide"]),
    ("FeS2(s)", "FeS2(s)", "FeS2", "solid", "pyrite", ["pyrite", "iron disulfide"]),
    ("NH4Cl(s)", "NH4CL(a)", "NH4Cl", "solid", "ammonium chloride",
     ["ammonium chloride", "sal ammoniac"]),
    ("MgO(s)", "MgO(s)", "MgO", "solid", "periclase", ["periclase", "magnesia"]),
    ("Mg(OH)2(s)", "MgO2H2(s)", "Mg(OH)2", "solid", "magnesium hydroxide",
     ["magnesium hydroxide", "brucite"]),
    ("MgCO3(s)", "MgCO3(s)", "MgCO3", "solid", "magnesite",
     ["magnesite", "magnesium carbonate"]),
    ("Ni(s)", "Ni(cr)", "Ni", "solid", "nickel", ["nickel"]),
    ("Cu(s)", "Cu(cr)", "Cu", "solid", "copper", ["copper"]),
    ("CuO(s)", "CuO(s)", "CuO", "solid", "tenorite", ["tenorite", "copper(ii) oxide"]),
    ("Cu2O(s)", "Cu2O(s)", "Cu2O", "solid", "cuprite", ["cuprite", "copper(i) oxide"]),
    ("SiO2(s)", "SiO2(Lqz)", "SiO2", "solid", "alpha quartz", ["alpha quartz", "quartz"]),
    ("Al2O3(s)", "AL2O3(a)", "Al2O3", "solid", "corundum",
     ["corundum", "alpha alumina", "alumina"]),
    ("NaCl(s)", "NaCL(s)", "NaCl", "solid", "halite", ["halite", "sodium chloride"]),
    ("C6H6(l)", "C6H6(L)", "C6H6", "liquid", "liquid benzene", ["liquid benzene"]),
    ("C7H8(l)", "C7H8(L)", "C7H8", "liquid", "liquid toluene", ["liquid toluene"]),
    ("H2SO4(l)", "H2SO4(L)", "H2SO4", "liquid", "sulfuric acid (liquid)",
     ["sulfuric acid"]),
    ("n-C8H18(l)", "C8H18(L),n-octa", "C8H18", "liquid", "liquid n-octane",
     ["liquid n-octane"]),
]

# Every other NASA record is taken over too (see auto_entries), except charged species
# (eqdesign has no electron element and no plasma chemistry) and the records below, whose
# enthalpy jumps at an internal range bound (a check every record written must pass).
LEFT_OUT = {
    "Li2O(s)": "h jumps by 335 J/mol at the 1000 K range bound",
    "ZnSO4(a)": "h jumps by 5.0 kJ/mol at the 540 K range bound",
}
MAX_JUMP_RT = 1e-3          # largest h step allowed at an internal range bound: 1e-3 RT + 5 J/mol
MAX_JUMP_J = 5.0

PERMANENT_GASES = {"H2", "N2", "O2", "Ar", "He", "Ne", "Kr", "Xe"}
GROUPS = ["permanent", "C-H-O", "N", "S", "Cl", "other elements", "condensed"]
CURATED_ELEMENTS = {"C", "H", "O", "N", "S", "Cl"}

CONVERTED_NOTE = "converted exactly from 9-coefficient form"


# ---------------------------------------------------------------------------------
# Reading cantera's bundled files.
# ---------------------------------------------------------------------------------
class _PlainLoader(yaml.SafeLoader):
    """SafeLoader without YAML 1.1 booleans, so that a species named NO stays 'NO'."""


_PlainLoader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:bool"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}


def cantera_data_dir():
    """Folder of data files bundled with the installed cantera package [path]."""
    import cantera

    return os.path.join(os.path.dirname(cantera.__file__), "data")


def load_yaml(path):
    """Parse a YAML file with ``_PlainLoader`` and return (document, sha256 hex)."""
    with open(path, "rb") as handle:
        raw = handle.read()
    return yaml.load(raw.decode("utf-8"), Loader=_PlainLoader), hashlib.sha256(raw).hexdigest()


def index_by_name(document, path):
    """Map species name -> record; fail on duplicate names."""
    out = {}
    for record in document["species"]:
        name = str(record["name"])
        if name in out:
            raise ValueError(f"{path}: duplicate species name {name!r}")
        out[name] = record
    return out


# ---------------------------------------------------------------------------------
# Conversions and checks.
# ---------------------------------------------------------------------------------
_TOKEN = re.compile(r"([A-Z][a-z]?)(\d*)|(\()|(\))(\d*)")


def parse_formula(formula):
    """Element counts of a formula such as ``Ca(OH)2`` -> {'Ca': 1, 'O': 2, 'H': 2}.

    Elements are listed in order of first appearance.
    """
    stack = [{}]
    pos = 0
    while pos < len(formula):
        match = _TOKEN.match(formula, pos)
        if not match:
            raise ValueError(f"cannot parse formula {formula!r} at {formula[pos:]!r}")
        element, count, opening, closing, group_count = match.groups()
        if element:
            counts = stack[-1]
            counts[element] = counts.get(element, 0) + int(count or 1)
        elif opening:
            stack.append({})
        else:
            inner = stack.pop()
            multiplier = int(group_count or 1)
            for el, n in inner.items():
                stack[-1][el] = stack[-1].get(el, 0) + n * multiplier
        pos = match.end()
    if len(stack) != 1:
        raise ValueError(f"unbalanced parentheses in {formula!r}")
    return stack[0]


def molar_mass(elements):
    """Molar mass [g/mol] from element counts, summed exactly in decimal."""
    total = sum(Decimal(ATOMIC_WEIGHTS[el]) * n for el, n in elements.items())
    return float(total)


def nasa7_rows(thermo, name):
    """Return (T_bounds, rows of 7 floats, converted?) from a cantera thermo block.

    NASA7 blocks are taken as they stand. NASA9 blocks whose first two coefficients
    are zero in every range are NASA7 exactly: (a3..a7, b1, b2) -> (a1..a5, a6, a7).
    Anything else raises ValueError.
    """
    model = thermo["model"]
    bounds = [float(t) for t in thermo["temperature-ranges"]]
    data = [[float(x) for x in row] for row in thermo["data"]]
    if model == "NASA7":
        rows, converted = data, False
    elif model == "NASA9":
        if any(row[0] != 0.0 or row[1] != 0.0 for row in data):
            raise ValueError(f"{name}: NASA9 record with T^-2 or T^-1 terms; not convertible")
        rows, converted = [row[2:9] for row in data], True
    else:
        raise ValueError(f"{name}: unknown thermo model {model!r}")
    if len(bounds) != len(rows) + 1:
        raise ValueError(f"{name}: {len(bounds)} bounds for {len(rows)} ranges")
    if any(b >= c for b, c in zip(bounds, bounds[1:])):
        raise ValueError(f"{name}: temperature bounds not increasing: {bounds}")
    if any(len(row) != 7 for row in rows):
        raise ValueError(f"{name}: expected 7 coefficients per range")
    return bounds, rows, converted


def check_continuity(name, bounds, rows):
    """Fail unless h steps by less than MAX_JUMP_RT * RT + MAX_JUMP_J at every internal bound."""
    for T, lower, upper in zip(bounds[1:-1], rows, rows[1:]):
        h_RT = [a[0] + a[1] * T / 2 + a[2] * T**2 / 3 + a[3] * T**3 / 4 + a[4] * T**4 / 5 + a[5] / T
                for a in (lower, upper)]
        if abs(h_RT[1] - h_RT[0]) > MAX_JUMP_RT + MAX_JUMP_J / (8.314462618 * T):
            raise ValueError(f"{name}: h/RT jumps by {h_RT[1] - h_RT[0]:.4g} at {T} K; add it to LEFT_OUT")


def check_composition(our_name, formula, nasa_record):
    """Fail unless the formula's elements equal the NASA record's composition."""
    from_formula = parse_formula(formula)
    nasa = {str(k): int(v) for k, v in nasa_record["composition"].items()}
    if from_formula != nasa:
        raise ValueError(
            f"{our_name}: formula {formula} gives {from_formula}, NASA record "
            f"{nasa_record['name']} has {nasa}"
        )
    return from_formula


def group_of(name, elements, phase):
    """Output group used to order the file (see GROUPS)."""
    if phase != "gas":
        return "condensed"
    if name in PERMANENT_GASES:
        return "permanent"
    if set(elements) - CURATED_ELEMENTS:
        return "other elements"
    for marker in ("Cl", "S", "N"):
        if marker in elements:
            return marker
    if set(elements) <= {"C", "H", "O"}:
        return "C-H-O"
    raise ValueError(f"{name}: no output group for elements {sorted(elements)}")


def critical_block(spec, crit_index):
    """Build the ``critical`` mapping from a from_file/poling spec (or None)."""
    if spec is None:
        return None
    if spec[0] == "file":
        _, key, descriptive = spec
        record = crit_index[key]
        if record.get("descriptive-name") != descriptive:
            raise ValueError(
                f"critical-properties entry {key}: expected {descriptive!r}, "
                f"found {record.get('descriptive-name')!r}"
            )
        params = record["critical-parameters"]
        return {
            "Tc": float(params["critical-temperature"]),
            "Pc": float(params["critical-pressure"]),
            "omega": float(params["acentric-factor"]),
            "reference": REF_CRIT_FILE,
        }
    _, Tc, Pc_bar, omega = spec
    return {
        "Tc": float(Decimal(Tc)),
        "Pc": float(Decimal(Pc_bar) * 100000),
        "omega": float(Decimal(omega)),
        "reference": REF_POLING,
    }


def fix_case(text, composition):
    """NASA writes some two-letter element symbols in capitals (``CL``, ``AL``): restore them."""
    for element in sorted(composition, key=len, reverse=True):
        if len(element) == 2:
            text = text.replace(element.upper(), element)
    return text


def formula_of(base, composition):
    """``base`` when it parses to ``composition``, else the composition written out."""
    try:
        if parse_formula(base) == composition:
            return base
    except ValueError:
        pass
    return "".join(f"{el}{n if n != 1 else ''}" for el, n in composition.items())


def auto_name(nasa_name, composition, phase, condensed_formulas):
    """Our name for a NASA record without a curated row, and its formula.

    Element symbols get their normal case; a liquid's ``(L)`` becomes ``(l)``; a gas atom of
    an element that also has a condensed form in the file gets ``(g)`` (``Fe(g)``), so that
    the bare symbol is never read as the gas by mistake.
    """
    fixed = fix_case(nasa_name, composition)
    if phase == "gas":
        base = fixed.split(",")[0]
        formula = formula_of(base, composition)
        if len(composition) == 1 and list(composition.values()) == [1] and fixed in condensed_formulas:
            return f"{fixed}(g)", formula
        return fixed, formula
    match = re.match(r"^(.*)\(([^()]*)\)$", fixed)
    base, tag = match.group(1), match.group(2)
    tag = "l" if tag == "L" else tag
    return f"{base}({tag})", formula_of(base, composition)


def is_charged(record):
    """An ion or the electron: an E in the composition, or a formula ending in + or - (the
    bundled Zn+ record lacks the E; "C3H4,cyclo-" is not an ion)."""
    name = str(record["name"])
    return "E" in {str(k) for k in record["composition"]} or ("," not in name and name.endswith(("+", "-")))


def auto_entries(gas_index, condensed_index):
    """Entries for every uncharged NASA record that no curated row takes."""
    used_gas = {row[1] for row in GAS_SPECIES}
    used_condensed = {row[1] for row in CONDENSED_SPECIES}
    condensed_formulas = set()
    for record in condensed_index.values():
        composition = {str(k): int(v) for k, v in record["composition"].items()}
        if len(composition) == 1 and list(composition.values()) == [1]:
            condensed_formulas.add(next(iter(composition)))
    entries = []
    for index, used, phase_of in ((gas_index, used_gas, lambda n: "gas"),
                                  (condensed_index, used_condensed,
                                   lambda n: "liquid" if n.endswith("(L)") else "solid")):
        for nasa_name, record in index.items():
            if nasa_name in used or is_charged(record):
                continue
            composition = {str(k): int(v) for k, v in record["composition"].items()}
            phase = phase_of(nasa_name)
            name, formula = auto_name(nasa_name, composition, phase, condensed_formulas)
            if name in LEFT_OUT:
                continue
            entries.append((name, record, formula, phase, "", [], None))
    return entries


def build_records(gas_index, condensed_index, crit_index):
    """Assemble species records in output order; returns a list of (name, record)."""
    entries = []
    for name, nasa_name, formula, common, aliases, crit in GAS_SPECIES:
        entries.append((name, gas_index[nasa_name], formula, "gas", common, aliases, crit))
    for name, nasa_name, formula, phase, common, aliases in CONDENSED_SPECIES:
        entries.append((name, condensed_index[nasa_name], formula, phase, common, aliases, None))
    entries.extend(auto_entries(gas_index, condensed_index))

    records = []
    for position, (name, nasa, formula, phase, common, aliases, crit) in enumerate(entries):
        elements = check_composition(name, formula, nasa)
        bounds, rows, converted = nasa7_rows(nasa["thermo"], nasa["name"])
        check_continuity(name, bounds, rows)
        note = str(nasa["thermo"].get("note", "")).strip()
        if converted:
            note = f"{note}; {CONVERTED_NOTE}" if note else CONVERTED_NOTE
        reference = REF_NASA
        if name in RANGE_LIMITS:
            t_min, reference = RANGE_LIMITS[name]
            if not bounds[0] < t_min < bounds[1]:
                raise ValueError(f"{name}: limit {t_min} K outside its first range {bounds[:2]}")
            note = (f"{note}; TM-4513 polynomial (reference {REF_NASA}), lower bound raised "
                    f"from {bounds[0]:g} K to {t_min:g} K (see {reference})")
            bounds = [t_min] + bounds[1:]
        record = {
            "formula": formula,
            "common_name": common,
        }
        if aliases:
            record["aliases"] = list(aliases)
        record.update(
            {
                "elements": elements,
                "phase": phase,
                "molar_mass": molar_mass(elements),
                "thermo": {
                    "model": "nasa7",
                    "T_bounds": bounds,
                    "coefficients": rows,
                    "reference": reference,
                    "data_note": note,
                },
            }
        )
        block = critical_block(crit, crit_index)
        if block is not None:
            record["critical"] = block
        group = GROUPS.index(group_of(name, elements, phase))
        records.append((group, position, name, record))
    records.sort(key=lambda item: (item[0], item[1]))
    check_names(records)
    return [(name, record) for _, _, name, record in records]


def check_names(records):
    """Fail on duplicate names or aliases, or an alias that is another species' name."""
    names = [name for _, _, name, _ in records]
    if len(set(names)) != len(names):
        raise ValueError("duplicate species names")
    # Names may differ only in case where the chemistry does (CS2 carbon disulfide, Cs2
    # dicesium); the database then refuses a case-insensitive lookup that fits both.
    folded = {}
    for name in names:
        folded.setdefault(name.lower(), name)
    seen = {}
    for _, _, name, record in records:
        for alias in record.get("aliases", []):
            if alias != alias.lower():
                raise ValueError(f"{name}: alias {alias!r} is not lower-case")
            if alias in seen:
                raise ValueError(f"alias {alias!r} used by {seen[alias]} and {name}")
            if alias in folded and folded[alias].lower() != name.lower():
                raise ValueError(f"alias {alias!r} of {name} is another species' name")
            seen[alias] = name


# ---------------------------------------------------------------------------------
# Writing. A small emitter of our own keeps the layout fixed and the numbers exact.
# ---------------------------------------------------------------------------------
def fmt_float(x):
    """repr() of a float, with a '.0' added to bare exponents so YAML 1.1 reads a float."""
    text = repr(float(x))
    if "e" in text and "." not in text.split("e")[0]:
        mantissa, exponent = text.split("e")
        text = f"{mantissa}.0e{exponent}"
    return text


def fmt_scalar(value):
    if isinstance(value, bool):
        raise TypeError("booleans are not used in this file")
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        return fmt_float(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    raise TypeError(f"cannot format {value!r}")


def fmt_flow(values):
    return "[" + ", ".join(fmt_scalar(v) for v in values) + "]"


def emit_species(name, record):
    lines = [f"  {json.dumps(name)}:"]
    pad = "    "
    lines.append(f"{pad}formula: {fmt_scalar(record['formula'])}")
    lines.append(f"{pad}common_name: {fmt_scalar(record['common_name'])}")
    if "aliases" in record:
        lines.append(f"{pad}aliases: {fmt_flow(record['aliases'])}")
    elements = ", ".join(f"{json.dumps(el)}: {n}" for el, n in record["elements"].items())
    lines.append(f"{pad}elements: {{{elements}}}")
    lines.append(f"{pad}phase: {record['phase']}")
    lines.append(f"{pad}molar_mass: {fmt_float(record['molar_mass'])}")
    thermo = record["thermo"]
    lines.append(f"{pad}thermo:")
    lines.append(f"{pad}  model: {thermo['model']}")
    lines.append(f"{pad}  T_bounds: {fmt_flow(thermo['T_bounds'])}")
    lines.append(f"{pad}  coefficients:")
    for row in thermo["coefficients"]:
        lines.append(f"{pad}    - {fmt_flow(row)}")
    lines.append(f"{pad}  reference: {thermo['reference']}")
    lines.append(f"{pad}  data_note: {fmt_scalar(thermo['data_note'])}")
    if "critical" in record:
        crit = record["critical"]
        lines.append(f"{pad}critical:")
        lines.append(f"{pad}  Tc: {fmt_float(crit['Tc'])}")
        lines.append(f"{pad}  Pc: {fmt_float(crit['Pc'])}")
        lines.append(f"{pad}  omega: {fmt_float(crit['omega'])}")
        lines.append(f"{pad}  reference: {crit['reference']}")
    return lines


def render(records, provenance):
    lines = [
        "# eqdesign species database. Generated by data/build_species.py; do not edit by",
        "# hand: change the script and run it again. Units: K, Pa, g/mol; thermo",
        "# coefficients are dimensionless NASA 7-coefficient polynomials (cp/R, h/RT, s/R).",
        "# Inputs read:",
    ]
    for label, digest in provenance:
        lines.append(f"#   {label} sha256 {digest}")
    lines += [
        f"schema: {SCHEMA}",
        f"molar_mass_reference: {REF_ATOMIC_WEIGHTS}",
        "references:",
    ]
    for key, ref in REFERENCES.items():
        lines.append(f"  {key}:")
        for field, value in ref.items():
            lines.append(f"    {field}: {fmt_scalar(value)}")
    lines.append("species:")
    current = None
    for name, record in records:
        group = group_of(name, record["elements"], record["phase"])
        if group != current:
            lines.append(f"  # --- {group} ---")
            current = group
        lines.extend(emit_species(name, record))
    return "\n".join(lines) + "\n"


def compact_json(text):
    """The same document as one line of JSON (``species.json``), which loads about thirty
    times faster than the YAML; the database reads this form of the bundled file."""
    document = yaml.load(text, Loader=_PlainLoader)
    document["generated_from"] = "species.yaml (see data/README.md); do not edit by hand"
    return json.dumps(document, ensure_ascii=False, separators=(",", ":")) + "\n"


def build():
    """Read cantera's bundled files and return the text of species.yaml."""
    import cantera

    folder = cantera_data_dir()
    gas_doc, gas_sha = load_yaml(os.path.join(folder, "nasa_gas.yaml"))
    cond_doc, cond_sha = load_yaml(os.path.join(folder, "nasa_condensed.yaml"))
    crit_doc, crit_sha = load_yaml(os.path.join(folder, "critical-properties.yaml"))
    records = build_records(
        index_by_name(gas_doc, "nasa_gas.yaml"),
        index_by_name(cond_doc, "nasa_condensed.yaml"),
        index_by_name(crit_doc, "critical-properties.yaml"),
    )
    provenance = [
        (f"cantera {cantera.__version__} data/nasa_gas.yaml", gas_sha),
        (f"cantera {cantera.__version__} data/nasa_condensed.yaml", cond_sha),
        (f"cantera {cantera.__version__} data/critical-properties.yaml", crit_sha),
    ]
    text = render(records, provenance)
    # Round trip: the text must parse back to exactly the records we built.
    parsed = yaml.safe_load(text)
    if parsed["species"] != dict(records):
        raise AssertionError("species.yaml does not parse back to the records written")
    return text


def main(argv=None):
    parser = argparse.ArgumentParser(description="Regenerate data/species.yaml.")
    parser.add_argument(
        "--output",
        default=os.path.join(os.path.dirname(os.path.abspath(__file__)), "species.yaml"),
        help="file to write [path] (default: species.yaml beside this script)",
    )
    parser.add_argument(
        "--check", action="store_true", help="only compare with the file on disk"
    )
    args = parser.parse_args(argv)
    text = build()
    outputs = [(args.output, text),
               (os.path.splitext(args.output)[0] + ".json", compact_json(text))]
    if args.check:
        stale = 0
        for path, content in outputs:
            try:
                with open(path, encoding="utf-8") as handle:
                    same = handle.read() == content
            except FileNotFoundError:
                same = False
            stale += not same
            print(f"{path}: {'up to date' if same else 'differs from a fresh build'}")
        return 0 if stale == 0 else 1
    for path, content in outputs:
        with open(path, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(content)
    n_gas = sum(1 for line in text.splitlines() if line.strip() == "phase: gas")
    n_all = sum(1 for line in text.splitlines() if line.strip().startswith("phase: "))
    print(f"wrote {args.output}: {n_gas} gases, {n_all - n_gas} condensed species")
    return 0


if __name__ == "__main__":
    sys.exit(main())
