"""The bundled species database: coverage, consistency and provenance."""
from __future__ import annotations

import numpy as np
import pytest

from eqdesign.thermo import DatabaseError, SpeciesDatabase
from eqdesign.thermo.elements import molar_mass

REQUIRED_GASES = [
    "H2", "N2", "O2", "Ar", "He", "Ne", "H2O", "CO", "CO2", "CH4", "C2H6", "C3H8", "n-C4H10",
    "i-C4H10", "C2H4", "C3H6", "1-C4H8", "i-C4H8", "C2H2", "C6H6", "C7H8", "C8H10", "C8H8",
    "c-C6H12", "CH3OH", "C2H5OH", "CH3OCH3", "HCHO", "NH3", "NO", "NO2", "N2O", "N2O4", "HCN",
    "SO2", "SO3", "H2S", "COS", "CS2", "S2", "HCl", "Cl2",
]
REQUIRED_CONDENSED = ["C(gr)", "H2O(l)", "CaCO3(s)", "CaO(s)", "Fe(s)", "FeO(s)", "Fe2O3(s)",
                      "Fe3O4(s)"]


def test_coverage(db):
    gases = [s for s in db if s.is_gas]
    condensed = [s for s in db if not s.is_gas]
    assert len(gases) >= 60 and len(condensed) >= 10
    for name in REQUIRED_GASES:
        assert db[name].is_gas, name
    for name in REQUIRED_CONDENSED:
        assert not db[name].is_gas, name
    assert any(s.elements == {"S": 1.0} and not s.is_gas for s in condensed)


def test_every_species_is_consistent_and_sourced(db):
    for sp in db:
        assert sp.reference, sp.name
        assert sp.molar_mass == pytest.approx(molar_mass(sp.elements), rel=1e-3), sp.name
        T = np.linspace(sp.T_min, sp.T_max, 50)
        cp = sp.model.heat_capacity(T)
        assert np.all(np.isfinite(cp)) and np.all(cp > 0), sp.name
        # NASA ranges join smoothly: h continuous at the breaks within 1e-3 RT (the fits
        # are constrained to continuity; TM-4513)
        for Tb in sp.model.T_bounds[1:-1]:
            h_lo = sp.model.enthalpy(Tb - 1e-6)
            h_hi = sp.model.enthalpy(Tb + 1e-6)
            assert abs(h_hi - h_lo) < 1e-3 * 8.314 * Tb + 5.0, (sp.name, Tb)


def test_critical_constants_where_real_gas_work_needs_them(db):
    """Critical constants, Poling, Prausnitz, O'Connell (2001) Appendix A (from memory)."""
    expected = {"H2": (33.19, 13.13e5), "N2": (126.2, 33.98e5), "CH4": (190.56, 45.99e5),
                "CO2": (304.13, 73.77e5), "NH3": (405.4, 113.53e5), "H2O": (647.1, 220.55e5)}
    for name, (Tc, Pc) in expected.items():
        crit = db[name].critical
        assert crit is not None, name
        assert crit.Tc == pytest.approx(Tc, rel=0.01) and crit.Pc == pytest.approx(Pc, rel=0.02), name
        assert crit.reference


def test_bad_species_file_names_the_key_and_fix():
    text = "species:\n  XY:\n    phase: gas\n    elements: {H: 2}\n"
    with pytest.raises(DatabaseError) as err:
        SpeciesDatabase.from_text(text, origin="mine.yaml")
    assert str(err.value) == ("mine.yaml: species.XY: missing key 'thermo'; add a 'thermo' block "
                              "(model nasa7 or formation-data)")


def test_user_species_from_formation_data():
    text = """
references: {MINE: {cite: "invented demo data", standard_pressure_Pa: 100000}}
species:
  Zq:
    formula: H2
    phase: gas
    thermo: {model: formation-data, formation_enthalpy: 0.0, entropy: 130.68,
             cp: [29.1], T_bounds: [298.15, 1000], reference: MINE}
"""
    db = SpeciesDatabase.from_text(text)
    assert db["Zq"].entropy(298.15) == pytest.approx(130.68)
    assert db["Zq"].molar_mass == pytest.approx(2.016)
