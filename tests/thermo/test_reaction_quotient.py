"""Reaction quotient, direction of change and the K / Kp / Kc / Kx conversions.

Definitions checked (ideal gas, 1 bar standard state; IUPAC Green Book conventions,
from memory): Q = Π (y_i P/P°)^ν_i over gases, Kp = K (P°/unit)^Δn, Kc = Kp (unit/RT)^Δn,
Kx = K (P/P°)^-Δn.
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from eqdesign.thermo import (
    K_to_Kp, K_to_Kx, Kc_to_Kp, Kp_to_Kc, R, Reaction, ReactionError, reaction_quotient,
    shift_direction,
)
from eqdesign.thermo.reactions import Kc_unit, Kp_to_K, Kp_unit, Kx_to_K

Y = {"N2": 0.25, "H2": 0.70, "NH3": 0.05}
Q_EXPECTED = 0.05 ** 2 / (0.25 * 0.7 ** 3) / 100.0 ** 2       # at 100 bar, by hand


def test_alias_gives_the_same_quotient_as_the_name():
    """An alias ('ammonia', 'hydrogen') used to give Q = NaN, reported as 'reverse'."""
    Q = reaction_quotient("N2 + 3 H2 = 2 NH3", {"nitrogen": 0.25, "hydrogen": 0.70, "ammonia": 0.05},
                          "100 bar")
    assert Q == pytest.approx(Q_EXPECTED, rel=1e-12)


def test_misspelt_species_is_refused_with_the_nearest_names():
    """A misspelling used to count as y = 0, giving Q = 0 and 'forward'."""
    with pytest.raises(ReactionError) as err:
        reaction_quotient("N2 + 3 H2 = 2 NH3", {"N2": 0.25, "H2": 0.70, "NH4": 0.05}, "100 bar")
    assert "unknown species 'NH4'" in str(err.value)
    assert "NH3" in str(err.value)


def test_a_gas_of_the_reaction_left_out_is_refused():
    with pytest.raises(ReactionError, match=r"no mole fraction given for NH3; give every gas"):
        reaction_quotient("N2 + 3 H2 = 2 NH3", {"N2": 0.25, "H2": 0.75}, "100 bar")
    # an explicit zero is a real answer: no ammonia, Q = 0, the mixture reacts forward
    assert reaction_quotient("N2 + 3 H2 = 2 NH3", {"N2": 0.25, "H2": 0.75, "NH3": 0.0}, "100 bar") == 0.0


def test_amounts_are_refused_unless_normalise_is_asked_for():
    """Amounts in place of mole fractions used to be accepted (Q off by a factor of 100 here)."""
    amounts = {"N2": 25.0, "H2": 70.0, "NH3": 5.0}                      # kmol/h
    with pytest.raises(ReactionError) as err:
        reaction_quotient("N2 + 3 H2 = 2 NH3", amounts, "100 bar")
    assert str(err.value) == ("reaction quotient of 'N2 + 3 H2 = 2 NH3': mole fractions sum to 100, not 1; "
                              "give mole fractions, or pass normalise=True to divide amounts by their sum")
    Q = reaction_quotient("N2 + 3 H2 = 2 NH3", amounts, "100 bar", normalise=True)
    assert Q == pytest.approx(Q_EXPECTED, rel=1e-12)


def test_inert_gases_count_in_the_sum_and_condensed_phases_have_unit_activity():
    y = {"N2": 0.20, "H2": 0.70, "NH3": 0.05, "Ar": 0.05}
    Q = reaction_quotient("N2 + 3 H2 = 2 NH3", y, "100 bar")
    assert Q == pytest.approx(0.05 ** 2 / (0.20 * 0.7 ** 3) / 1e4, rel=1e-12)
    # Boudouard: Q = y_CO² P / (y_CO2 P°); graphite does not enter
    assert reaction_quotient("C(gr) + CO2 = 2 CO", {"CO": 0.4, "CO2": 0.6}, "2 bar") == pytest.approx(
        0.4 ** 2 * 2 / 0.6, rel=1e-12)
    with pytest.raises(ReactionError, match="C\\(gr\\) is a condensed phase"):
        reaction_quotient("C(gr) + CO2 = 2 CO", {"CO": 0.4, "CO2": 0.6, "C(gr)": 0.0}, "2 bar")


def test_quotient_and_direction_take_arrays_of_states():
    """shift_direction used to fail on the array reaction_quotient returns."""
    rxn = Reaction.parse("N2 + 3 H2 = 2 NH3")
    y_nh3 = np.array([0.0, 0.05, 0.30])
    y = {"N2": (1 - y_nh3) / 4, "H2": 3 * (1 - y_nh3) / 4, "NH3": y_nh3}
    Q = reaction_quotient(rxn, y, np.array([100e5, 100e5, 100e5]))
    assert Q.shape == (3,)
    K = rxn.equilibrium_constant(700.0)
    directions = shift_direction(Q, K)
    expected = ["forward" if q < K else "reverse" for q in Q]
    assert directions.tolist() == expected
    assert shift_direction(np.array([1.0, 2.0]), np.array([1.0, 1.0])).tolist() == ["at equilibrium", "reverse"]
    assert shift_direction(0.5, 2.0) == "forward"
    with pytest.raises(ValueError, match="NaN"):
        shift_direction(np.array([1.0, np.nan]), 1.0)


def test_chaining_the_conversions_with_their_defaults_round_trips():
    """K_to_Kp (bar) into Kp_to_Kc used to be off by 1e5^Δn (it expected Pa^Δn)."""
    K, dn, T = 2.5e-4, -2.0, 700.0
    Kc = Kp_to_Kc(K_to_Kp(K, dn), dn, T)                   # (mol/m³)^-2
    assert Kc == pytest.approx(K * (1e5 / (R * T)) ** dn, rel=1e-14)
    assert Kp_to_K(Kc_to_Kp(Kc, dn, T), dn) == pytest.approx(K, rel=1e-14)
    assert Kx_to_K(K_to_Kx(K, dn, "200 bar"), dn, "200 bar") == pytest.approx(K, rel=1e-14)
    # explicit units: Kc in mol/L, Kp in atm
    Kc_L = Kp_to_Kc(K_to_Kp(K, dn, 101325.0), dn, T, pressure_unit=101325.0, concentration_unit=1e3)
    assert Kc_L == pytest.approx(K * (1e5 / (R * T * 1e3)) ** dn, rel=1e-14)


def test_unit_strings_name_the_units():
    assert Kp_unit(-2) == "bar^-2"
    assert Kp_unit(-2, pressure_unit=1.0) == "Pa^-2"
    assert Kp_unit(0.5, pressure_unit=101325.0) == "atm^0.5"
    assert Kc_unit(-2) == "(mol/m³)^-2"
    assert Kc_unit(1, concentration_unit=1e3) == "(mol/L)^1"
    assert Kc_unit(0) == "1"
    assert math.isclose(K_to_Kp(1.0, 1.0, 1.0), 1e5)
