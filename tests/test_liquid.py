"""Concentration-basis liquid equilibria (solve/studies/liquid.py) and K conversions."""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.optimize import brentq

from eqdesign.solve.studies.liquid import (
    LiquidInputError, LiquidReaction, liquid_equilibrium, liquid_map, removal_sweep,
)
from eqdesign.thermo.models import P_STANDARD, R
from eqdesign.thermo.reactions import K_to_Kp, K_to_Kx, Kc_to_Kp, Kp_to_K, Kp_to_Kc, Kx_to_K, Reaction

from cantera_reference import cantera_phase

ESTER = LiquidReaction.define("CH3COOH + C2H5OH = CH3COOC2H5 + H2O", K=4.0, at="25 degC",
                              source="classic textbook value for ethyl acetate (from memory)")


def test_equimolar_esterification_two_thirds():
    """Acid + alcohol, equimolar, K = 4: conversion 2/3 (the classic ethyl acetate
    result of reaction-engineering texts, e.g. J. M. Smith, Chemical Engineering Kinetics;
    from memory)."""
    r = liquid_equilibrium(ESTER, {"CH3COOH": 1.0, "C2H5OH": 1.0}, "25 degC", volume="0.12 L",
                           key="CH3COOH")
    assert r.all_converged
    assert r.conversion() == pytest.approx(2.0 / 3.0, abs=1e-10)
    rows = {row[0]: row for row in r.species_table()}
    assert rows["CH3COOC2H5"][1:4] == pytest.approx((0.0, 2 / 3, 2 / 3), abs=1e-10)
    assert rows["CH3COOH"][1:4] == pytest.approx((1.0, -2 / 3, 1 / 3), abs=1e-10)
    assert r.K_units == ("-",)


def test_three_to_one_alcohol_excess_ninety_percent():
    """3:1 alcohol excess, K = 4: conversion 0.90 (classic textbook value, from memory); the
    exact root of x² = 4 (1 - x)(3 - x) is (16 - √112)/6."""
    r = liquid_equilibrium(ESTER, {"CH3COOH": 1.0, "C2H5OH": 3.0}, 298.15, volume="0.25 L", key="CH3COOH")
    assert round(r.conversion(), 2) == 0.90
    assert r.conversion() == pytest.approx((16 - math.sqrt(112)) / 6, abs=1e-10)


def test_two_simultaneous_reactions_against_hand_solution():
    """Dimerisation 2 A = D (Kc1 = 0.8 L/mol) with A + B = C (Kc2 = 2.5 L/mol) in 2 L: the
    pair of equations solved independently by eliminating ξ2 (inner brentq) and solving
    for ξ1 (outer brentq); invented numbers, hand solution by scipy."""
    V, A0, B0 = 2.0, 3.0, 1.5
    K1, K2 = 0.8, 2.5

    def xi2_of(xi1):
        a = A0 - 2 * xi1
        return brentq(lambda x2: x2 / V - K2 * (a - x2) / V * (B0 - x2) / V, 0.0, min(a, B0), xtol=1e-15)

    def eq1(xi1):
        x2 = xi2_of(xi1)
        return xi1 / V - K1 * ((A0 - 2 * xi1 - x2) / V) ** 2

    xi1 = brentq(eq1, 0.0, A0 / 2 - 1e-12, xtol=1e-15)
    xi2 = xi2_of(xi1)
    rxns = [LiquidReaction.define("2 A = D", K="0.8 L/mol"), LiquidReaction.define("A + B = C", K=2.5)]
    r = liquid_equilibrium(rxns, {"A": A0, "B": B0}, 300.0, volume="2 L")
    assert r.all_converged
    assert r.extents["2 A = D"] == pytest.approx(xi1, abs=1e-9)
    assert r.extents["A + B = C"] == pytest.approx(xi2, abs=1e-9)
    assert r.amounts["A"] == pytest.approx(A0 - 2 * xi1 - xi2, abs=1e-9)
    assert r.K_units == ("L/mol", "L/mol")


def test_van_t_hoff_with_heat_capacity_change():
    """Kc(T) from K at 298.15 K, ΔrH° and constant ΔrCp° against the closed form of the
    integrated van 't Hoff equation with Kirchhoff's law:
    ln K = ln K0 - ΔH0/R (1/T - 1/T0) + ΔCp/R (ln(T/T0) + T0/T - 1)."""
    K0, T0, dH, dCp = 4.0, 298.15, -4000.0, 25.0
    rxn = LiquidReaction.define("A + B = C + D", K=K0, at=T0, delta_h=f"{dH / 1000} kJ/mol", delta_cp=dCp)
    T = np.array([280.0, 320.0, 360.0])
    expected = np.log(K0) - dH / R * (1 / T - 1 / T0) + dCp / R * (np.log(T / T0) + T0 / T - 1)
    np.testing.assert_allclose(np.log(rxn.concentration_K(T)), expected, rtol=0, atol=1e-10)


def test_map_matches_pointwise_solves_and_density_route():
    """A temperature × feed-ratio map in one call equals single solves; with a density the
    volume is the conserved mass over the density (molar masses of the database and one given)."""
    rxn = LiquidReaction.define("CH3COOH + C2H5OH = CH3COOC2H5 + H2O", K=4.0, delta_h="-3.6 kJ/mol")
    kw = dict(density="900 kg/m**3", molar_masses={"CH3COOC2H5": 88.106}, key="CH3COOH")
    m = liquid_map(rxn, {"CH3COOH": 2.0, "H2O": 0.5}, ["20 degC", "60 degC", "90 degC"], vary="C2H5OH",
                   per="CH3COOH", ratios=[0.5, 1.0, 2.0, 4.0], **kw)
    X = m.conversion()
    assert X.shape == (3, 4) and m.result.all_converged
    single = liquid_equilibrium(rxn, {"CH3COOH": 2.0, "H2O": 0.5, "C2H5OH": 4.0}, "60 degC", **kw)
    assert X[1, 2] == pytest.approx(single.conversion(), abs=1e-12)
    mass = 2.0 * 60.052 + 0.5 * 18.015 + 4.0 * 46.068            # g, molar masses from memory
    assert float(single.volume) == pytest.approx(mass / 1000 / 900, rel=1e-3)
    assert np.all(np.diff(X, axis=1) > 0)                        # more alcohol, more conversion
    assert np.all(np.diff(X, axis=0) < 0)                        # exothermic: less at higher T


@settings(max_examples=40, deadline=None)
@given(k1=st.floats(1e-3, 1e3), k2=st.floats(1e-3, 1e3),
       a=st.floats(0.01, 10), b=st.floats(0.01, 10), c=st.floats(0.0, 5), v=st.floats(0.1, 10))
def test_property_equilibrium_conditions_and_bounds(k1, k2, a, b, c, v):
    """For any positive Kc and feed: amounts stay non-negative, the stoichiometry balances
    (A + B + C + 2 D + E conserved for A + B = C, C + A = D... here checked by extents), and
    each reaction's quotient equals its Kc."""
    rxns = [LiquidReaction.define("A + B = C", K=k1), LiquidReaction.define("C + A = D + E", K=k2)]
    r = liquid_equilibrium(rxns, {"A": a, "B": b, "C": c}, 300.0, volume=v / 1000)
    assert r.all_converged
    n = r.amounts
    assert min(n.values()) >= 0
    xi1, xi2 = r.extents.values()
    assert n["A"] == pytest.approx(a - xi1 - xi2, abs=1e-9 * (a + b + c))
    conc = r.concentrations
    q1 = math.log(conc["C"]) - math.log(conc["A"]) - math.log(conc["B"])
    q2 = math.log(conc["D"]) + math.log(conc["E"]) - math.log(conc["C"]) - math.log(conc["A"])
    assert q1 == pytest.approx(math.log(k1), abs=1e-8)
    assert q2 == pytest.approx(math.log(k2), abs=1e-8)


def test_states_outside_the_k_data_range_are_refused_per_state():
    r = liquid_equilibrium(ESTER, {"CH3COOH": 1.0, "C2H5OH": 1.0}, [300.0, 600.0], volume="1 L")
    assert r.converged.tolist() == [True, False]
    assert np.isnan(r.amount_array[1]).all()
    assert r.flags[1] == ("temperature outside the 250-500 K range of the K data of "
                          "'CH3COOH + C2H5OH = CH3COOC2H5 + H2O'")


@pytest.mark.parametrize("call, message", [
    (lambda: LiquidReaction.define("2 A = D", K="2 mol/L"),
     "reaction '2 A = D': K 2.0 mol / l is not in (mol/L)^-1, the unit of this reaction's concentration-basis K"),
    (lambda: liquid_equilibrium(ESTER, {"CH3COOH": 1.0}, 300.0, volume="1 L", density="900 kg/m**3"),
     "give exactly one of volume (e.g. '1 L') or density (e.g. '900 kg/m**3')"),
    (lambda: liquid_equilibrium(ESTER, {"CH3COOH": 1.0, "C2H5OH": 1.0}, 300.0, density="900 kg/m**3"),
     "density: the molar mass of 'CH3COOC2H5' is needed for the volume; give "
     "molar_masses={'CH3COOC2H5': g/mol} or a volume instead"),
    (lambda: liquid_equilibrium([ESTER, ESTER], {"CH3COOH": 1.0}, 300.0, volume="1 L"),
     "reactions: they are linearly dependent; drop the ones that are sums of the others"),
])
def test_input_messages(call, message):
    with pytest.raises(LiquidInputError) as err:
        call()
    assert str(err.value).startswith(message)


# ------------------------------------------------------------- K conversions
@settings(max_examples=60, deadline=None)
@given(K=st.floats(1e-30, 1e30), dn=st.sampled_from([-2.0, -1.0, -0.5, 0.0, 1.0, 2.0, 3.0]),
       T=st.floats(200.0, 3000.0), P=st.floats(1e3, 1e8))
def test_kc_kp_kx_round_trips(K, dn, T, P):
    """K -> Kp (atm) -> K, Kp (Pa) -> Kc -> Kp and K -> Kx -> K return the start to rounding."""
    assert Kp_to_K(K_to_Kp(K, dn, pressure_unit=101325.0), dn, pressure_unit=101325.0) == pytest.approx(K, rel=1e-13)
    Kp_pa = K_to_Kp(K, dn, pressure_unit=1.0)
    assert Kc_to_Kp(Kp_to_Kc(Kp_pa, dn, T), dn, T) == pytest.approx(Kp_pa, rel=1e-13)
    assert Kx_to_K(K_to_Kx(K, dn, P), dn, P) == pytest.approx(K, rel=1e-13)


def test_kc_from_k_against_cantera(db):
    """Kc of N2 + 3 H2 = 2 NH3 (Δn = -2) from our K via K_to_Kp (Pa) and Kp_to_Kc (Pa in) against
    cantera's concentration-basis constant for the same NASA data (kmol/m³ -> mol/m³)."""
    rxn = Reaction.parse("N2 + 3 H2 = 2 NH3", db)
    gas, _ = cantera_phase(["N2", "H2", "NH3"], db, reactions=["N2 + 3 H2 <=> 2 NH3"])
    for T in (600.0, 700.0, 800.0):
        gas.TP = T, P_STANDARD
        kc_cantera = gas.equilibrium_constants[0] * 1000.0 ** -2          # (mol/m³)^-2
        kc_ours = Kp_to_Kc(K_to_Kp(rxn.equilibrium_constant(T), -2, pressure_unit=1.0), -2, T, pressure_unit=1.0)
        assert kc_ours == pytest.approx(kc_cantera, rel=1e-9)


def test_docstring_examples_of_the_module():
    import doctest
    import eqdesign.solve.studies.liquid as module
    assert doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE).failed == 0


def test_water_removal_lever_against_hand_solution():
    """Equimolar charge, K = 4: equilibrium (2/3), all water taken out, re-equilibrated: the
    extra extent x solves (2/3 + x) x = 4 (1/3 - x)², i.e. 27 x² - 30 x + 4 = 0 (hand algebra).
    More removal steps raise the conversion further, and no removal leaves 2/3."""
    r = removal_sweep(ESTER, {"CH3COOH": 1.0, "C2H5OH": 1.0}, 298.15, species="H2O",
                      removed_fraction=[0.0, 1.0], volume="0.1 L", key="CH3COOH")
    x = (30 - math.sqrt(900 - 432)) / 54
    np.testing.assert_allclose(r.conversion(), [2 / 3, 2 / 3 + x], atol=1e-10)
    assert r.removed_amount.tolist() == pytest.approx([0.0, 2 / 3], abs=1e-10)
    three = removal_sweep(ESTER, {"CH3COOH": 1.0, "C2H5OH": 1.0}, 298.15, species="H2O",
                          removed_fraction=[0.5, 1.0], stages=3, volume="0.1 L", key="CH3COOH")
    assert np.all(three.conversion() > r.conversion())
