"""Approach to equilibrium of measured compositions (solve/studies/plant_approach.py)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq

from eqdesign.solve import equilibrium
from eqdesign.solve.studies.plant_approach import (
    PlantApproachInputError, approach_to_equilibrium, dry_to_wet, wet_to_dry,
)
from eqdesign.thermo.models import P_STANDARD
from eqdesign.thermo.peng_robinson import CubicParameters, binary_interaction_matrix, log_fugacity_coefficients

from cantera_reference import cantera_phase

WGS = "CO + H2O = CO2 + H2"
SMR = "CH4 + H2O = CO + 3 H2"

# invented plant analyses (wet basis)
SHIFT_OUTLET = {"CO": 0.004, "H2O": 0.21, "CO2": 0.14, "H2": 0.52, "N2": 0.126}
REFORMER_OUTLET = {"CH4": 0.04, "H2O": 0.31, "CO": 0.09, "CO2": 0.05, "H2": 0.50, "N2": 0.01}


def _cantera_ln_K(gas, index, T):
    """ln K (1 bar standard state) from cantera's concentration-basis Kc [kmol/m³]^Δn,
    K = Kc (R T / P°)^Δn, with Δn from cantera's own stoichiometry."""
    import cantera as ct
    gas.TP = T, P_STANDARD
    dn = gas.product_stoich_coeffs[:, index].sum() - gas.reactant_stoich_coeffs[:, index].sum()
    return np.log(gas.equilibrium_constants[index]) + dn * np.log(ct.gas_constant * T / P_STANDARD)


@pytest.mark.parametrize("reaction, analysis, T, P", [
    (WGS, SHIFT_OUTLET, 503.15, 30e5),            # Δn = 0
    (SMR, REFORMER_OUTLET, 1143.15, 30e5),        # Δn = +2: the pressure enters Q
])
def test_quotient_and_equilibrium_temperature_against_cantera(db, reaction, analysis, T, P):
    """Q, K(T) and T_eq against cantera (a reference library) holding the same NASA
    7-coefficient data (McBride, Gordon, Reno, NASA TM-4513, 1993): cantera's Kc is turned
    into K, Q is written out by hand, and T_eq found by scipy's brentq; agreement to 0.05 K."""
    names = list(analysis)
    gas, _ = cantera_phase(names, db, reactions=[reaction.replace("=", "<=>")])
    res = approach_to_equilibrium(reaction, {k: [v] for k, v in analysis.items()}, T, P)
    rec = res[reaction]
    total = sum(analysis.values())
    rxn_nu = {"CO": -1, "H2O": -1, "CO2": 1, "H2": 1} if reaction == WGS else \
        {"CH4": -1, "H2O": -1, "CO": 1, "H2": 3}
    ln_q = sum(nu * np.log(analysis[k] / total * P / P_STANDARD) for k, nu in rxn_nu.items())
    assert rec.quotient[0] == pytest.approx(np.exp(ln_q), rel=1e-12)
    assert np.log(rec.equilibrium_constant[0]) == pytest.approx(_cantera_ln_K(gas, 0, T), abs=1e-9)
    T_eq = brentq(lambda t: _cantera_ln_K(gas, 0, t) - ln_q, 400.0, 1400.0, xtol=1e-9)
    assert rec.equilibrium_temperature[0] == pytest.approx(T_eq, abs=0.05)
    assert rec.found[0] and res.usable[0]


def test_shift_outlet_short_of_equilibrium_sign_convention():
    """Exothermic shift: a mixture with Q < K(T) is short of equilibrium, T_eq > T and the
    approach is T_eq - T > 0 (module convention)."""
    rec = approach_to_equilibrium(WGS, {k: [v] for k, v in SHIFT_OUTLET.items()}, "230 degC", "30 bar")[WGS]
    assert rec.direction[0] == "forward"
    assert rec.equilibrium_temperature[0] > 503.15
    assert rec.approach[0] == pytest.approx(rec.equilibrium_temperature[0] - 503.15, abs=1e-12)


def test_reformer_outlet_endothermic_sign_convention():
    """Endothermic reforming short of equilibrium: T_eq < T and approach T - T_eq > 0."""
    analysis = dict(REFORMER_OUTLET, CH4=0.08)          # more methane than equilibrium at 870 degC
    rec = approach_to_equilibrium(SMR, {k: [v] for k, v in analysis.items()}, "870 degC", "30 bar")[SMR]
    assert rec.direction[0] == "forward"
    assert rec.equilibrium_temperature[0] < 1143.15
    assert rec.approach[0] == pytest.approx(1143.15 - rec.equilibrium_temperature[0], abs=1e-12)


def test_solver_equilibrium_gives_zero_approach():
    """A composition computed at equilibrium by our solver (two reactions, a sweep of six
    temperatures) gives T_eq = T and approach 0 within 1e-6 K for both reactions."""
    T = np.linspace(973.15, 1223.15, 6)
    eq = equilibrium(["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1.0, "H2O": 3.0}, T, "25 bar",
                     reactions=[SMR, WGS])
    assert eq.all_converged
    res = approach_to_equilibrium([SMR, WGS], eq.mole_fractions, T, "25 bar")
    for rec in res.reactions:
        assert np.all(rec.found)
        assert np.max(np.abs(rec.approach)) < 1e-6
        assert np.max(np.abs(rec.equilibrium_temperature - T)) < 1e-6
        assert set(rec.direction) == {"at equilibrium"}


def test_peng_robinson_quotient_and_zero_approach(db):
    """Peng-Robinson Q = Q_ideal × Π φ_i^ν_i with φ from thermo/peng_robinson.py, and a
    Peng-Robinson equilibrium of our solver (methanol at 100 bar) gives approach 0 (1e-6 K)
    with gas_model='peng-robinson' but not with the ideal gas."""
    rxn = "CO + 2 H2 = CH3OH"
    T = np.array([490.0, 520.0, 550.0])
    eq = equilibrium(["CO", "H2", "CH3OH"], {"CO": 1.0, "H2": 2.5}, T, "100 bar", reactions=[rxn],
                     gas_model="peng-robinson")
    assert eq.all_converged
    real = approach_to_equilibrium(rxn, eq.mole_fractions, T, "100 bar", gas_model="peng-robinson")
    ideal = approach_to_equilibrium(rxn, eq.mole_fractions, T, "100 bar")
    assert np.max(np.abs(real[rxn].approach)) < 1e-6
    assert np.min(np.abs(ideal[rxn].approach)) > 1.0
    names = list(real.species)
    params = CubicParameters.from_species([db[n] for n in names], interaction=binary_interaction_matrix(names),
                                          quantum_gases=True)
    ln_phi = log_fugacity_coefficients(params, T, np.full(3, 100e5), real.mole_fraction_array)
    nu = {"CO": -1.0, "H2": -2.0, "CH3OH": 1.0}
    ln_kphi = sum(nu[n] * ln_phi[:, names.index(n)] for n in nu)
    np.testing.assert_allclose(real[rxn].quotient, ideal[rxn].quotient * np.exp(ln_kphi), rtol=1e-12)


def test_dry_wet_round_trip():
    """A wet equilibrium composition taken to a dry analysis and back (with the measured water,
    or with the feed steam-to-carbon ratio through the oxygen balance) gives the same Q and T_eq."""
    T = np.array([1073.15, 1123.15])
    eq = equilibrium(["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1.0, "H2O": 3.0}, T, "30 bar",
                     reactions=[SMR, WGS])
    wet = approach_to_equilibrium([SMR, WGS], eq.mole_fractions, T + 15.0, "30 bar")
    dry, water = wet_to_dry(eq.mole_fractions)
    assert "H2O" not in dry and np.allclose(sum(dry.values()), 1.0)
    back, _ = dry_to_wet(dry, water=water)
    for k, v in eq.mole_fractions.items():
        np.testing.assert_allclose(back[k], v, rtol=1e-12)
    for kw in ({"water": water}, {"steam_ratio": 3.0}):
        res = approach_to_equilibrium([SMR, WGS], dry, T + 15.0, "30 bar", basis="dry", **kw)
        for a, b in zip(res.reactions, wet.reactions):
            np.testing.assert_allclose(a.quotient, b.quotient, rtol=1e-9)
            np.testing.assert_allclose(a.approach, b.approach, atol=1e-6)


def test_element_balance_flag_and_zero_reading():
    """Samples whose H/C ratio is off the feed's are flagged and not usable; a zero reading
    gives no T_eq and a per-sample status, the other samples are unaffected."""
    comp = {"CH4": [0.04, 0.04, 0.0], "H2O": [0.35, 0.35, 0.35], "CO": [0.09, 0.09, 0.09],
            "CO2": [0.05, 0.05, 0.05], "H2": [0.47, 0.67, 0.51]}     # sample 0 closes H/C and O/C
    res = approach_to_equilibrium(SMR, comp, "870 degC", "30 bar", feed={"CH4": 1, "H2O": 3},
                                  balance_tolerance=0.05)
    assert res.usable.tolist() == [True, False, False]
    assert res.sample_flags[1].startswith("element balance: H/C of the analysis is off the feed's by +")
    assert res[SMR].status[2] == "zero reading of CH4: Q is 0 or infinite, no equilibrium temperature"
    assert np.isnan(res[SMR].approach[2]) and np.isfinite(res[SMR].approach[0])


def test_percent_strings_and_aliases():
    """Readings as 'mol%' strings and species by alias give the same answer as fractions."""
    a = approach_to_equilibrium(WGS, {k: [v] for k, v in SHIFT_OUTLET.items()}, "230 degC", "30 bar")
    comp = {"carbon monoxide": ["0.4 mol%"], "steam": ["21 mol%"], "CO2": ["14 %"], "hydrogen": ["52 mol%"],
            "nitrogen": ["12.6 mol%"]}
    b = approach_to_equilibrium(WGS, comp, ["230 degC"], ["30 bar"])
    assert b[WGS].approach[0] == pytest.approx(a[WGS].approach[0], abs=1e-9)


def test_no_root_in_data_range_is_a_status_not_an_answer():
    """A shift analysis with almost no CO2 has Q far below K everywhere in the data range."""
    comp = {"CO": [0.3], "H2O": [0.3], "CO2": [1e-30], "H2": [0.4]}
    rec = approach_to_equilibrium(WGS, comp, "400 degC", "10 bar")[WGS]
    assert not rec.found[0] and np.isnan(rec.equilibrium_temperature[0])
    assert rec.status[0].startswith("K stays above Q over the data range")


@pytest.mark.parametrize("kwargs, message", [
    (dict(composition={"CO": 0.1, "H2O": 0.2, "CO2": 0.1, "H2": 0.5, "methanal": 0.1}),
     "composition['methanal']: unknown species 'methanal'"),
    (dict(composition={"CO": 0.1, "H2O": 0.2, "H2": 0.7}),
     "reaction 'CO + H2O = CO2 + H2': CO2 is not in the analysis; add a CO2 column to the analysis"),
    (dict(composition={"CO": 0.1, "CO2": 0.2, "H2": 0.7}, basis="dry"),
     "a dry analysis needs exactly one of water (the measured wet-basis water fraction) or steam_ratio "
     "(the feed steam-to-carbon ratio)"),
    (dict(composition={"CO": 0.1, "H2O": 0.2, "CO2": 0.2, "H2": 0.5}, basis="moist"),
     "basis 'moist': use 'wet' (analysis includes water) or 'dry'"),
    (dict(composition={"CO": 0.1, "H2O": 0.2, "CO2": 0.2, "H2": 0.5}, water=0.2),
     "water and steam_ratio apply to a dry analysis; set basis='dry'"),
    (dict(composition={"CO": -0.1, "H2O": 0.2, "CO2": 0.2, "H2": 0.5}),
     "composition['CO']: readings must be finite and not negative; correct or drop the sample"),
])
def test_input_messages(kwargs, message):
    """Bad input: one message naming the key and the fix (word for word where it is ours)."""
    args = dict(kwargs)
    comp = args.pop("composition")
    with pytest.raises(PlantApproachInputError) as err:
        approach_to_equilibrium(WGS, comp, "230 degC", "30 bar", **args)
    assert str(err.value).startswith(message)


def test_docstring_examples_of_the_module():
    """The module's docstring examples run and give the values they quote."""
    import doctest
    import eqdesign.solve.studies.plant_approach as module
    assert doctest.testmod(module, optionflags=doctest.ELLIPSIS).failed == 0
