"""The equilibrium problem in matrices: element and stoichiometric matrices, the
reaction-invariant basis, reachable species and linear-programming starting states.

Reaction invariants: W. R. Smith, R. W. Missen, *Chemical Reaction Equilibrium Analysis*,
Wiley, 1982.
"""
from __future__ import annotations

from typing import Sequence

import numpy as np
from scipy.optimize import linprog

from ...thermo.reactions import Reaction
from .newton import CoreState, initial_state


def stoichiometric_matrix(reactions: Sequence[Reaction], species: Sequence[str]) -> np.ndarray:
    """The stoichiometric matrix N[i, j] = ν of species i in reaction j [-], shape
    (n_species, n_reactions); the one builder of N in the package.

    Examples
    --------
    >>> from eqdesign.thermo.reactions import Reaction
    >>> stoichiometric_matrix([Reaction.parse("N2 + 3 H2 = 2 NH3")], ["N2", "H2", "NH3"]).ravel().tolist()
    [-1.0, -3.0, 2.0]
    """
    N = np.zeros((len(species), len(reactions)))
    for j, r in enumerate(reactions):
        for name, nu in zip(r.names, r.coefficients):
            N[species.index(name), j] += nu
    return N


def element_matrix(species_records) -> tuple[list[str], np.ndarray]:
    """Element names and the matrix A[i, j] = atoms of element i in species j."""
    elements: list[str] = []
    for sp in species_records:
        for el in sp.elements:
            if el not in elements:
                elements.append(el)
    A = np.zeros((len(elements), len(species_records)))
    for j, sp in enumerate(species_records):
        for el, n in sp.elements.items():
            A[elements.index(el), j] = n
    return elements, A


def invariant_basis(N: np.ndarray, tol: float = 1e-10) -> np.ndarray:
    """Rows spanning the left null space of the stoichiometric matrix N (n_species, n_reactions):
    the reaction invariants conserved when only those reactions proceed."""
    if N.shape[1] == 0:
        return np.eye(N.shape[0])
    u, s, vt = np.linalg.svd(N, full_matrices=True)
    rank = int(np.sum(s > tol * max(s.max(), 1.0)))
    return u[:, rank:].T.copy()


def row_basis(C: np.ndarray, tol: float = 1e-10) -> np.ndarray:
    if C.size == 0:
        return C
    u, s, vt = np.linalg.svd(C, full_matrices=False)
    rank = int(np.sum(s > tol * max(s.max(), 1.0)))
    return vt[:rank]


def reachable_species(C: np.ndarray, n0: np.ndarray, nonneg: bool) -> np.ndarray:
    """Species that can be positive in some state with C n = C n0, n >= 0."""
    ns = C.shape[1]
    if nonneg:   # element mode: a species may form iff each of its elements is present
        b = C @ n0
        return ~np.any((C > 0) & (b[:, None] <= 0), axis=0)
    ok = n0 > 0
    b = C @ n0
    for j in np.flatnonzero(~ok):
        c = np.zeros(ns)
        c[j] = -1.0
        res = linprog(c, A_eq=C, b_eq=b, bounds=[(0, None)] * ns, method="highs")
        ok[j] = res.status == 0 and -res.fun > 1e-9 * max(n0.sum(), 1e-300)
    return ok


def linear_estimate(g0: np.ndarray, C: np.ndarray, b: np.ndarray, n_gas: int) -> CoreState:
    """Starting states from ``min Σ g°_j n_j  s.t.  C n = b, n >= 0`` (one small linear
    program per state; used only for states that failed from the usual starts)."""
    p, ns = g0.shape
    state = initial_state(p, n_gas, ns - n_gas, C.shape[0])
    for q in range(p):          # fallback path only: a handful of states
        res = linprog(g0[q], A_eq=C, b_eq=b[q], bounds=[(0, None)] * ns, method="highs")
        if res.status != 0:
            continue
        n = np.maximum(res.x, 0.0)
        total = max(n[:n_gas].sum(), 1e-3 * n.sum(), 1e-12)
        gas = np.maximum(n[:n_gas], 1e-6 * total)
        state.ln_gas[q] = np.log(gas)
        state.ln_total[q] = np.log(gas.sum())
        state.cond[q] = n[n_gas:]
        state.present[q] = n[n_gas:] > 1e-12 * n.sum()
    return state
