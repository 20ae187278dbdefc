"""User species state the standard pressure of their data; data on 1 atm are moved to 1 bar."""
from __future__ import annotations

import math

import pytest

from eqdesign.solve.casefile.reader import parse_case
from eqdesign.solve.casefile.yaml_lines import CaseError
from eqdesign.thermo import Reaction

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

R = 8.314462618

K_SPECIES = """\
user_species:
  NH3k:
    source: "invented for the test"
{pressure}    reaction_data:
      reaction: "N2 + 3 H2 = 2 NH3k"
      enthalpy: "-105 kJ/mol"
      K: 1.0e-4
      at: "700 K"
"""


def _case(pressure_line: str, body: str = K_SPECIES):
    return parse_case(BASE.replace("NH3", "NH3k") + body.format(pressure=pressure_line), "x.yaml")


def test_missing_standard_pressure_is_a_problem_naming_the_fix():
    with pytest.raises(CaseError) as info:
        _case("")
    assert [str(p) for p in info.value.problems][0] == (
        "x.yaml: user_species.NH3k (line 19): missing key 'standard_pressure'; say on which standard state the "
        "data are: standard_pressure: 1 bar (NIST-JANAF since 1982, NASA polynomials) or standard_pressure: "
        "1 atm (older tables)")


def test_other_standard_pressures_are_refused():
    with pytest.raises(CaseError) as info:
        _case("    standard_pressure: 2 bar\n")
    assert "is neither 1 bar nor 1 atm" in str(info.value.problems[0])


def test_K_on_1_atm_is_converted_to_1_bar():
    """Kp on 1 atm to 1 bar: K° changes by (1.01325)^Δn, Δn = -2 for N2 + 3 H2 = 2 NH3
    (1 atm = 1.01325 bar exactly, CODATA/SI definition)."""
    K_bar = Reaction.parse("N2 + 3 H2 = 2 NH3k", _case("    standard_pressure: 1 bar\n").database)
    K_atm = Reaction.parse("N2 + 3 H2 = 2 NH3k", _case("    standard_pressure: 1 atm\n").database)
    ratio = K_atm.equilibrium_constant(700.0) / K_bar.equilibrium_constant(700.0)
    assert ratio == pytest.approx(1.01325 ** -2, rel=1e-12)
    # the same holds at every temperature (ΔrS° shifted by Δn R ln 1.01325)
    assert K_atm.equilibrium_constant(760.0) / K_bar.equilibrium_constant(760.0) == pytest.approx(1.01325 ** -2,
                                                                                                      rel=1e-12)


def test_entropy_on_1_atm_is_converted_to_1_bar():
    """A gas's S° on 1 atm is R ln 1.01325 = 0.1094 J/(mol K) lower than on 1 bar
    (ideal gas, S(p) = S° - R ln(p/p°))."""
    body = """\
user_species:
  NH3k:
    formula: NH3
    source: "invented for the test"
{pressure}    formation_data:
      enthalpy: "-45.94 kJ/mol"
      entropy: "192.77 J/(mol K)"
      cp: "35.6 J/(mol K)"
"""
    s_bar = _case("    standard_pressure: 1 bar\n", body).database["NH3k"].entropy(298.15)
    s_atm = _case("    standard_pressure: 1 atm\n", body).database["NH3k"].entropy(298.15)
    assert float(s_atm - s_bar) == pytest.approx(R * math.log(1.01325), rel=1e-9)
