"""The equilibrium solver with Peng-Robinson fugacity coefficients (``gas_model="peng-robinson"``).

Outside references, named beside each check:

* measurements: A. T. Larson, R. L. Dodge, "The ammonia equilibrium", J. Am. Chem. Soc.
  45 (1923) 2918-2930 (10-100 atm) and A. T. Larson, "The ammonia equilibrium at high
  pressures", J. Am. Chem. Soc. 46 (1924) 367-372 (300-1000 atm): equilibrium NH3 mole
  percent from a 3:1 H2:N2 feed, values as commonly reproduced in textbooks (from memory);
* cantera (PyPI ``cantera``) as an independent Peng-Robinson implementation: its ln φ at
  our equilibrium composition, and the K equation of ammonia synthesis solved with
  scipy.optimize.brentq on the extent with cantera's φ (no eqdesign code in that loop);
* elsewhere eqdesign's own Peng-Robinson module recomputes ln φ at the answer; that
  module is checked against cantera and NIST data in ``test_peng_robinson.py``.

Equation of state: D.-Y. Peng, D. B. Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59.
Critical constants come from the bundled database (``data/species.yaml``, each with its
source).

These are model checks only.  Ammonia, methanol and synthesis-gas mixtures at hundreds of
bar are toxic, flammable and stored at high pressure; real plant design follows local
codes and licensed engineering practice, not these numbers.
"""
from __future__ import annotations

import textwrap
import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

from eqdesign.solve import NotConvergedWarning, equilibrium
from eqdesign.solve.core.problem import element_matrix
from eqdesign.thermo import P_STANDARD, Reaction
from eqdesign.thermo.peng_robinson import (
    CubicParameters, binary_interaction_matrix, log_fugacity_coefficients,
)

ATM = 101325.0                       # [Pa]
AMMONIA = ["N2", "H2", "NH3"]
FEED_3_TO_1 = {"N2": 1.0, "H2": 3.0}
SYNTHESIS = "N2 + 3 H2 = 2 NH3"

#: Equilibrium NH3 mole percent from a 3:1 H2:N2 feed (from memory): Larson and Dodge,
#: J. Am. Chem. Soc. 45 (1923) 2918 for 10-100 atm; Larson, J. Am. Chem. Soc. 46 (1924)
#: 367 for 300-1000 atm.
LARSON_DODGE_PRESSURE_ATM = (10.0, 30.0, 50.0, 100.0, 300.0, 600.0, 1000.0)
LARSON_DODGE_NH3_PERCENT = {
    400.0: (3.85, 10.09, 15.27, 25.12, 47.00, 65.20, 79.82),
    450.0: (2.04, 5.80, 9.17, 16.36, 35.5, 53.6, 69.4),
    500.0: (1.21, 3.49, 5.56, 10.61, 26.44, 42.15, 57.47),
}


def _solve(*args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NotConvergedWarning)
        return equilibrium(*args, **kwargs)


def _ammonia_percent(T_celsius, gas_model, pressures_atm=LARSON_DODGE_PRESSURE_ATM):
    res = _solve(AMMONIA, FEED_3_TO_1, T_celsius + 273.15, np.asarray(pressures_atm) * ATM,
                 gas_model=gas_model)
    assert res.all_converged
    return 100.0 * res.mole_fractions["NH3"]


# --------------------------------------------------------------------------- Larson and Dodge
@pytest.mark.parametrize("T_celsius", [400.0, 450.0, 500.0])
def test_ammonia_at_300_atm_peng_robinson_beats_ideal_gas_against_larson(T_celsius):
    """NH3 at 300 atm from a 3:1 H2:N2 feed against A. T. Larson, J. Am. Chem. Soc. 46
    (1924) 367 (values from memory): the Peng-Robinson answer lies within 5 % (relative) of
    the measurement at 400 and 450 degC, 6 % at 500 degC, and closer to it than the
    ideal-gas answer.

    Side by side at 450 degC (NH3 mole percent; eqdesign with the bundled NASA TM-4513
    data and critical constants, at the time of writing):

    ========  =========  ==============  ====================================
    P [atm]   ideal gas  Peng-Robinson   measured (Larson and Dodge 1923,
                                         Larson 1924; from memory)
    ========  =========  ==============  ====================================
    100       16.19      16.71           16.36
    300       31.99      35.37           35.5
    600       43.76      52.34           53.6
    ========  =========  ==============  ====================================

    At 300 atm the same comparison reads 43.03 / 48.58 / 47.00 at 400 degC and
    23.09 / 25.00 / 26.44 at 500 degC.  Above 300 atm the Peng-Robinson answer still
    falls short of the measurements (1000 atm, 450 degC: 66.31 against 69.4).

    Hydrogen takes the effective critical constants of Gunn, Chueh and Prausnitz, AIChE J.
    12 (1966) 937 (see ``quantum_critical_constants``).  With hydrogen's classical
    constants the Peng-Robinson column read 16.88 / 35.44 / 51.38 (and 63.97 at 1000 atm;
    48.03 at 400 degC and 25.37 at 500 degC, 300 atm): the effective constants bring 100,
    600 and 1000 atm closer to the measurements, move 300 atm by less than 0.1 mol %, and
    take 500 degC, 300 atm from 4.0 % to 5.4 % below the measurement, hence the 6 %
    bound there.
    """
    k = LARSON_DODGE_PRESSURE_ATM.index(300.0)
    measured = LARSON_DODGE_NH3_PERCENT[T_celsius][k]
    ideal = _ammonia_percent(T_celsius, "ideal", [300.0])[0]
    real = _ammonia_percent(T_celsius, "peng-robinson", [300.0])[0]
    assert abs(real - measured) < abs(ideal - measured)
    assert real == pytest.approx(measured, rel=0.06 if T_celsius == 500.0 else 0.05)


def test_ammonia_at_450_C_up_to_1000_atm_against_larson():
    """NH3 mole percent from a 3:1 H2:N2 feed at 450 degC, Peng-Robinson with hydrogen's
    effective critical constants (Gunn, Chueh, Prausnitz, AIChE J. 12 (1966) 937), against
    Larson and Dodge, J. Am. Chem. Soc. 45 (1923) 2918 and Larson, J. Am. Chem. Soc. 46
    (1924) 367 (from memory): 35.5 at 300 atm, 53.6 at 600 atm, 69.4 at 1000 atm; within
    3 % (relative) at 300 and 600 atm and 5 % at 1000 atm.  Measured here: 35.37, 52.34,
    66.31 (-0.4 %, -2.4 %, -4.5 %); with hydrogen's classical constants 35.44, 51.38, 63.97
    (-4.1 % at 600 atm, -7.8 % at 1000 atm)."""
    real = _ammonia_percent(450.0, "peng-robinson", [300.0, 600.0, 1000.0])
    assert real[0] == pytest.approx(35.5, rel=0.03)
    assert real[1] == pytest.approx(53.6, rel=0.03)
    assert real[2] == pytest.approx(69.4, rel=0.05)


def test_ammonia_side_by_side_table_at_450_C(record_property, capsys):
    """The 450 degC table of the docstring above, recomputed: ideal, Peng-Robinson and
    measured (Larson and Dodge 1923, Larson 1924; from memory) at every pressure of the
    measurements.  The ideal and real answers at the same conditions are both available;
    the real-gas correction grows with pressure and always raises NH3 here (φ_N2 and
    φ_H2 above 1, φ_NH3 near or below 1: K_φ < 1, so K_y = K / (K_φ (P/P°)^-2) is
    larger than for an ideal gas)."""
    ideal = _ammonia_percent(450.0, "ideal")
    real = _ammonia_percent(450.0, "peng-robinson")
    measured = np.array(LARSON_DODGE_NH3_PERCENT[450.0])
    lines = ["P [atm]  ideal [%]  Peng-Robinson [%]  measured [%] (from memory)"]
    for p, a, b, c in zip(LARSON_DODGE_PRESSURE_ATM, ideal, real, measured):
        lines.append(f"{p:7.0f}  {a:9.2f}  {b:17.2f}  {c:12.2f}")
    table = "\n".join(lines)
    record_property("ammonia_450C_table", table)
    with capsys.disabled():
        print("\n[NH3 from 3:1 H2:N2 at 450 degC]\n" + table)
    assert np.all(real > ideal)
    assert np.all(np.diff(real - ideal) > 0)
    for p, a, b in ((100.0, 16.19, 16.71), (300.0, 31.99, 35.37), (600.0, 43.76, 52.34)):
        k = LARSON_DODGE_PRESSURE_ATM.index(p)
        assert (ideal[k], real[k]) == pytest.approx((a, b), abs=0.006)   # the docstring table


# --------------------------------------------------------------------------- K_phi, Q/K
def _cantera_pr_ln_phi(db, names, T_quantum=None):
    """ln φ(T [K], P [Pa], y) from cantera's Peng-Robinson phase with the same critical
    constants (k_ij = 0, as bundled for N2-H2-NH3; every acentric factor below 0.491, where
    cantera's kappa polynomial equals the 1976 one).  With ``T_quantum`` [K], H2 takes the
    effective constants of Gunn, Chueh, Prausnitz, AIChE J. 12 (1966) 937 at that
    temperature (Tc = 43.6 K/(1 + 21.8 K/(M T)), Pc = 20.5 atm/(1 + 44.2 K/(M T)),
    M = 2.016 g/mol, acentric factor 0; from memory), typed in here independently."""
    import cantera as ct
    elements = sorted({e for n in names for e in db[n].elements})
    species = []
    for n in names:
        sp, c = db[n], db[n].critical
        assert c.omega <= 0.491
        Tc, Pc, omega = c.Tc, c.Pc, c.omega
        if n == "H2" and T_quantum is not None:
            Tc = 43.6 / (1.0 + 21.8 / (2.016 * T_quantum))
            Pc = 20.5 * ATM / (1.0 + 44.2 / (2.016 * T_quantum))
            omega = 0.0
        comp = ", ".join(f"{e}: {v:g}" for e, v in sp.elements.items())
        eos = (f"critical-parameters: {{critical-temperature: {Tc!r}, critical-pressure: {Pc!r}, "
               f"acentric-factor: {omega!r}}}")
        if n == "H2" and T_quantum is not None:
            # eqdesign keeps sqrt(a_i) = sqrt(a_c,i) (1 + kappa (1 - sqrt(T/Tc))) signed; above
            # T = 13.5 Tc that root is negative for H2, so the cross terms a_ij change sign.
            # cantera squares the root; its per-pair a_ij (binary-a) restores the sign.
            kappa = 0.37464
            root = 1.0 + kappa * (1.0 - np.sqrt(T_quantum / Tc))
            a_c = 0.45723552892 * (8.314462618 * Tc) ** 2 / Pc
            b = 0.0777960739 * 8.314462618 * Tc / Pc
            cross = []
            for m in names:
                if m != n:
                    cm = db[m].critical
                    a_cm = 0.45723552892 * (8.314462618 * cm.Tc) ** 2 / cm.Pc
                    a_ij = float(np.sign(root) * np.sqrt(a_c * a_cm)) * 1e6      # Pa m^6/kmol^2
                    cross.append(f"{m}: {a_ij!r} Pa*m^6/kmol^2")
            eos = (f"equation-of-state: {{model: Peng-Robinson, a: {a_c * 1e6!r} Pa*m^6/kmol^2, "
                   f"b: {b * 1e3!r} m^3/kmol, acentric-factor: {omega!r}, "
                   f"binary-a: {{{', '.join(cross)}}}}}")
        species.append(textwrap.dedent(f"""\
            - name: {n}
              composition: {{{comp}}}
              thermo: {{model: constant-cp, T0: 298.15 K, h0: 0 J/mol, s0: 150 J/mol/K, cp0: 30 J/mol/K}}
            """) + f"  {eos}\n")
    text = textwrap.dedent(f"""\
        phases:
        - name: gas
          thermo: Peng-Robinson
          elements: [{", ".join(elements)}]
          species: [{", ".join(names)}]
          state: {{T: 700 K, P: 1 bar, X: {{{names[0]}: 1}}}}
        species:
        """) + "".join(species)
    phase = ct.Solution(yaml=text)

    def ln_phi(T, P, y):
        phase.TPX = T, P, np.asarray(y, dtype=float)
        RT = ct.gas_constant * T
        return phase.chemical_potentials / RT - phase.standard_gibbs_RT - np.log(phase.X)
    return ln_phi


def test_K_phi_and_quotient_for_ammonia_synthesis_against_cantera_peng_robinson(db):
    """Named reaction N2 + 3 H2 = 2 NH3, Peng-Robinson, 400-500 degC, 100-1000 atm:

    * ``K_phi()`` equals exp(Σ ν ln φ) with ln φ from cantera's Peng-Robinson phase at our
      composition (independent implementation; H2 with its effective critical constants at
      each temperature, typed into cantera), to 1e-9 relative, and exactly the ln φ the
      result carries;
    * ``quotient_over_K()`` = 1 to 1e-9 with real-gas activities φ y P/P°;
    * the NH3 fraction equals the root of K = K_φ K_y (P/P°)^Δν solved with
      scipy.optimize.brentq on the extent, φ from cantera at each trial composition,
      to 1e-9 relative;
    * the ideal-gas answer at the same conditions has K_φ = 1 and Q/K = 1 too."""
    T = np.repeat([673.15, 723.15, 773.15], 4)
    P = np.tile([100.0, 300.0, 600.0, 1000.0], 3) * ATM
    real = _solve(AMMONIA, FEED_3_TO_1, T, P, reactions=[SYNTHESIS], gas_model="peng-robinson")
    ideal = _solve(AMMONIA, FEED_3_TO_1, T, P, reactions=[SYNTHESIS])
    assert real.all_converged and ideal.all_converged
    nu = np.array([-1.0, -3.0, 2.0])                       # N2, H2, NH3
    idx = [real.species.index(n) for n in AMMONIA]
    ln_phi_at = {float(t): _cantera_pr_ln_phi(db, AMMONIA, T_quantum=float(t)) for t in np.unique(T)}

    def ln_phi_ct(T, P, y):
        return ln_phi_at[float(T)](T, P, y)
    reaction = Reaction.parse(SYNTHESIS)
    K_phi = real.K_phi()[SYNTHESIS]
    assert np.allclose(K_phi, np.exp((real.ln_phi_array[:, idx] * nu).sum(axis=1)), rtol=1e-12)
    assert np.allclose(real.quotient_over_K()[SYNTHESIS], 1.0, rtol=0, atol=1e-9)
    assert np.allclose(ideal.K_phi()[SYNTHESIS], 1.0, rtol=0, atol=0)
    assert np.allclose(ideal.quotient_over_K()[SYNTHESIS], 1.0, rtol=0, atol=1e-9)
    for i in range(T.size):
        y = real.mole_fraction_array[i, idx]
        assert K_phi[i] == pytest.approx(np.exp(nu @ ln_phi_ct(T[i], P[i], y)), rel=1e-9)
        ln_K = float(reaction.ln_K(T[i]))

        def residual(xi, T=T[i], P=P[i], ln_K=ln_K):
            n = np.array([1.0 - xi, 3.0 - 3.0 * xi, 2.0 * xi])
            y = n / n.sum()
            return nu @ (np.log(y * P / P_STANDARD) + ln_phi_ct(T, P, y)) - ln_K

        xi = brentq(residual, 1e-9, 1.0 - 1e-9, xtol=1e-15, rtol=1e-14)
        y_ref = 2.0 * xi / (4.0 - 2.0 * xi)
        assert y[2] == pytest.approx(y_ref, rel=1e-9), (T[i], P[i])
        assert y[2] > ideal.mole_fraction_array[i, idx[2]]       # the two answers differ


# --------------------------------------------------------------------------- up to 1000 bar
def _ln_phi_eqdesign(db, res, names):
    """ln φ recomputed with eqdesign.thermo.peng_robinson at the result's composition."""
    params = CubicParameters.from_species([db[n] for n in names],
                                          interaction=binary_interaction_matrix(names),
                                          quantum_gases=True)
    y = np.stack([res.mole_fractions[n] for n in names], axis=-1).reshape(-1, len(names))
    return log_fugacity_coefficients(params, np.ravel(res.T), np.ravel(res.P), y)


def _check_real_gas_answer(db, res, names, reactions):
    """Every state converged or flagged; converged ones conserve elements (1e-10 of the
    atoms fed) and satisfy Σ ν (g°/RT + ln(φ y P/P°)) = 0 for each reaction given, with φ
    recomputed independently of the solver loop.  Returns the number flagged."""
    ok = np.ravel(res.converged)
    amounts = res.amount_array.reshape(-1, len(res.species))
    assert np.all(np.isnan(amounts[~ok]))
    _, A = element_matrix([db[n] for n in res.species])
    feed = res.feed_array.reshape(-1, len(res.species))
    b0 = feed[ok] @ A.T
    assert np.all(np.abs(amounts[ok] @ A.T - b0).max(axis=1) <= 1e-10 * b0.sum(axis=1))
    ln_phi = _ln_phi_eqdesign(db, res, names)[ok]
    y = np.stack([np.ravel(res.mole_fractions[n]) for n in names], axis=-1)[ok]
    g0 = res.g0_RT.reshape(-1, len(res.species))[ok][:, [res.species.index(n) for n in names]]
    mu = g0 + np.log(y * (np.ravel(res.P)[ok] / P_STANDARD)[:, None]) + ln_phi
    for text in reactions:
        r = Reaction.parse(text)
        nu = np.zeros(len(names))
        for n, v in r.stoichiometry.items():
            nu[names.index(n)] = v
        assert np.abs(mu @ nu).max() < 1e-7, text
    return int((~ok).sum())


def test_near_critical_methane_carbon_dioxide(db, record_property):
    """CO2-rich CH4/CO2 (2-50 % CH4) at 290-310 K and 40-140 bar, around the mixture's
    critical region (pure CO2: 304.2 K, 73.9 bar), with the dry-reforming reaction
    CH4 + CO2 = 2 CO + 2 H2 named (its products stay at trace level, 1e-11 to 1e-8):
    every state converged or flagged; converged ones conserve the elements and satisfy
    the real-gas equilibrium condition with φ_CO2 as low as about 0.3.

    Model limit, not checked here: the gas model always takes the vapour (largest) root of
    the cubic.  At 290 K, 60 bar and 2 % CH4 the liquid-like root has the lower residual
    Gibbs energy (about -1040 against -983 J/mol), so that answer describes a metastable
    vapour; nothing in the result says so."""
    names = ["CH4", "CO2", "CO", "H2"]
    rx = "CH4 + CO2 = 2 CO + 2 H2"
    T, P, x = np.meshgrid([290.0, 300.0, 310.0], np.linspace(40e5, 140e5, 11),
                          np.linspace(0.02, 0.5, 13), indexing="ij")
    res = _solve(names, {"CH4": x, "CO2": 1.0 - x}, T, P, reactions=[rx], gas_model="peng-robinson")
    flagged = _check_real_gas_answer(db, res, names, [rx])
    record_property("near_critical_flagged", f"{flagged}/{res.converged.size}")
    assert flagged == 0
    qk = res.quotient_over_K()[rx]
    assert np.allclose(qk, 1.0, rtol=0, atol=1e-8)
    assert np.nanmin(res.ln_phi_array[..., names.index("CO2")]) < np.log(0.35)


@pytest.mark.parametrize("mode", ["named reactions", "all species"])
def test_carbon_dioxide_rich_methanol_synthesis_up_to_1000_bar(db, mode, record_property):
    """Methanol synthesis from a CO2-rich gas (20 % CO2, 5 % CO, 72 % H2, 3 % CH4) at
    460-580 K and 10-1000 bar with Peng-Robinson: methanol formation and reverse shift
    named, or every species free to form (methanation included); every state converged
    or flagged, converged ones conserve the elements and satisfy the real-gas equilibrium
    condition of each reaction (φ recomputed at the answer)."""
    names = ["CO", "CO2", "H2", "H2O", "CH3OH", "CH4"]
    named = ["CO + 2 H2 = CH3OH", "CO2 + H2 = CO + H2O"]
    checks = named + (["CO + 3 H2 = CH4 + H2O"] if mode == "all species" else [])
    T, P = np.meshgrid(np.linspace(460.0, 580.0, 7), np.geomspace(10e5, 1000e5, 12), indexing="ij")
    feed = {"CO2": 0.20, "CO": 0.05, "H2": 0.72, "CH4": 0.03}
    res = _solve(names, feed, T, P, reactions=named if mode == "named reactions" else None,
                 gas_model="peng-robinson")
    flagged = _check_real_gas_answer(db, res, names, checks)
    record_property("methanol_flagged", f"{flagged}/{res.converged.size}")
    assert flagged == 0
    if mode == "named reactions":
        assert np.allclose(res.amounts["CH4"], 0.03, rtol=1e-12)          # inert here
        ideal = _solve(names, feed, T, P, reactions=named)
        assert ideal.all_converged
        hi = P == P.max()
        assert np.all(res.mole_fractions["CH3OH"][hi] > ideal.mole_fractions["CH3OH"][hi])


# --------------------------------------------------------------------------- missing constants
def test_species_without_critical_constants_are_named():
    """Peng-Robinson needs Tc, Pc and ω for every gas species; OH and H have none in the
    bundled database, and the error names exactly those (word for word)."""
    with pytest.raises(ValueError) as info:
        equilibrium(["H2", "O2", "H2O", "OH", "H"], {"H2": 2.0, "O2": 1.0}, 2500.0, 1e5,
                    gas_model="peng-robinson")
    assert str(info.value) == ("Peng-Robinson needs the critical temperature, critical pressure "
                               "and acentric factor of every species; missing for: OH, H")
    # the same species list is fine for an ideal gas, and graphite (condensed) needs none
    assert equilibrium(["H2", "O2", "H2O", "OH", "H"], {"H2": 2.0, "O2": 1.0}, 2500.0, 1e5).all_converged
    assert equilibrium(["CH4", "H2", "C(gr)"], {"CH4": 1.0, "H2": 1.0}, 900.0, 1e5,
                       gas_model="peng-robinson").all_converged


def test_condensation_flag_marks_states_where_the_gas_would_be_liquid():
    """The result flags states where a liquid-like root is the stable one.

    CO2 vapour pressure at 290 K is about 5.2 MPa and NH3's at 300 K about 1.06 MPa
    (NIST Chemistry WebBook saturation tables, from memory): a 98 % CO2 gas is a vapour at
    40 bar and liquid at 60 and 100 bar; nearly pure NH3 at 300 K and 300 atm is liquid;
    ammonia synthesis gas at 450 degC and 300 atm is a gas.  Phase splitting of a mixture
    (a dew point) is not detected by this flag: it compares the roots of the cubic at the
    mixture's own composition only.
    """
    import warnings as _w
    from eqdesign.solve.core.result import CondensationWarning
    with _w.catch_warnings():
        _w.simplefilter("ignore", CondensationWarning)
        co2 = equilibrium(["CH4", "CO2"], {"CH4": 0.02, "CO2": 0.98}, 290.0,
                          np.array([40e5, 60e5, 100e5]), gas_model="peng-robinson")
        nh3 = equilibrium(["N2", "H2", "NH3"], {"N2": 1.0, "H2": 3.0}, np.array([300.0, 723.15]),
                          300 * 101325.0, gas_model="peng-robinson")
    assert list(co2.condensation_possible) == [False, True, True]
    assert list(nh3.condensation_possible) == [True, False]
    assert "may condense" in nh3.message
    with pytest.warns(CondensationWarning):
        equilibrium(["N2", "H2", "NH3"], {"N2": 1.0, "H2": 3.0}, 300.0, 300 * 101325.0,
                    gas_model="peng-robinson")
    ideal = equilibrium(["N2", "H2", "NH3"], {"N2": 1.0, "H2": 3.0}, 300.0, 300 * 101325.0)
    assert ideal.condensation_possible is None


def test_condensation_flag_finds_dew_points_of_gas_mixtures():
    """Tangent-plane stability test (Michelsen 1982) flags gases below their dew point.

    Water in nitrogen at 10 bar, 10 % H2O (partial pressure 1 bar): water's vapour pressure
    is 0.035 bar at 300 K, 0.416 bar at 350 K, 2.458 bar at 400 K (NIST steam tables,
    from memory), so the gas condenses at 300 and 350 K and not at 400 or 450 K.
    Methanol-synthesis gas at 80 bar with ~21-23 % CH3OH (partial pressure ~17-18 bar):
    methanol's vapour pressure is about 8 bar at 400 K and about 25 bar at 450 K (NIST
    Chemistry WebBook, from memory), so it condenses at 320 and 400 K but not at 450 K.
    """
    import warnings as _w
    from eqdesign.solve.core.result import CondensationWarning
    with _w.catch_warnings():
        _w.simplefilter("ignore", CondensationWarning)
        wet = equilibrium(["N2", "H2O"], {"N2": 0.9, "H2O": 0.1}, np.array([300.0, 350.0, 400.0, 450.0]),
                          10e5, gas_model="peng-robinson")
        meoh = equilibrium(["CO", "CO2", "H2", "H2O", "CH3OH"], {"CO": 0.1, "CO2": 0.05, "H2": 0.8},
                           np.array([320.0, 400.0, 450.0, 523.15]), 80e5, gas_model="peng-robinson",
                           reactions=["CO + 2 H2 = CH3OH", "CO2 + H2 = CO + H2O"])
    assert list(wet.condensation_possible) == [True, True, False, False]
    assert list(meoh.condensation_possible) == [True, True, False, False]
    assert np.all(meoh.mole_fractions["CH3OH"][:3] > 0.2)
