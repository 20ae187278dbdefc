"""Stress tests of the equilibrium solver at the edges of its range.

* equilibrium constants from 1e-40 to 1e40 (trace species down to 1e-40 mole fraction);
* pressures from 0.01 to 1000 bar, temperatures from 250 to 3000 K;
* the whole C-H-O composition triangle with graphite;
* minimal reproducers of the feeds on which the solver does not converge yet.

Outside references: cantera (PyPI ``cantera``, version pinned by the environment) run on
phases built from our own NASA coefficients (``cantera_reference.cantera_phase``), so
differences measure the solvers alone; and single equilibrium-constant equations solved
independently with scipy.optimize.brentq.  Species data: NASA TM-4513 polynomials as
bundled (``data/species.yaml``), except in the K-range test, whose isomer pair is
invented demo data (no source) chosen to give a known K(T) exactly.
"""
from __future__ import annotations

import warnings

import numpy as np
import pytest
from scipy.optimize import brentq

from cantera_reference import cantera_phase
from eqdesign.solve import EquilibriumInputError, NotConvergedWarning, equilibrium
from eqdesign.solve.core.problem import element_matrix
from eqdesign.thermo import P_STANDARD, R, Reaction, SpeciesDatabase, bundled_database

ATM = 101325.0            # [Pa]


def _solve(*args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NotConvergedWarning)
        return equilibrium(*args, **kwargs)


def _assert_conserved(res, database, rtol=1e-10):
    """Element balance of every converged state to ``rtol`` of the atoms fed; NaN and
    ``converged`` False for the others (a failure is flagged, never returned as an answer)."""
    _, A = element_matrix([database[n] for n in res.species])
    n = res.amount_array.reshape(-1, len(res.species))
    n0 = res.feed_array.reshape(-1, len(res.species))
    ok = np.asarray(res.converged).reshape(-1)
    assert np.all(np.isnan(n[~ok]))
    assert np.all(np.isfinite(n[ok])) and np.all(n[ok] >= 0.0)
    b0 = n0[ok] @ A.T
    err = np.abs(n[ok] @ A.T - b0).max(axis=1) / b0.sum(axis=1)
    assert err.size == 0 or err.max() <= rtol


# --------------------------------------------------------------------------- K from 1e-40 to 1e40
#: Invented demo isomer pair (no source): equal constant cp, so ΔrH° and ΔrS° of
#: ISO-A = ISO-B do not depend on T and ln K = -ΔH/(RT) + ΔS/R exactly.  The values put
#: log10 K at -40 at 300 K and +40 at 1500 K.
DELTA_H = 80.0 * np.log(10.0) * R / (1.0 / 300.0 - 1.0 / 1500.0)     # [J/mol]
DELTA_S = (40.0 * np.log(10.0) + DELTA_H / (R * 1500.0)) * R          # [J/(mol K)]
ISOMER_TEXT = f"""
references:
  DEMO_ISOMERS:
    cite: "invented demo data for a solver stress test (no source)"
    standard_pressure_Pa: 100000.0
species:
  ISO-A:
    formula: "C4H10"
    elements: {{C: 4, H: 10}}
    phase: gas
    thermo: {{model: formation-data, formation_enthalpy: 0.0, entropy: 300.0, cp: [100.0],
              T_bounds: [250.0, 1600.0], reference: DEMO_ISOMERS}}
  ISO-B:
    formula: "C4H10"
    elements: {{C: 4, H: 10}}
    phase: gas
    thermo: {{model: formation-data, formation_enthalpy: {float(DELTA_H)!r},
              entropy: {float(300.0 + DELTA_S)!r}, cp: [100.0],
              T_bounds: [250.0, 1600.0], reference: DEMO_ISOMERS}}
"""


@pytest.fixture(scope="module")
def isomer_database():
    demo = SpeciesDatabase.from_text(ISOMER_TEXT, origin="demo isomers")
    return bundled_database().extended(demo.species.values())


@pytest.mark.parametrize("mode", ["all species", "named reaction"])
def test_isomer_ratio_equals_K_from_1e_minus_40_to_1e40(isomer_database, mode):
    """y_B / y_A = K to 1e-8 relative for K = 1e-40 ... 1e40 (one decade apart), whichever
    isomer is fed, with and without an N2 diluent, from 0.01 to 1000 bar; the trace
    isomer's amount (down to 1e-40 mol fraction) is right to 1e-8 relative, not just
    small.  K is computed here from the invented ΔH and ΔS, not from the database."""
    assert R == pytest.approx(8.314462618, rel=1e-12)      # CODATA 2018 exact value
    decades = np.arange(-40, 41)
    T = 1.0 / (1.0 / 300.0 + (decades + 40) / 80.0 * (1.0 / 1500.0 - 1.0 / 300.0))
    ln_K = -DELTA_H / (R * T) + DELTA_S / R
    assert np.allclose(ln_K / np.log(10.0), decades, atol=1e-9)
    k = np.arange(T.size)
    feed_a = np.where(k % 2 == 0, 1.0, 0.0)                 # alternate the isomer fed
    feed_b = 1.0 - feed_a
    diluent = np.where(k % 3 == 0, 0.0, np.where(k % 3 == 1, 1.0, 1e3))
    P = np.geomspace(0.01e5, 1000e5, T.size)[::-1]
    feed = {"ISO-A": feed_a, "ISO-B": feed_b, "N2": diluent}
    reactions = ["ISO-A = ISO-B"] if mode == "named reaction" else None
    res = _solve(["ISO-A", "ISO-B", "N2"], feed, T, P, database=isomer_database, reactions=reactions)
    assert res.all_converged
    K = np.exp(ln_K)
    y = res.mole_fractions
    assert np.allclose(y["ISO-B"] / y["ISO-A"] / K, 1.0, rtol=0, atol=1e-8)
    n = res.amounts
    n_iso = feed_a + feed_b
    expected_b = n_iso * np.where(K < 1, K / (1.0 + K), 1.0 / (1.0 + 1.0 / K))
    expected_a = n_iso * np.where(K < 1, 1.0 / (1.0 + K), (1.0 / K) / (1.0 + 1.0 / K))
    assert np.allclose(n["ISO-B"] / expected_b, 1.0, rtol=0, atol=1e-8)
    assert np.allclose(n["ISO-A"] / expected_a, 1.0, rtol=0, atol=1e-8)
    assert min(y["ISO-A"].min(), y["ISO-B"].min()) < 1e-40       # the trace end is reached
    assert np.allclose(n["N2"], diluent, rtol=1e-10, atol=0)


# --------------------------------------------------------------------------- P from 0.01 to 1000 bar
def test_ammonia_from_1e_minus_2_to_1e3_bar_against_the_K_equation():
    """N2 + 3 H2 = 2 NH3 from a 3:1 H2:N2 feed with 2 % argon, ideal gas, 0.01 to 1000 bar
    at 500, 700 and 900 K: every mole fraction equals the root of the single K equation
    in the extent, solved independently with scipy.optimize.brentq, to 1e-8 relative."""
    reaction = Reaction.parse("N2 + 3 H2 = 2 NH3")
    T, P = np.meshgrid([500.0, 700.0, 900.0], np.geomspace(0.01e5, 1000e5, 16), indexing="ij")
    T, P = T.ravel(), P.ravel()
    feed = {"N2": 1.0, "H2": 3.0, "Ar": 0.08}
    res = _solve(["N2", "H2", "NH3", "Ar"], feed, T, P)
    assert res.all_converged
    for i in range(T.size):
        ln_K = float(reaction.ln_K(T[i]))

        def residual(xi):
            n = np.array([1.0 - xi, 3.0 - 3.0 * xi, 2.0 * xi, 0.08])
            y = n / n.sum()
            return 2 * np.log(y[2]) - np.log(y[0]) - 3 * np.log(y[1]) + 2 * np.log(P_STANDARD / P[i]) - ln_K

        xi = brentq(residual, 1e-300, 1.0 - 1e-15, xtol=1e-300, rtol=1e-15, maxiter=500)
        n = np.array([1.0 - xi, 3.0 - 3.0 * xi, 2.0 * xi, 0.08])
        y_ref = n / n.sum()
        y = np.array([res.mole_fractions[s][i] for s in ("N2", "H2", "NH3", "Ar")])
        assert np.allclose(y / y_ref, 1.0, rtol=0, atol=1e-8), (T[i], P[i])
    nh3 = res.mole_fractions["NH3"]
    assert nh3.min() < 1e-5 and nh3.max() > 0.8          # both ends of the range are exercised


# --------------------------------------------------------------------------- T from 250 to 3000 K
HYDROGEN_OXYGEN = ["H2", "O2", "H2O", "H", "O", "OH", "HO2", "H2O2"]


STOICHIOMETRIC = {"H2": 2.0, "O2": 1.0}


def _hydrogen_oxygen_grid():
    T, P = np.meshgrid(np.linspace(250.0, 3000.0, 23), [0.01e5, 1e5, 10e5, 100e5], indexing="ij")
    return T.ravel(), P.ravel()


@pytest.mark.parametrize("feed", [{"H2": 3.0, "O2": 1.0}, {"H2": 1.0, "O2": 2.0},
                                  {"H2": 2.0, "O2": 1.05}, {"H2O": 1.0, "H2": 0.01},
                                  STOICHIOMETRIC],
                         ids=["rich", "lean", "slightly lean", "steam with hydrogen",
                              "stoichiometric"])
def test_hydrogen_oxygen_radicals_250_to_3000_K_against_cantera(db, feed):
    """H2/O2/H2O with H, O, OH, HO2, H2O2 from 250 to 3000 K (inside the 200-6000 K range
    of every NASA TM-4513 fit used) and 0.01 to 100 bar: mole fractions equal cantera's
    equilibrate('TP') to 1e-6 absolute; elements conserved to 1e-10.  Every state
    converges except, at present, some of the exactly stoichiometric feed (flagged; see
    the next test)."""
    T, P = _hydrogen_oxygen_grid()
    res = _solve(HYDROGEN_OXYGEN, feed, T, P)
    _assert_conserved(res, db)
    if feed is not STOICHIOMETRIC:
        assert res.all_converged
    gas, _ = cantera_phase(HYDROGEN_OXYGEN, db)
    ours = np.stack([res.mole_fractions[n] for n in HYDROGEN_OXYGEN], axis=1)
    ref = np.empty_like(ours)
    for i in range(T.size):
        gas.TPX = T[i], P[i], feed
        gas.equilibrate("TP")
        ref[i] = [gas[n].X[0] for n in HYDROGEN_OXYGEN]
    ok = res.converged
    assert np.abs(ours[ok] - ref[ok]).max() < 1e-6
    assert res.mole_fractions["OH"][ok].max() > 1e-2         # radicals matter at the hot end


def test_hydrogen_oxygen_stoichiometric_every_state_converges():
    """The exactly stoichiometric 2:1 H2:O2 feed on the grid above: every state converges."""
    T, P = _hydrogen_oxygen_grid()
    assert _solve(HYDROGEN_OXYGEN, STOICHIOMETRIC, T, P).all_converged


# --------------------------------------------------------------------------- C-H-O triangle
TRIANGLE_SPECIES = ["CH4", "H2O", "CO", "CO2", "H2", "O2", "C2H6", "C2H4", "CH3OH", "C(gr)"]
TRIANGLE_STEP = 50                 # grid step 1/50 = 0.02 in atom fraction
TRIANGLE_T = (600.0, 923.0)        # [K], at 1 atm
#: Every grid point is also solved with cantera, with each of its two multiphase solvers
#: (about 0.3-0.6 s per solver and temperature here); raise to thin the sample.
CANTERA_SAMPLE_STRIDE = 1


def _triangle_grid():
    """Atom fractions (x_C, x_H, x_O) on the grid, without the pure-carbon vertex: fed as
    graphite alone there is no gas at all (every gas species listed holds H or O), and
    the solver needs a gas phase; that vertex is checked for its error message instead."""
    s = TRIANGLE_STEP
    pts = np.array([(i / s, j / s, (s - i - j) / s) for i in range(s + 1) for j in range(s + 1 - i)])
    return pts[pts[:, 0] < 1.0]


def _cantera_triangle(db, T, pts, solver):
    """cantera Mixture.equilibrate('TP') at each point: (gas mole fractions, graphite
    amount) or None where cantera's solver raises."""
    import cantera as ct
    gas, (graphite,) = cantera_phase(TRIANGLE_SPECIES, db)
    out = []
    for x_c, x_h, x_o in pts:
        gas.TPX = T, ATM, {"H2": x_h / 2, "O2": x_o / 2}
        graphite.TP = T, ATM
        mix = ct.Mixture([(gas, (x_h + x_o) / 2), (graphite, x_c)])
        mix.T, mix.P = T, ATM
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                mix.equilibrate("TP", solver=solver, max_steps=5000)
        except ct.CanteraError:
            out.append(None)
            continue
        out.append((np.array([gas[n].X[0] for n in TRIANGLE_SPECIES[:-1]]), mix.phase_moles(1)))
    return out


@pytest.fixture(scope="module")
def triangle(db):
    pts = _triangle_grid()
    feed = {"C(gr)": pts[:, 0], "H2": pts[:, 1] / 2, "O2": pts[:, 2] / 2}
    return pts, {T: _solve(TRIANGLE_SPECIES, feed, T, ATM) for T in TRIANGLE_T}


@pytest.mark.parametrize("T", TRIANGLE_T)
def test_triangle_every_state_conserved_or_flagged(db, triangle, T):
    """The whole C-H-O triangle (step 0.02 in atom fraction, 1325 points) at 1 atm: every
    converged state conserves C, H and O to 1e-10; every other state is NaN and flagged."""
    pts, results = triangle
    res = results[T]
    assert res.amount_array.shape == (pts.shape[0], len(TRIANGLE_SPECIES))
    _assert_conserved(res, db)


def test_triangle_pure_carbon_vertex_has_no_gas_phase():
    """Graphite alone: no listed gas species can form, and the error says so."""
    with pytest.raises(EquilibriumInputError, match="no gas species can be present"):
        equilibrium(TRIANGLE_SPECIES, {"C(gr)": 1.0}, 923.0, ATM)


@pytest.mark.parametrize("T", TRIANGLE_T)
def test_triangle_against_cantera_multiphase(db, triangle, T, record_property, capsys):
    """The triangle against cantera's multiphase equilibrium (Mixture, equilibrate('TP'),
    solver='gibbs' and solver='vcs' each on its own, from the same feed): gas mole
    fractions to 1e-6 absolute and the graphite amount to 1e-6 mol wherever both sides
    converge.  How often each cantera solver raises is recorded (record_property) and
    printed.  At the time of writing (cantera 3.2.0, all 1325 points): solver='gibbs'
    raised on 5 (0.4 %) at 600 K and 1 (0.1 %) at 923 K; solver='vcs' on 51 (3.8 %) and
    64 (4.8 %), 50 of them each time on the carbon-free edge, where the graphite phase
    holds no element it could take."""
    pts, results = triangle
    res = results[T]
    sample = np.arange(0, pts.shape[0], CANTERA_SAMPLE_STRIDE)
    ours_y = np.stack([res.mole_fractions[n] for n in TRIANGLE_SPECIES[:-1]], axis=1)
    ours_c = res.amounts["C(gr)"]
    compared = 0
    for solver in ("gibbs", "vcs"):
        ref = _cantera_triangle(db, T, pts[sample], solver)
        failed = sum(r is None for r in ref)
        record_property(f"cantera_{solver}_failures_{T:g}K", f"{failed}/{sample.size}")
        with capsys.disabled():
            print(f"\n[C-H-O triangle {T:g} K] cantera solver={solver!r} raised on {failed} of "
                  f"{sample.size} points ({100.0 * failed / sample.size:.1f} %); eqdesign did "
                  f"not converge on {int(np.sum(~res.converged[sample]))}")
        for q, r in zip(sample, ref):
            if r is None or not res.converged[q]:
                continue
            y_ref, carbon_ref = r
            assert np.abs(ours_y[q] - y_ref).max() < 1e-6, (solver, pts[q])
            assert abs(ours_c[q] - carbon_ref) < 1e-6, (solver, pts[q])
            compared += 1
    assert compared >= 0.6 * 2 * sample.size
    present = res.condensed_present["C(gr)"]
    assert present.any() and (~present[res.converged]).any()


@pytest.mark.parametrize("T", [
    600.0,
    923.0,
])
def test_triangle_every_point_converges(triangle, T):
    """Every point of the triangle except the pure-carbon vertex converges (in one batch)."""
    _, results = triangle
    assert results[T].all_converged


# --------------------------------------------------------------------------- reproducers
def _assert_equilibrium(res, database, reactions):
    """Converged, conserved, and Q/K = 1 (K from thermo.Reaction, the Gibbs route) for
    each reaction given, condensed species at unit activity."""
    assert res.all_converged, res.message
    _assert_conserved(res, database)
    names = list(res.species)
    y = res.mole_fraction_array
    for text in reactions:
        r = Reaction.parse(text)
        ln_q = 0.0
        for name, nu in r.stoichiometry.items():
            k = names.index(name)
            if res.gas_mask[k]:
                ln_q += nu * np.log(y[k] * res.P / P_STANDARD)
            else:
                assert res.amount_array[k] > 0
        assert ln_q - float(r.ln_K(res.T)) == pytest.approx(0.0, abs=1e-7), text


REPRODUCERS = [
    # fewer species than elements carry the mass (exactly stoichiometric or "pure" feeds, low T)
    pytest.param(["H2", "O2", "H2O"], {"H2O": 1.0}, 300.0, 1e5, ["2 H2O = 2 H2 + O2"],
                 id="steam at 300 K"),
    pytest.param(["H2", "O2", "H2O"], {"H2O": 1.0}, 250.0, 1e5, ["2 H2O = 2 H2 + O2"],
                 id="steam at 250 K"),
    pytest.param(["CO2", "CO", "O2", "C(gr)"], {"CO2": 1.0}, 400.0, 1e5, ["2 CO2 = 2 CO + O2"],
                 id="carbon dioxide at 400 K"),
    pytest.param(["CH4", "O2", "CO2", "H2O", "CO", "H2"], {"CH4": 1.0, "O2": 2.0}, 400.0, 1e5,
                 ["CO2 + H2 = CO + H2O"], id="stoichiometric methane combustion products at 400 K"),
    pytest.param(["CO2", "H2O", "CO", "H2", "O2", "CH4"], {"CO2": 1.0, "H2O": 1.0}, 500.0, 1e5,
                 ["CO2 + H2 = CO + H2O"], id="flue gas CO2 + H2O at 500 K"),
    pytest.param(["NH3", "O2", "N2", "H2O", "NO", "H2"], {"NH3": 1.0, "O2": 0.75}, 400.0, 1e5,
                 ["N2 + O2 = 2 NO"], id="ammonia burnt to N2 + H2O at 400 K"),
    # the gas-only phase set cannot hold the feed with every reachable gas species positive
    pytest.param(["CO", "CO2", "O2"], {"CO": 1.0}, 1000.0, 1e5, [],
                 id="CO alone, no carbon species to disproportionate into"),
    pytest.param(["CH4", "H2", "C(gr)"], {"C(gr)": 0.5, "H2": 0.25}, 900.0, 1e5,
                 ["CH4 = C(gr) + 2 H2"], id="graphite and hydrogen at 900 K"),
    pytest.param(["CH4", "H2", "C(gr)"], {"C(gr)": 1.0, "H2": 2.0}, 900.0, 1e5,
                 ["CH4 = C(gr) + 2 H2"], id="graphite and hydrogen as in methane at 900 K"),
    pytest.param(["CH4", "H2", "C(gr)"], {"C(gr)": 1.0, "H2": 2.0}, 1200.0, 1e5,
                 ["CH4 = C(gr) + 2 H2"], id="graphite and hydrogen as in methane at 1200 K"),
    pytest.param(TRIANGLE_SPECIES, {"C(gr)": 0.6, "H2": 0.1, "O2": 0.1}, 600.0, ATM,
                 ["CH4 = C(gr) + 2 H2", "CO2 + C(gr) = 2 CO", "CO + H2O = CO2 + H2"],
                 id="one graphite-rich triangle point alone at 600 K"),
]


@pytest.mark.parametrize("species, feed, T, P, reactions", REPRODUCERS)
def test_convergence_reproducers(db, species, feed, T, P, reactions):
    """Small feeds at the solver's former weak spots (equilibria carried by fewer species
    than elements; feeds the gas alone cannot hold), kept as regression checks.  Each must converge to an answer
    that conserves the elements and satisfies the K equations given (K from the NASA
    TM-4513 data by the Gibbs route, thermo.Reaction.ln_K)."""
    res = _solve(species, feed, T, P)
    _assert_equilibrium(res, db, reactions)
    if species == ["CO", "CO2", "O2"]:      # the only feasible state is pure CO
        assert res.amounts["CO"] == pytest.approx(1.0, rel=1e-12)
