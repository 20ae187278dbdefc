"""Property tests (hypothesis) of the equilibrium solver: invariants that hold for any feed,
temperature and pressure of a C-H-O-N system, with or without graphite.

What is checked comes from the definition of the problem, not from outside numbers:

* W. B. White, S. M. Johnson, G. B. Dantzig, "Chemical equilibrium in complex mixtures",
  J. Chem. Phys. 28 (1958) 751: at fixed T and P the equilibrium amounts minimise G
  subject to ``A n = b`` and ``n >= 0``, so the amounts conserve the elements, are
  non-negative, no feasible move lowers G, and the minimum (G is convex) does not depend on
  where the search starts.
* W. R. Smith, R. W. Missen, *Chemical Reaction Equilibrium Analysis: Theory and
  Algorithms*, Wiley (1982), ch. 2-3: when only named reactions proceed, the change of
  the amounts lies in the column space of the stoichiometric matrix (the reaction
  invariants are conserved) and every named reaction whose species are all present
  satisfies Σ ν_i μ_i = 0, i.e. Q/K = 1.

Each property is computed here with numpy (null spaces, least squares, G summed from the
standard chemical potentials), independently of the solver's own bookkeeping.

A state that does not converge must be flagged: ``converged`` False and every amount NaN.
The invariants are then checked on the converged states; which feeds do not converge at
present is pinned down, one reproducer each, in ``test_equilibrium_stress.py``.
"""
from __future__ import annotations

import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, event, example, given, settings
from hypothesis import strategies as st
from scipy.optimize import linprog

from eqdesign.solve import equilibrium
from eqdesign.solve.core.result import NotConvergedWarning, total_gibbs_RT
from eqdesign.solve.core.problem import element_matrix
from eqdesign.solve.core.newton import initial_state, minimise_gibbs
from eqdesign.thermo import P_STANDARD, Reaction, bundled_database

#: C-H-O-N species that may form (all-species mode), graphite included.
SPECIES = ("CH4", "H2O", "CO", "CO2", "H2", "O2", "N2", "NH3", "NO", "C2H6", "C2H4",
           "CH3OH", "HCN", "C(gr)")
#: Species a random feed is drawn from.
FEED_SPECIES = ("CH4", "H2O", "CO2", "O2", "N2", "H2", "NH3", "CO")

#: Reactions a random named-reactions problem is drawn from (one involves graphite).
REACTIONS = (
    "CH4 + H2O = CO + 3 H2",
    "CO + H2O = CO2 + H2",
    "N2 + 3 H2 = 2 NH3",
    "CO + 2 H2 = CH3OH",
    "2 CH4 = C2H6 + H2",
    "C2H6 = C2H4 + H2",
    "4 NH3 + 5 O2 = 4 NO + 6 H2O",
    "CH4 = C(gr) + 2 H2",
)

CONSERVATION_RTOL = 1e-10
SETTINGS = settings(max_examples=40, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])

#: States on which each property was actually checked in this run (converged states only).
#: Every property test asserts a minimum, so a property cannot pass vacuously by having
#: all of its examples skipped as "not converged".
CHECKED: dict[str, int] = {}
#: Fewest states that each property must check out of its 40 (plus pinned) examples.
MIN_CHECKED = 30


def _count(name: str) -> None:
    CHECKED[name] = CHECKED.get(name, 0) + 1


def _run_counted(name: str, prop, **fixed) -> None:
    """Run the hypothesis property ``prop`` and assert it checked at least MIN_CHECKED states."""
    CHECKED[name] = 0
    prop(**fixed)
    assert CHECKED[name] >= MIN_CHECKED, f"{name}: only {CHECKED[name]} states checked"

temperatures = st.floats(min_value=400.0, max_value=2000.0)
pressures = st.floats(min_value=np.log(0.1e5), max_value=np.log(300e5)).map(np.exp)   # [Pa]
feeds = st.dictionaries(st.sampled_from(FEED_SPECIES), st.floats(min_value=1e-3, max_value=10.0),
                        min_size=1, max_size=5)


@pytest.fixture(scope="module")
def database():
    return bundled_database()


def _solve(*args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", NotConvergedWarning)
        return equilibrium(*args, **kwargs)


def _flagged_or_finite(res) -> bool:
    """True when the (scalar) result converged; asserts the flag otherwise."""
    event("converged" if bool(res.converged) else "not converged (flagged)")
    if not bool(res.converged):
        assert np.all(np.isnan(res.amount_array)), "a non-converged state must hold NaN"
        return False
    assert np.all(np.isfinite(res.amount_array))
    return True


def _elements(database, names):
    _, A = element_matrix([database[n] for n in names])
    return A


# --------------------------------------------------------------------------- all-species mode
@SETTINGS
@given(feed=feeds, T=temperatures, P=pressures)
@example(feed={"CH4": 1.0, "H2O": 0.2}, T=900.0, P=1e5)          # graphite present
def _conservation_property(database, feed, T, P):
    res = _solve(SPECIES, feed, T, P)
    if not _flagged_or_finite(res):
        return
    A = _elements(database, res.species)
    b0 = A @ res.feed_array
    assert np.abs(A @ res.amount_array - b0).max() <= CONSERVATION_RTOL * b0.sum()
    assert np.all(res.amount_array >= 0.0)
    _count("conservation")


def test_elements_conserved_and_amounts_non_negative(database):
    """A n = A n0 to 1e-10 of the atoms fed, and n >= 0 (White, Johnson, Dantzig 1958)."""
    _run_counted("conservation", _conservation_property, database=database)


def _feasible_directions(A, n, rng, n_random=6):
    """Directions v with A v = 0 along which a positive step keeps n + eps v >= 0.

    Species present in more than 1e-6 of the total may move either way; every other
    species may only grow, except in the "removal" moves, which take one present trace
    species out.  Directions are vertices of {A v = 0, |v| <= 1} found by linear
    programming (scipy.optimize.linprog): random objectives, the move that forms the
    most of each minor species (graphite included when absent), and the move that
    removes each trace species.  Each is then projected back onto A v = 0 exactly."""
    total = n.sum()
    major = n > 1e-6 * total
    ns = n.size
    base = [(-1.0, 1.0) if major[j] else (0.0, 1.0) for j in range(ns)]
    problems = [(rng.normal(size=ns), base) for _ in range(n_random)]
    for k in np.flatnonzero(~major):
        c = np.zeros(ns)
        c[k] = -1.0
        problems.append((c, base))                      # form k from the rest
        if n[k] > 0:
            bounds = list(base)
            bounds[k] = (-1.0, 0.0)
            problems.append((-c, bounds))               # remove the trace species k
    projector = np.eye(ns) - np.linalg.pinv(A) @ A
    directions = []
    for c, bounds in problems:
        sol = linprog(c, A_eq=A, b_eq=np.zeros(A.shape[0]), bounds=bounds, method="highs")
        if sol.status != 0:
            continue
        v = projector @ sol.x
        v[np.abs(v) < 1e-13] = 0.0
        if np.abs(v).max() > 1e-9:
            directions.append(v)
            if np.all(v[~major] == 0):
                directions.append(-v)                  # a tangent move is feasible both ways
    return directions


def _steps(n, v):
    """Step lengths for direction v: 1e-2, 1e-4 and 1e-6 of the largest move that keeps
    every major species within its own amount, capped so that n + eps v >= 0."""
    total = n.sum()
    major = (n > 1e-6 * total) & (v != 0)
    scale = np.min(n[major] / np.abs(v[major])) if major.any() else total
    negative = v < 0
    cap = np.min(n[negative] / -v[negative]) if negative.any() else np.inf
    return [min(f * scale, cap) for f in (1e-2, 1e-4, 1e-6)]


def _assert_no_feasible_descent(res, A, seed):
    rng = np.random.default_rng(seed)
    n = res.amount_array
    g0, mask = res.g0_RT, res.gas_mask
    G = total_gibbs_RT(n, g0, mask, res.P)
    tiny = 1e-12 * (1.0 + np.abs(n * g0).sum())   # round-off of the sum
    checked = 0
    for v in _feasible_directions(A, n, rng):
        for eps in _steps(n, v):
            if not eps > 0:
                continue
            trial = np.maximum(n + eps * v, 0.0)
            G_trial = total_gibbs_RT(trial, g0, mask, res.P)
            assert G_trial >= G - tiny, (v, eps, G_trial - G)
            checked += 1
    return checked


@SETTINGS
@given(feed=feeds, T=temperatures, P=pressures, seed=st.integers(0, 2**31 - 1))
@example(feed={"CH4": 1.0, "H2O": 0.2}, T=900.0, P=1e5, seed=1)              # graphite present
@example(feed={"CO": 1.0, "H2": 0.5, "N2": 0.3}, T=700.0, P=20e5, seed=2)     # graphite present
@example(feed={"CH4": 1.0, "H2O": 3.0}, T=1100.0, P=30e5, seed=3)             # graphite absent
def _gibbs_minimum_property(database, feed, T, P, seed):
    res = _solve(SPECIES, feed, T, P)
    if not _flagged_or_finite(res):
        return
    A = _elements(database, res.species)
    checked = _assert_no_feasible_descent(res, A, seed)
    event("perturbations checked: " + ("none" if checked == 0 else "1-20" if checked <= 20 else "> 20"))
    if checked:
        _count("gibbs minimum")


def test_no_feasible_perturbation_lowers_gibbs_energy(database):
    """G(n + eps v) >= G(n) for directions v in the null space of the element matrix with
    n + eps v >= 0, including forming graphite or any trace species from the species
    present (the minimum principle of White, Johnson and Dantzig 1958)."""
    _run_counted("gibbs minimum", _gibbs_minimum_property, database=database)


def test_gibbs_minimum_examples_cover_graphite_present_and_absent():
    """The pinned examples above do reach both sides of the graphite boundary."""
    present = _solve(SPECIES, {"CH4": 1.0, "H2O": 0.2}, 900.0, 1e5)
    absent = _solve(SPECIES, {"CH4": 1.0, "H2O": 3.0}, 1100.0, 30e5)
    assert present.converged and present.condensed["C(gr)"] > 0.1
    assert absent.converged and absent.condensed["C(gr)"] == 0.0


# --------------------------------------------------------------------------- starting guess
def _core_problem(database, feed, T, P):
    """The inputs of minimise_gibbs for one state, built here from the element matrix."""
    names = list(SPECIES)
    records = [database[n] for n in names]
    _, A = element_matrix(records)
    n0 = np.zeros(len(names))
    for k, v in feed.items():
        n0[names.index(k)] = v
    n0 = n0 / n0.sum()
    b = A @ n0
    rows = b > 0
    reach = ~np.any((A > 0) & ~rows[:, None], axis=0)
    is_gas = np.array([r.is_gas for r in records])
    gas, cond = np.flatnonzero(reach & is_gas), np.flatnonzero(reach & ~is_gas)
    g0 = np.array([float(r.gibbs_RT(T)) for r in records])
    return (g0[gas][None, :], g0[cond][None, :], A[np.ix_(rows, gas)], A[np.ix_(rows, cond)],
            b[rows][None, :], np.array([np.log(P / P_STANDARD)]))


@SETTINGS
@given(feed=feeds, T=temperatures, P=pressures,
       ln_gas=st.lists(st.floats(-40.0, 5.0), min_size=len(SPECIES), max_size=len(SPECIES)),
       ln_total=st.floats(-5.0, 5.0), graphite=st.floats(0.0, 2.0), graphite_in=st.booleans())
def _starting_guess_property(database, feed, T, P, ln_gas, ln_total, graphite, graphite_in):
    args = _core_problem(database, feed, T, P)
    n_gas, n_cond, m = args[0].shape[1], args[1].shape[1], args[2].shape[0]
    reference = minimise_gibbs(*args)
    state = initial_state(1, n_gas, n_cond, m)
    state.ln_gas[0] = ln_gas[:n_gas]
    state.ln_total[0] = ln_total
    if n_cond:
        state.present[0, 0] = graphite_in
        state.cond[0, 0] = graphite if graphite_in else 0.0
    other = minimise_gibbs(*args, state=state)
    event(f"default start converged: {bool(reference.converged[0])}, "
          f"random start converged: {bool(other.converged[0])}")
    if not (reference.converged[0] and other.converged[0]):
        return        # a start that fails is flagged (converged False), never an answer
    a = np.concatenate([reference.gas[0], reference.cond[0]])
    b = np.concatenate([other.gas[0], other.cond[0]])
    assert np.allclose(b, a, rtol=1e-9, atol=1e-10)
    _count("starting guess")


def test_answer_does_not_depend_on_the_starting_guess(database):
    """minimise_gibbs from random ln n, ln(total) and phase set reaches the same amounts
    as from its default start, to 1e-9 relative (G is convex on the feasible set: one
    minimum); amounts below 1e-10 of the feed agree to 1e-10 absolute, the conservation
    tolerance that fixes them."""
    _run_counted("starting guess", _starting_guess_property, database=database)


# --------------------------------------------------------------------------- named reactions
reaction_sets = st.lists(st.sampled_from(REACTIONS), min_size=1, max_size=4, unique=True)


def _stoichiometric_matrix(reactions, names):
    N = np.zeros((len(names), len(reactions)))
    for j, text in enumerate(reactions):
        for name, nu in Reaction.parse(text).stoichiometry.items():
            N[names.index(name), j] += nu
    return N


@SETTINGS
@given(reactions=reaction_sets, feed=feeds, T=temperatures, P=pressures)
@example(reactions=["CH4 = C(gr) + 2 H2", "CH4 + H2O = CO + 3 H2"], feed={"CH4": 1.0, "H2O": 0.5},
         T=900.0, P=1e5)                                                  # graphite forms
def _named_reactions_property(reactions, feed, T, P):
    species = sorted(set(feed) | {n for r in reactions for n in Reaction.parse(r).names})
    res = _solve(species, feed, T, P, reactions=reactions)
    if not _flagged_or_finite(res):
        return
    names = list(res.species)
    n, n0 = res.amount_array, res.feed_array
    assert np.all(n >= 0.0)
    N = _stoichiometric_matrix(reactions, names)
    xi = np.linalg.lstsq(N, n - n0, rcond=None)[0]
    assert np.abs(N @ xi - (n - n0)).max() <= CONSERVATION_RTOL * n0.sum()
    P_ratio = res.P / P_STANDARD
    y = res.mole_fraction_array
    for text in reactions:
        r = Reaction.parse(text)
        idx = [names.index(s) for s in r.names]
        nu = np.asarray(r.coefficients, dtype=float)
        gas = res.gas_mask[idx]
        ln_K = float(r.ln_K(T))                     # thermo's K(T), not the solver's arrays
        if np.all(n[idx] > 0):
            ln_a = np.where(gas, np.log(np.where(gas, y[idx], 1.0) * P_ratio), 0.0)
            assert abs((nu * ln_a).sum() - ln_K) < 1e-8, text
            assert res.quotient_over_K(text)[text] == pytest.approx(1.0, abs=1e-8)
        elif np.all(n[idx][gas] > 0) and np.all(nu[~gas] > 0):
            ln_a = np.where(gas, np.log(np.where(gas, y[idx], 1.0) * P_ratio), 0.0)
            assert (nu * ln_a).sum() - ln_K >= -1e-9, text
    _count("named reactions")


def test_named_reactions_conserve_invariants_and_reach_K():
    """Only the named reactions proceed: n - n0 lies in the column space of the
    stoichiometric matrix to 1e-10 of the feed; every reaction whose species are all
    present has Q/K = 1 to 1e-8; a reaction that would form an absent pure condensed
    species has Q/K >= 1 with that species at unit activity (it does not want to run
    forward).  Smith and Missen (1982), ch. 2-3."""
    _run_counted("named reactions", _named_reactions_property)
