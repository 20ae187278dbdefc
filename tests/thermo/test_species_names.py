"""Species names: every species of the bundled NASA files, unambiguous names, filters.

Coverage is checked against the NASA TM-4513 files bundled with cantera (McBride, Gordon,
Reno 1993; reference library from PyPI `cantera`), read here directly.
"""
from __future__ import annotations

import os

import numpy as np
import pytest
import yaml

from eqdesign.solve import cli
from eqdesign.solve.core.equilibrium import equilibrium
from eqdesign.thermo import Reaction, ReactionError, SpeciesDatabase, equilibrium_constant
from eqdesign.thermo.database import AmbiguousSpeciesError

CANTERA_DATA = os.path.join(os.path.dirname(__import__("cantera").__file__), "data")


def _nasa_records(filename):
    with open(os.path.join(CANTERA_DATA, filename), encoding="utf-8") as handle:
        doc = yaml.load(handle, Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader))
    return doc["species"]


def test_every_uncharged_nasa_record_is_carried(db):
    """HI, I2, PCl3 and the rest: each uncharged record of the bundled nasa_gas.yaml and
    nasa_condensed.yaml is in the database with its composition and its coefficients, except
    the two records data/README.md lists as left out (enthalpy jumps at a range bound)."""
    left_out = {"Li2O(s)", "ZnSO4(a)"}
    by_note = {}
    for sp in db:
        by_note.setdefault((tuple(sorted(sp.elements.items())), sp.is_gas), []).append(sp)
    missing = []
    count = {"gas": 0, "condensed": 0}
    for filename, gas in (("nasa_gas.yaml", True), ("nasa_condensed.yaml", False)):
        for record in _nasa_records(filename):
            name = str(record["name"])
            comp = {str(k): float(v) for k, v in record["composition"].items()}
            if "E" in comp or ("," not in name and name.endswith(("+", "-"))) or name in left_out:
                continue
            count["gas" if gas else "condensed"] += 1
            candidates = by_note.get((tuple(sorted(comp.items())), gas), [])
            last = record["thermo"]["data"][-1]
            a6 = float(last[5] if record["thermo"]["model"] == "NASA7" else last[7])
            if not any(abs(sp.model.coefficients[-1][5] - a6) <= 1e-12 * max(1.0, abs(a6))
                       for sp in candidates):
                missing.append(name)
    assert missing == []
    assert count == {"gas": 610, "condensed": 380}
    assert len(db) == 990
    for name in ("HI", "I2", "PCl3", "HF", "SiH4", "TiCl4", "Al2O3(s)", "NaOH(l)"):
        assert name in db.species, name


def test_reactions_with_the_new_species(db):
    """HI formation: K(700 K) of H2 + I2 = 2 HI is near 54 (the classic gas-phase
    equilibrium measured by Bodenstein; value about 54 at 700 K, from memory)."""
    assert equilibrium_constant("H2 + I2 = 2 HI", 700.0) == pytest.approx(54.0, rel=0.15)
    assert Reaction.parse("P4 + 6 Cl2 = 4 PCl3").delta_n_gas == -3.0


def test_bare_carbon_is_refused_with_the_choices():
    """`C + CO2 = 2 CO` used to give K = 3.4e29 at 1000 K (carbon gas); with graphite K is
    1.76 (NIST-JANAF, Chase 1998: log K about 0.25 at 1000 K, from memory)."""
    with pytest.raises(ReactionError) as err:
        Reaction.parse("C + CO2 = 2 CO")
    assert str(err.value) == ("reaction 'C + CO2 = 2 CO': 'C' is ambiguous: write C(gr) for graphite or "
                              "C(g) for atomic carbon (gas)")
    assert equilibrium_constant("C(gr) + CO2 = 2 CO", 1000.0) == pytest.approx(1.7628, rel=1e-4)
    assert equilibrium_constant("C(g) + CO2 = 2 CO", 1000.0) > 1e29
    assert equilibrium_constant("graphite + CO2 = 2 CO", 1000.0) == pytest.approx(1.7628, rel=1e-4)
    assert equilibrium_constant("carbon vapour + CO2 = 2 CO", 1000.0) > 1e29


def test_every_element_with_a_condensed_form_has_an_ambiguous_bare_symbol(db):
    """The list is decided by the data: a gas atom X(g) beside a condensed species of formula X."""
    expected = sorted({sp.formula for sp in db if not sp.is_gas and len(sp.elements) == 1
                       and list(sp.elements.values()) == [1.0]} & {sp.formula for sp in db if sp.is_gas})
    assert sorted(db.ambiguous) == expected
    assert {"C", "S", "Fe", "Ni", "Cu", "Al", "Si", "Na"} <= set(db.ambiguous)
    for symbol in db.ambiguous:
        assert f"{symbol}(g)" in db.species and db[f"{symbol}(g)"].is_gas
        with pytest.raises(AmbiguousSpeciesError, match=f"'{symbol}' is ambiguous: write "):
            db.resolve(symbol)
    with pytest.raises(AmbiguousSpeciesError) as err:
        db.resolve("Fe")
    assert "Fe(s) for alpha iron" in str(err.value) and "Fe(g) for the gas" in str(err.value)


def test_the_api_and_case_names_refuse_the_bare_symbol(db):
    with pytest.raises(KeyError, match="'S' is ambiguous"):
        equilibrium(["H2S", "S"], {"H2S": 1.0}, 900.0, 1e5)
    r = equilibrium(["H2S", "H2", "S2", "S(g)"], {"H2S": 1.0}, 900.0, 1e5)
    assert r.converged.all()


def test_names_differing_only_in_case_are_refused_when_written_in_neither(db):
    assert db.resolve("CS2") == "CS2" and db.resolve("Cs2") == "Cs2"
    with pytest.raises(AmbiguousSpeciesError, match="'cs2' fits CS2 \\(carbon disulfide\\) and Cs2 \\(gas\\)"):
        db.resolve("cs2")
    assert db.resolve("nh3") == "NH3"


def test_names_matching_filters_by_element_and_phase(db):
    names = db.names_matching(element=["Fe", "O"], phase="solid")
    assert names[:3] == ["FeO(s)", "Fe2O3(s)", "Fe3O4(s)"]
    assert all(not db[n].is_gas and {"Fe", "O"} <= set(db[n].elements) for n in names)
    gases = db.names_matching(element="I", phase="gas")
    assert {"HI", "I2", "I"} <= set(gases) and all(db[n].is_gas for n in gases)
    assert len(db.names_matching(phase="condensed")) == 380
    assert len(db.names_matching()) == len(db)
    with pytest.raises(ValueError, match="use gas, solid, liquid or condensed"):
        db.names_matching(phase="plasma")


def test_species_list_command_filters(capsys):
    assert cli.main(["species", "--element", "Fe", "--element", "O", "--phase", "solid"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert [line.split()[0] for line in lines[:3]] == ["FeO(s)", "Fe2O3(s)", "Fe3O4(s)"]
    assert lines[0].split()[2] == "843-1650"


def test_bundled_json_and_yaml_hold_the_same_data(db):
    """species.json (loaded) is the compact form of species.yaml (the readable file)."""
    from importlib import resources
    text = resources.files("eqdesign.data").joinpath("species.yaml").read_text(encoding="utf-8")
    from_yaml = SpeciesDatabase.from_text(text)
    assert list(from_yaml.species) == list(db.species)
    for name, sp in db.species.items():
        other = from_yaml.species[name]
        assert (sp.formula, sp.elements, sp.phase, sp.molar_mass, sp.reference) == \
            (other.formula, other.elements, other.phase, other.molar_mass, other.reference), name
        assert np.array_equal(sp.model.coefficients, other.model.coefficients), name


def test_a_case_file_naming_bare_carbon_is_refused(tmp_path):
    """Case files used to accept `C` (carbon gas) where graphite was meant."""
    import pathlib

    from eqdesign.solve.casefile.reader import load_case
    from eqdesign.solve.casefile.yaml_lines import CaseError
    demo = pathlib.Path(__file__).resolve().parents[2] / "cases" / "steam_reformer_carbon.yaml"
    text = demo.read_text(encoding="utf-8").replace("species: [CH4, C2H6, C3H8, H2O, CO, CO2, H2, N2]",
                                                    "species: [CH4, C2H6, C3H8, H2O, CO, CO2, H2, N2, C]")
    assert "N2, C]" in text
    case = tmp_path / "case.yaml"
    case.write_text(text, encoding="utf-8")
    with pytest.raises(CaseError) as err:
        load_case(case)
    assert "'C' is ambiguous: write C(gr) for graphite or C(g) for atomic carbon (gas)" in str(err.value)
