"""The equilibrium solver against outside references.

Reference library: cantera (PyPI ``cantera``), whose equilibrium solvers are run on
phases built from *our* NASA coefficients on the same 1 bar standard state
(``cantera_reference.cantera_phase``), so differences measure the solvers alone.
Independent check for named-reactions mode: the K equations of the named reactions
solved with scipy.optimize.
"""
from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy.optimize import root

from cantera_reference import cantera_phase
from eqdesign.solve import equilibrium
from eqdesign.thermo import R, Reaction

TOL = 1e-6   # absolute on mole fractions (the acceptance level)


def _grid(T_lo, T_hi, P_lo, P_hi, nT=20, nP=10):
    T, P = np.meshgrid(np.linspace(T_lo, T_hi, nT), np.geomspace(P_lo, P_hi, nP), indexing="ij")
    return T.ravel(), P.ravel()


def _cantera_gas_sweep(db, names, feed, T, P):
    gas, _ = cantera_phase(names, db)
    X0 = {k: v for k, v in feed.items()}
    out = np.empty((T.size, len(names)))
    for i, (t, p) in enumerate(zip(T, P)):
        gas.TPX = t, p, X0
        gas.equilibrate("TP")
        out[i] = [gas[n].X[0] for n in names]
    return out


GAS_SYSTEMS = {
    "ammonia synthesis with argon and methane inerts": (
        ["N2", "H2", "NH3", "Ar", "CH4"], {"N2": 1.0, "H2": 3.0, "Ar": 0.08, "CH4": 0.05},
        (600.0, 900.0, 1e5, 300e5)),
    "steam reforming with shift": (
        ["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1.0, "H2O": 3.0},
        (700.0, 1200.0, 1e5, 40e5)),
    "SO2 oxidation in air": (
        ["SO2", "O2", "SO3", "N2"], {"SO2": 0.10, "O2": 0.11, "N2": 0.79},
        (600.0, 1100.0, 1e5, 10e5)),
    "ethylbenzene dehydrogenation with steam": (
        ["C8H10", "C8H8", "H2", "H2O"], {"C8H10": 1.0, "H2O": 10.0},
        (800.0, 1000.0, 0.3e5, 2e5)),
}


@pytest.mark.parametrize("system", sorted(GAS_SYSTEMS))
def test_gas_systems_against_cantera(db, system):
    """Mole fractions agree with cantera's equilibrate('TP') to 1e-6 absolute over a
    200-point (T, P) grid."""
    names, feed, (T_lo, T_hi, P_lo, P_hi) = GAS_SYSTEMS[system]
    T, P = _grid(T_lo, T_hi, P_lo, P_hi)
    res = equilibrium(names, feed, T, P)
    assert res.all_converged
    ours = np.stack([res.mole_fractions[n] for n in names], axis=1)
    ref = _cantera_gas_sweep(db, names, feed, T, P)
    assert np.abs(ours - ref).max() < TOL


def test_carbon_hydrogen_oxygen_with_graphite_against_cantera(db):
    """C-H-O gas with solid graphite: cantera's multiphase equilibrium (Mixture,
    equilibrate('TP')) on 200+ points; states where cantera's own solver fails are
    skipped (its failure rate is what the stress test below covers)."""
    import cantera as ct
    names = ["CH4", "H2O", "CO", "CO2", "H2", "C(gr)"]
    T, P = _grid(700.0, 1300.0, 1e5, 30e5, nT=25, nP=10)
    feed = {"CH4": 1.0, "H2O": 1.0}
    res = equilibrium(names, feed, T, P)
    assert res.all_converged
    gas, (graphite,) = cantera_phase(names, db)
    compared = 0
    for i, (t, p) in enumerate(zip(T, P)):
        gas.TPX = t, p, {k: v for k, v in feed.items()}
        graphite.TP = t, p
        mix = ct.Mixture([(gas, sum(feed.values())), (graphite, 0.0)])
        mix.T, mix.P = t, p
        ok = False
        for solver in ("gibbs", "vcs"):       # cantera's two multiphase solvers
            try:
                with warnings.catch_warnings():
                    warnings.simplefilter("ignore")
                    mix.equilibrate("TP", solver=solver, max_steps=5000)
                ok = True
                break
            except ct.CanteraError:
                gas.TPX = t, p, {k: v for k, v in feed.items()}
                mix = ct.Mixture([(gas, sum(feed.values())), (graphite, 0.0)])
                mix.T, mix.P = t, p
        if not ok:
            continue
        gas_moles = mix.phase_moles(0)
        carbon = mix.phase_moles(1)
        y_ref = np.array([gas[n].X[0] for n in names[:-1]])
        y = np.array([res.mole_fractions[n][i] for n in names[:-1]])
        assert np.abs(y - y_ref).max() < TOL, (t, p)
        n_c = res.amounts["C(gr)"][i]
        total_in = sum(feed.values())
        # same feed basis on both sides: cantera's moles are per its own total; compare fractions
        assert n_c / (n_c + res.gas_amount[i]) == pytest.approx(carbon / (carbon + gas_moles), abs=TOL)
        compared += 1
    assert compared >= 200
    present = res.condensed_present["C(gr)"]
    assert present.any() and (~present).any()       # the grid crosses the carbon boundary


def test_methanol_synthesis_named_reactions_against_K_equations(db):
    """Named-reactions mode: CO + 2 H2 = CH3OH and CO2 + 3 H2 = CH3OH + H2O only (no
    methanation although CH4 is listed); checked against the two K equations solved
    independently for the extents (scipy.optimize.root), over 200 (T, P) points."""
    rx = ["CO + 2 H2 = CH3OH", "CO2 + 3 H2 = CH3OH + H2O"]
    names = ["CO", "CO2", "H2", "H2O", "CH3OH", "CH4"]
    feed = {"CO": 0.15, "CO2": 0.08, "H2": 0.70, "CH4": 0.05, "H2O": 0.02}
    T, P = _grid(450.0, 600.0, 20e5, 120e5)
    res = equilibrium(names, feed, T, P, reactions=rx)
    assert res.all_converged
    assert np.allclose(res.amounts["CH4"], 0.05, rtol=0, atol=1e-14)   # inert: not methanated
    rxns = [Reaction.parse(r) for r in rx]
    nu = np.zeros((len(names), 2))
    for j, r in enumerate(rxns):
        for n, v in r.stoichiometry.items():
            nu[names.index(n), j] = v
    n0 = np.array([feed.get(n, 0.0) for n in names])
    previous = None
    for i in range(T.size):
        lnK = np.array([r.ln_K(T[i]) for r in rxns])

        def equations(xi):
            n = n0 + nu @ xi
            y = n / n.sum()
            ln_a = np.log(np.maximum(y, 1e-300) * P[i] / 1e5)
            return nu.T @ ln_a - lnK

        # continuation along the grid, with a few fixed starts as fallback
        for guess in ([previous] if previous is not None else []) + [[0.1, 0.01], [0.05, 0.05], [0.01, 0.0]]:
            sol = root(equations, x0=guess, method="lm", options={"xtol": 1e-15, "ftol": 1e-15})
            n_try = n0 + nu @ sol.x
            if np.all(n_try > 0) and np.abs(equations(sol.x)).max() < 1e-10:
                break
        else:
            raise AssertionError(f"independent K-equation solve failed at T={T[i]}, P={P[i]}")
        previous = list(sol.x)
        n = n0 + nu @ sol.x
        y_ref = n / n.sum()
        y = np.array([res.mole_fractions[nm][i] for nm in names])
        assert np.abs(y - y_ref).max() < TOL
    qk = res.quotient_over_K()
    for text in rx:
        assert np.allclose(qk[text], 1.0, atol=1e-8)


def test_named_reactions_mode_equals_all_species_mode_when_reactions_span_everything(db):
    """When the named reactions span every independent reaction of the species set, both
    modes must give the same answer (Smith and Missen 1982: the invariants then equal
    the element balances)."""
    names = ["CH4", "H2O", "CO", "CO2", "H2"]
    feed = {"CH4": 1.0, "H2O": 2.5}
    T = np.linspace(750.0, 1150.0, 9)
    a = equilibrium(names, feed, T, 20e5)
    b = equilibrium(names, feed, T, 20e5, reactions=["CH4 + H2O = CO + 3 H2", "CO + H2O = CO2 + H2"])
    for n in names:
        assert np.allclose(a.mole_fractions[n], b.mole_fractions[n], atol=1e-10)


def test_calcination_solids_appear_and_vanish_with_the_decomposition_pressure():
    """CaCO3(s) = CaO(s) + CO2: while both solids coexist, p_CO2 equals K (pure solids at
    unit activity); once p_CO2 could exceed K no CaCO3 remains.  K = 1 atm near 1171 K
    (898 degC), the decomposition temperature of calcite under 1 atm CO2 (CRC Handbook of
    Chemistry and Physics, from memory); the TM-4513 data must place it within 10 K."""
    from scipy.optimize import brentq
    from eqdesign.thermo import equilibrium_constant
    T = np.array([900.0, 1000.0, 1100.0, 1150.0, 1180.0])
    res = equilibrium(["CaCO3(s)", "CaO(s)", "CO2", "N2"], {"CaCO3(s)": 1.0, "N2": 1.0}, T, 101325.0)
    assert res.all_converged
    K = equilibrium_constant("CaCO3(s) = CaO(s) + CO2", T)
    both = (res.condensed["CaCO3(s)"] > 0) & (res.condensed["CaO(s)"] > 0)
    assert list(both) == [True, True, True, False, False]
    assert np.allclose(res.partial_pressures["CO2"][both] / 1e5, K[both], rtol=1e-8)
    gone = ~both
    assert np.all(res.condensed["CaCO3(s)"][gone] == 0) and np.allclose(res.condensed["CaO(s)"][gone], 1.0)
    T_dec = brentq(lambda t: equilibrium_constant("CaCO3(s) = CaO(s) + CO2", t) - 1.01325, 1000.0, 1199.0)
    assert T_dec == pytest.approx(1171.0, abs=10.0)
