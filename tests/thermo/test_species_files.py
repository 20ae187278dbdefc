"""Species files of the user's own: the standard pressure of the data is a required key.

The conversion checked: for an ideal gas s°(1 bar) = s°(1 atm) + R ln(1.01325), so K on the
1 bar basis is K(1 atm data read as 1 bar) × 1.01325^-Δn (IUPAC standard-state convention,
standard pressure 1 bar since 1982; from memory).
"""
from __future__ import annotations

import pytest
import yaml

from eqdesign.thermo import DatabaseError, Reaction, SpeciesDatabase


def _file(db, pressure_entry, where="thermo"):
    doc = {"references": {"SRC": {"cite": "test data"}}, "species": {}}
    for n in ("N2", "H2", "NH3"):
        m = db[n].model
        thermo = {"model": "nasa7", "T_bounds": list(m.T_bounds), "coefficients": m.coefficients.tolist(),
                  "reference": "SRC"}
        if pressure_entry is not None:
            (thermo if where == "thermo" else doc["references"]["SRC"])["standard_pressure"] = pressure_entry
        doc["species"][n] = {"elements": dict(db[n].elements), "phase": "gas", "thermo": thermo}
    return yaml.safe_dump(doc, allow_unicode=True, sort_keys=False)


def test_missing_standard_pressure_names_the_file_key_and_fix(db):
    """Data without a stated standard pressure used to be taken as 1 bar silently."""
    with pytest.raises(DatabaseError) as err:
        SpeciesDatabase.from_text(_file(db, None), origin="my_table.yaml")
    assert str(err.value) == (
        "my_table.yaml: species.N2.thermo: missing key 'standard_pressure'; add standard_pressure: 1 bar "
        "(NIST-JANAF since 1982, NASA TM-4513) or standard_pressure: 1 atm (older tables) to the thermo "
        "block or to references.SRC")


@pytest.mark.parametrize("where", ["thermo", "reference"])
def test_one_atmosphere_data_are_converted_on_load(db, where):
    """Ammonia synthesis, Δn = -2: the same coefficients declared on 1 atm give K(1 bar)
    = K(as 1 bar) × 1.01325^-2, 2.6 % lower."""
    K_bar = Reaction.parse("N2 + 3 H2 = 2 NH3", SpeciesDatabase.from_text(_file(db, "1 bar", where))) \
        .equilibrium_constant(700.0)
    K_atm = Reaction.parse("N2 + 3 H2 = 2 NH3", SpeciesDatabase.from_text(_file(db, "1 atm", where))) \
        .equilibrium_constant(700.0)
    assert K_bar == pytest.approx(Reaction.parse("N2 + 3 H2 = 2 NH3").equilibrium_constant(700.0), rel=1e-12)
    assert K_atm == pytest.approx(K_bar * 1.01325 ** -2, rel=1e-12)
    assert K_atm / K_bar == pytest.approx(0.974, abs=1e-3)
    # numbers are pascals
    K_pa = Reaction.parse("N2 + 3 H2 = 2 NH3", SpeciesDatabase.from_text(_file(db, 101325, where))) \
        .equilibrium_constant(700.0)
    assert K_pa == pytest.approx(K_atm, rel=1e-12)


def test_other_standard_pressures_are_refused(db):
    with pytest.raises(DatabaseError) as err:
        SpeciesDatabase.from_text(_file(db, "2 bar"), origin="my_table.yaml")
    assert str(err.value) == ("my_table.yaml: species.N2.thermo.standard_pressure: '2 bar' is neither 1 bar "
                              "nor 1 atm; give the standard pressure of the source table, standard_pressure: "
                              "1 bar or 1 atm")
    with pytest.raises(DatabaseError, match="is not a pressure"):
        SpeciesDatabase.from_text(_file(db, "1 kg"), origin="my_table.yaml")
