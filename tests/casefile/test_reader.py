"""Case files: loading, units at the edge, user species, and the checks' wording.

The malformed-case suite that goes through the command line (exit status 2, nothing
written) is in tests/test_cli.py; here the loader is tested directly.
"""
from __future__ import annotations

import math
import pathlib
import re

import numpy as np
import pytest

from eqdesign.solve import equilibrium
from eqdesign.solve.casefile.yaml_lines import CaseError
from eqdesign.solve.casefile.reader import load_case, parse_case
from eqdesign.thermo import Reaction

ROOT = pathlib.Path(__file__).resolve().parents[2]
DEMO_CASES = sorted((ROOT / "cases").glob("*.yaml"))

BASE = """\
layout: eqdesign-case/1
job:
  title: "Test loop"
chemistry:
  species: [N2, H2, NH3]
  key: N2
  reactions:
    synthesis: "N2 + 3 H2 = 2 NH3"
feed:
  composition:
    N2: "25 mol%"
    H2: "75 mol%"
conditions:
  temperature: {low: "400 degC", high: "500 degC", points: 5}
  pressure: ["100 bar", "200 bar"]
studies:
  conversion_map: {}
"""


def problems_of(text: str) -> list[str]:
    with pytest.raises(CaseError) as info:
        parse_case(text, "x.yaml")
    return [str(p) for p in info.value.problems]


def test_at_least_five_demo_cases_load():
    assert len(DEMO_CASES) >= 5
    for path in DEMO_CASES:
        case = load_case(path)
        assert case.title and case.scenario and "nvented" in case.scenario, path
        assert case.studies.names, path


def test_base_case_in_si():
    case = parse_case(BASE, "x.yaml")
    assert case.temperature.low == pytest.approx(673.15)
    assert case.temperature.high == pytest.approx(773.15)
    assert case.pressures == (1e7, 2e7)
    assert case.feed == pytest.approx({"N2": 0.25, "H2": 0.75})
    assert case.species == ("N2", "H2", "NH3")
    assert case.solver_reactions == ["N2 + 3 H2 = 2 NH3"]
    assert case.approach == 0.0 and case.gas_model == "ideal"


def test_feed_flows_and_mass_flows_are_read_with_units():
    text = BASE.replace('N2: "25 mol%"', 'N2: "1000 kmol/h"').replace('H2: "75 mol%"', 'H2: "3000 kmol/h"')
    case = parse_case(text, "x.yaml")
    assert case.feed_flow == pytest.approx(4000e3 / 3600)                  # mol/s
    assert case.feed == pytest.approx({"N2": 0.25, "H2": 0.75})
    # a mass flow becomes a molar flow through the molar mass (N2 28.014 g/mol, IUPAC 2021)
    text = BASE.replace('N2: "25 mol%"', 'N2: "28.014 kg/h"').replace('H2: "75 mol%"', 'H2: "3 kmol/h"')
    case = parse_case(text, "x.yaml")
    assert case.feed == pytest.approx({"N2": 0.25, "H2": 0.75}, rel=1e-9)
    # mol% with a total flow in mass units
    text = BASE.replace("  composition:", '  flow: "600 t/d"\n  composition:')
    case = parse_case(text, "x.yaml")
    mean_molar_mass = 0.25 * 28.014 + 0.75 * 2.016                      # g/mol
    assert case.feed_flow == pytest.approx(600e6 / 86400 / mean_molar_mass, rel=1e-4)


def test_species_called_no_stay_text():
    """YAML 1.1 reads a bare NO as false; the case loader must keep it a species name."""
    text = BASE.replace("[N2, H2, NH3]", "[N2, O2, NO]").replace('N2: "25 mol%"', "N2: 0.79") \
        .replace('H2: "75 mol%"', "O2: 0.21\n    NO: 0").replace("  reactions:\n    synthesis: \"N2 + 3 H2 = 2 NH3\"\n",
                                                                  "").replace('"400 degC"', '"1500 degC"') \
        .replace('"500 degC"', '"1800 degC"').replace('["100 bar", "200 bar"]', '["1 bar"]')
    case = parse_case(text, "x.yaml")
    assert "NO" in case.species and case.feed["NO"] == 0.0


def test_problem_names_file_key_path_and_line():
    text = BASE.replace('high: "500 degC"', 'high: "450 bar"')
    (msg,) = problems_of(text)
    assert msg.startswith("x.yaml: conditions.temperature.high (line 14): '450 bar' is a pressure, not a temperature")
    assert "'450 degC' or '723.15 K'" in msg


def test_every_problem_is_reported_not_only_the_first():
    text = BASE.replace("gas_model", "x").replace("key: N2", "key: N2\n  gas_modle: ideal") \
        .replace('"100 bar"', '"100 degC"').replace('"75 mol%"', '"70 mol%"')
    msgs = problems_of(text)
    assert len(msgs) == 3
    assert any("did you mean 'gas_model'" in m for m in msgs)
    assert any("conditions.pressure[0]" in m for m in msgs)
    assert any("add up to 95" in m for m in msgs)


def test_percent_and_fraction_targets_agree():
    t1 = parse_case(BASE + "  targets:\n    - {conversion: '20 %', solve_for: temperature}\n", "x.yaml")
    t2 = parse_case(BASE + "  targets:\n    - {conversion: 0.2, solve_for: temperature}\n", "x.yaml")
    assert t1.studies.targets[0].conversion == t2.studies.targets[0].conversion == pytest.approx(0.2)


def test_stoichiometric_limit_of_a_target_is_checked_before_running():
    """N2:H2 = 1:1 can convert at most 1/3 of the N2 (H2 runs out): simple stoichiometry."""
    text = BASE.replace('"25 mol%"', '"50 mol%"').replace('"75 mol%"', '"50 mol%"') + \
        "  targets:\n    - {conversion: 0.5, solve_for: temperature}\n"
    (msg,) = problems_of(text)
    assert "studies.targets[0].conversion" in msg and "at most 0.3333 of N2" in msg and "H2 runs out" in msg


USER_REACTION = """\
user_species:
  NH3u:
    source: "reaction data taken from the bundled NASA TM-4513 data at 700 K (test)"
    standard_pressure: 1 bar
    critical: {{Tc: "405.4 K", Pc: "113.53 bar", omega: 0.257}}
    reaction_data:
      reaction: "N2 + 3 H2 = 2 NH3u"
      enthalpy: "{dh} J/mol"
      entropy: "{ds} J/(mol K)"
      at: "700 K"
      cp_change: "{dcp} J/(mol K)"
"""


def test_species_from_reaction_data_reproduces_the_reaction_it_came_from(db):
    """A species defined by ΔrH°, ΔrS°, ΔrCp° of ammonia synthesis at 700 K (the bundled NASA
    TM-4513 data) gives the same K at 700 K to rounding, and the same equilibrium."""
    rxn = Reaction.parse("N2 + 3 H2 = 2 NH3", db)
    T0 = 700.0
    text = USER_REACTION.format(dh=repr(rxn.delta_h(T0)), ds=repr(rxn.delta_s(T0)), dcp=repr(rxn.delta_cp(T0)))
    case = parse_case(BASE.replace("NH3", "NH3u") + text, "x.yaml")
    user = case.database["NH3u"]
    assert user.elements == {"N": 1.0, "H": 3.0}
    k_user = Reaction.parse("N2 + 3 H2 = 2 NH3u", case.database).equilibrium_constant(T0)
    assert k_user == pytest.approx(rxn.equilibrium_constant(T0), rel=1e-10)
    a = equilibrium(["N2", "H2", "NH3u"], {"N2": 1, "H2": 3}, T0, "200 bar", database=case.database, key="N2")
    b = equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, T0, "200 bar", key="N2")
    assert a.conversion() == pytest.approx(b.conversion(), rel=1e-8)
    # with ΔrCp° held at its 700 K value, K stays within 0.5 % of the Gibbs-route value at 780 K
    assert Reaction.parse("N2 + 3 H2 = 2 NH3u", case.database).equilibrium_constant(780.0) == \
        pytest.approx(rxn.equilibrium_constant(780.0), rel=5e-3)
    assert case.user_species[0].kind == "reaction data"


def test_species_from_K_at_a_temperature(db):
    text = BASE.replace("NH3", "NH3k") + """\
user_species:
  NH3k:
    source: "invented for the test"
    standard_pressure: 1 bar
    reaction_data:
      reaction: "N2 + 3 H2 = 2 NH3k"
      enthalpy: "-105 kJ/mol"
      K: 1.0e-4
      at: "700 K"
"""
    case = parse_case(text, "x.yaml")
    K = Reaction.parse("N2 + 3 H2 = 2 NH3k", case.database).equilibrium_constant(700.0)
    assert K == pytest.approx(1e-4, rel=1e-12)
    # van 't Hoff with constant ΔrH°: ln K2/K1 = -ΔrH°/R (1/T2 - 1/T1)
    K2 = Reaction.parse("N2 + 3 H2 = 2 NH3k", case.database).equilibrium_constant(750.0)
    assert math.log(K2 / K) == pytest.approx(105e3 / 8.314462618 * (1 / 750 - 1 / 700), rel=1e-9)


def test_species_from_formation_data(db):
    """NH3 from ΔfH°(298.15 K) = -45.94 kJ/mol (CODATA key value, Cox, Wagman and Medvedev
    1989), S°(298.15 K) = 192.77 J/(mol K) (NIST-JANAF, Chase 1998, from memory) and the
    Shomate cp of the NIST Chemistry WebBook for NH3, 298-1400 K (A = 19.99563,
    B = 49.77119, C = -15.37599, D = 1.921168, E = 0.189174 with t = T/1000 K; from memory),
    written as [c0, c1, c2, c3, c_2] in SI: K(700 K) of ammonia synthesis then agrees with
    the bundled NASA TM-4513 data within 2 %."""
    text = BASE.replace("NH3", "NH3f") + """\
user_species:
  NH3f:
    formula: NH3
    source: "CODATA key values (ΔfH°) and NIST-JANAF (S°, cp), 298.15 K"
    standard_pressure: 1 bar
    formation_data:
      enthalpy: "-45.94 kJ/mol"
      entropy: "192.77 J/(mol K)"
      cp: [19.99563, 49.77119e-3, -15.37599e-6, 1.921168e-9, 0.189174e6]
      valid: {low: "298.15 K", high: "1400 K"}
"""
    case = parse_case(text, "x.yaml")
    sp = case.database["NH3f"]
    assert float(sp.heat_capacity(298.15)) == pytest.approx(35.63, abs=0.05)   # NIST-JANAF (from memory)
    assert float(sp.enthalpy(298.15)) == pytest.approx(-45940.0)
    assert float(sp.entropy(298.15)) == pytest.approx(192.77)
    K_user = Reaction.parse("N2 + 3 H2 = 2 NH3f", case.database).equilibrium_constant(700.0)
    K_nasa = Reaction.parse("N2 + 3 H2 = 2 NH3", db).equilibrium_constant(700.0)
    assert K_user == pytest.approx(K_nasa, rel=0.02)
    assert "CODATA" in case.user_species[0].source


def test_user_species_out_of_its_range_is_refused():
    text = BASE.replace("NH3", "NH3f").replace('"500 degC"', '"800 degC"') + """\
user_species:
  NH3f:
    formula: NH3
    source: "test"
    standard_pressure: 1 bar
    formation_data: {enthalpy: "-45.94 kJ/mol", entropy: "192.77 J/(mol K)", cp: "35.06 J/(mol K)",
                     valid: {low: "298.15 K", high: "1000 K"}}
"""
    (msg,) = problems_of(text)
    assert "conditions.temperature" in msg and "above the data range of NH3f (298.15-1000 K)" in msg


def test_grid_and_ratio_helpers(db):
    case = load_case(ROOT / "cases" / "steam_reformer_carbon.yaml")
    fr = case.studies.conversion_map.feed_ratio
    assert fr.denominator == "carbon" and fr.numerator == "H2O" and fr.values == (2.5, 3.0, 3.5)
    # carbon of the hydrocarbons only: 0.94 + 2(0.035) + 3(0.008) per 0.94 mol of CH4 basis
    basis = fr.basis(case.feed, case.database)
    assert fr.current(case.feed, case.database) == pytest.approx(3.053 / (0.94 + 0.07 + 0.024), rel=1e-9)
    assert basis > 0
    g = case.temperature
    assert np.allclose(g.values(), np.linspace(g.low, g.high, g.points))


def test_every_layout_key_is_documented():
    """cases/README.md names every key the loader accepts (the layout reference stays complete)."""
    from eqdesign.solve.casefile import schema as c
    doc = (ROOT / "cases" / "README.md").read_text(encoding="utf-8")
    keys = set()
    for name in dir(c):
        if name.endswith("_KEYS") and isinstance(getattr(c, name), tuple):
            keys.update(getattr(c, name))
    import re
    missing = sorted(k for k in keys if not re.search(rf"(?<![A-Za-z_]){re.escape(k)}(?![A-Za-z_])", doc))
    assert not missing, missing


# ------------------------------------------------------------------ data uncertainty switch
def test_uncertainty_switch_maps_to_settings():
    """studies.uncertainty: the block's keys become the uncertainty module's settings; 'true'
    or '{}' takes the defaults; 'false' (or no block) leaves it off."""
    case = parse_case(BASE + "  uncertainty: {method: linear, level: '90 %', seed: 7, samples: 100}\n", "x.yaml")
    u = case.studies.uncertainty
    assert (u.method, u.level, u.seed, u.samples, dict(u.overrides)) == ("linear", 0.9, 7, 100, {})
    assert "data uncertainty (linearised, 90 % intervals)" in case.summary()
    for switch in ("true", "{}"):
        u = parse_case(BASE + f"  uncertainty: {switch}\n", "x.yaml").studies.uncertainty
        assert (u.method, u.samples, u.seed, u.level) == ("monte-carlo", 400, 1, 0.95)
    assert parse_case(BASE + "  uncertainty: false\n", "x.yaml").studies.uncertainty is None
    assert parse_case(BASE, "x.yaml").studies.uncertainty is None
    # an alias in the overrides is stored under the database name
    u = parse_case(BASE + "  uncertainty: {overrides: {ammonia: {entropy: '0.2 J/(mol K)'}}}\n",
                   "x.yaml").studies.uncertainty
    assert dict(u.overrides) == {"NH3": {"entropy": "0.2 J/(mol K)"}}


def test_uncertainty_problems_are_reported_together_word_for_word():
    text = BASE + """\
  uncertainty:
    method: bootstrap
    samples: 10.5
    overrides:
      NH3: {formation_enthalpy: "-0.3 kJ/mol"}
      CH4: {entropy: "0.1 J/(mol K)"}
"""
    assert problems_of(text) == [
        "x.yaml: studies.uncertainty.method (line 19): 'bootstrap' is not one of monte-carlo, linear; write method: "
        "monte-carlo or method: linear",
        "x.yaml: studies.uncertainty.samples (line 20): give a whole number from 20 to 100000, got 10.5",
        "x.yaml: studies.uncertainty.overrides.NH3.formation_enthalpy (line 22): a standard uncertainty must be "
        "finite and non-negative, got '-0.3 kJ/mol'; give a standard uncertainty such as '0.4 kJ/mol'",
        "x.yaml: studies.uncertainty.overrides.CH4 (line 23): CH4 is not a species of this case, so its uncertainty "
        "cannot matter; remove it or add CH4 to chemistry.species",
    ]


UNCERTAIN_REACTION_SPECIES = """\
user_species:
  NH3k:
    source: "invented reaction data for the test"
    standard_pressure: 1 bar
    reaction_data:
      reaction: "N2 + 3 H2 = 2 NH3k"
      enthalpy: "-105 kJ/mol"
      K: 1.0e-4
      at: "700 K"
      uncertainty: {enthalpy: "3 kJ/mol", entropy: "1 J/(mol K)"}
"""


def test_a_supplied_species_carries_its_own_uncertainty():
    """Reaction data with their uncertainties: the reaction's K(T) then carries u(ΔrH°),
    u(ΔrS°) alone, u²(ln K) = u²(ΔrH°)/(RT)² + u²(ΔrS°)/R² (GUM, independent data; ν = 2 on
    the species and 1/ν on its data cancel)."""
    from eqdesign.solve.studies.uncertainty import ln_K_uncertainty
    from eqdesign.thermo import R
    text = BASE.replace("NH3", "NH3k") + "  uncertainty: {method: linear}\n" + UNCERTAIN_REACTION_SPECIES
    case = parse_case(text, "x.yaml")
    assert dict(case.studies.uncertainty.overrides) == {"NH3k": {"reaction_enthalpy": 3000.0,
                                                                  "reaction_entropy": 1.0}}
    assert "u(ΔrH°) = 3 kJ/mol, u(ΔrS°) = 1 J/(mol K)" in case.user_species[0].detail
    r = ln_K_uncertainty("N2 + 3 H2 = 2 NH3k", 750.0, database=case.database,
                         overrides=case.studies.uncertainty.overrides)
    assert r.standard_uncertainty == pytest.approx(math.hypot(3000.0 / (R * 750.0), 1.0 / R), rel=1e-9)
    assert {d.origin for d in r.data if d.species == "NH3k"} == {"user"}
    # given twice: with the data and in the overrides
    twice = text.replace("{method: linear}", "{overrides: {NH3k: {reaction_entropy: '2 J/(mol K)'}}}")
    (msg,) = problems_of(twice)
    assert msg == ("x.yaml: studies.uncertainty.overrides.NH3k.reaction_entropy (line 18): the reaction_entropy "
                   "uncertainty of NH3k is also given with its data under user_species.NH3k; keep one")


def test_uncertainty_defaults_file_is_read_relative_to_the_case(tmp_path):
    """A defaults file of one's own (here the bundled one with u(ΔfH°(NH3)) doubled, invented)
    is found beside the case file and replaces the bundled defaults."""
    from importlib import resources
    from eqdesign.solve.studies.uncertainty import parameter_map
    bundled = resources.files("eqdesign.data").joinpath("uncertainty_defaults.yaml").read_text(encoding="utf-8")
    own = re.sub(r"NH3:(\s*)\{formation_enthalpy: 350.0", r"NH3:\1{formation_enthalpy: 700.0", bundled)
    assert own != bundled
    (tmp_path / "own_defaults.yaml").write_text(own, encoding="utf-8")
    (tmp_path / "case.yaml").write_text(BASE + "  uncertainty: {defaults: own_defaults.yaml}\n", encoding="utf-8")
    u = load_case(tmp_path / "case.yaml").studies.uncertainty
    assert u.defaults_file == str(tmp_path / "own_defaults.yaml")
    data = parameter_map(["N2", "H2", "NH3"], defaults=u.as_kwargs()["defaults"]).data
    assert next(d.u for d in data if d.label == "ΔfH°(NH3)") == 700.0
    (msg,) = problems_of(BASE + "  uncertainty: {defaults: nowhere.yaml}\n")
    assert msg.startswith("x.yaml: studies.uncertainty.defaults (line 18): nowhere.yaml: cannot read uncertainty "
                          "defaults")
