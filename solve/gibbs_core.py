"""Batched Gibbs-energy minimisation by the element-potential method.

The method is the one of S. Gordon and B. J. McBride, *Computer Program for Calculation of
Complex Chemical Equilibrium Compositions and Applications, Part I: Analysis*, NASA
Reference Publication RP-1311 (1994), sections 2 and 3: Newton iterations on the
logarithms of the gas amounts, the Lagrange multipliers of the conservation constraints
(element potentials), the amounts of the condensed species present, and the logarithm of
the total gas amount, reduced to a small linear system per state; step control by the
factors of its eqs. (3.1)-(3.3); and the test for adding or removing pure condensed
species after each converged sub-problem (its section 3.5).  Applied to the problem of
W. B. White, S. M. Johnson and G. B. Dantzig, J. Chem. Phys. 28 (1958) 751: minimise G at
fixed T and P subject to ``A n = b``, ``n >= 0``.

Here ``A`` is any full-row-rank conservation matrix: element counts (every species may
form) or a basis of the reaction invariants (only named reactions may proceed; W. R. Smith
and R. W. Missen, *Chemical Reaction Equilibrium Analysis*, Wiley, 1982, ch. 2).

Everything is vectorised over states: arrays of shape ``(n_points, ...)``; one numpy
linear solve per iteration serves every state.  No I/O, no units: dimensionless inputs.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

#: Floor of ln(n_j) for gas species [ln mol]: far below anything that matters, above underflow.
LN_FLOOR = -690.0
#: RP-1311's size limit for "trace" species: ln(1e-8).
LN_TRACE = np.log(1e-8)


@dataclass
class CoreState:
    """Iteration state of a batch (mutable working arrays)."""

    ln_gas: np.ndarray       # (p, nG) ln n_j of gas species
    cond: np.ndarray         # (p, nC) amounts of condensed species
    present: np.ndarray      # (p, nC) bool: condensed species in the current phase set
    ln_total: np.ndarray     # (p,) ln of the total gas amount (an iteration variable)
    potentials: np.ndarray   # (p, m) element potentials π (dimensionless, λ/RT)


@dataclass
class CoreOutcome:
    """Result of :func:`minimise_gibbs` for a batch."""

    gas: np.ndarray          # (p, nG) amounts [same unit as b]
    cond: np.ndarray         # (p, nC)
    present: np.ndarray      # (p, nC) bool
    potentials: np.ndarray   # (p, m)
    converged: np.ndarray    # (p,) bool
    iterations: np.ndarray   # (p,) int, Newton iterations in all
    residual: np.ndarray     # (p,) largest scaled residual at the end
    state: CoreState


def initial_state(n_points: int, n_gas: int, n_cond: int, m: int, total: float = 1.0) -> CoreState:
    """RP-1311's starting estimate: equal gas amounts, no condensed species."""
    return CoreState(
        ln_gas=np.full((n_points, n_gas), np.log(total / max(n_gas, 1))),
        cond=np.zeros((n_points, n_cond)),
        present=np.zeros((n_points, n_cond), dtype=bool),
        ln_total=np.full(n_points, np.log(total)),
        potentials=np.zeros((n_points, m)),
    )


def solve_batched(M: np.ndarray, r: np.ndarray) -> np.ndarray:
    """Solve ``M[:, :, q] x[:, q] = r[:, q]`` for every state q by Gaussian elimination.

    ``M`` has shape (n, n, p) and ``r`` shape (n, p), states last so that every step is
    one numpy operation over all states.  No pivoting: the unknowns are ordered as in
    RP-1311 (element potentials first, whose block ``A diag(n) A^T`` is symmetric
    positive definite, then condensed amounts and ln n, whose Schur complements are
    definite when the phase rule holds), so the natural pivots are the safe ones.
    ``M`` and ``r`` are overwritten.
    """
    n = M.shape[0]
    for k in range(n - 1):
        f = M[k + 1:, k] / M[k, k]                       # (n-k-1, p)
        M[k + 1:, k + 1:] -= f[:, None, :] * M[k, k + 1:][None, :, :]
        r[k + 1:] -= f * r[k]
    x = np.empty_like(r)
    for k in range(n - 1, -1, -1):
        acc = r[k] - (M[k, k + 1:] * x[k + 1:]).sum(axis=0) if k < n - 1 else r[k]
        x[k] = acc / M[k, k]
    return x


def _newton(g0_gas, g0_cond, A_gas, A_cond, b, ln_p, state: CoreState, active, fugacity,
            tolerance, max_iterations):
    """Newton iterations with the phase set held fixed, on the rows selected by ``active``.

    Works states-last internally (arrays (n, p)) so every operation covers all states.
    Returns (converged, iterations, residual) for every row; rows not active are untouched.
    """
    p = state.ln_gas.shape[0]
    nG = A_gas.shape[1]
    nC = A_cond.shape[1]
    m = A_gas.shape[0]
    size = m + nC + 1
    converged = np.zeros(p, dtype=bool)
    iterations = np.zeros(p, dtype=int)
    residual = np.full(p, np.inf)
    idx = np.flatnonzero(active)
    if idx.size == 0:
        return converged, iterations, residual
    AA = (A_gas[:, None, :] * A_gas[None, :, :]).reshape(m * m, nG)    # outer products
    b_scale_all = np.maximum(np.abs(b).sum(axis=1), 1e-300)

    def gather(rows):
        return (state.ln_gas[rows].T.copy(), state.ln_total[rows].copy(), state.cond[rows].T.copy(),
                state.present[rows].T.copy(), g0_gas[rows].T.copy(), g0_cond[rows].T.copy(),
                b[rows].T.copy(), ln_p[rows].copy(), b_scale_all[rows])

    ln_gas, ln_tot, cond, present, g0g, g0c, bb, lnp, bscale = gather(idx)
    pi = np.zeros((m, idx.size))
    eye_c = np.eye(nC)[:, :, None]
    for it in range(max_iterations):
        k = idx.size
        n_j = np.exp(ln_gas)                                   # (nG, k)
        n_tot = np.exp(ln_tot)
        mu = g0g + ln_gas - ln_tot + lnp
        if fugacity is not None:
            y = n_j / n_j.sum(axis=0)
            mu = mu + fugacity(idx, y.T).T
        An = A_gas @ n_j                                       # (m, k)
        M = np.zeros((size, size, k))
        M[:m, :m] = (AA @ n_j).reshape(m, m, k)
        if nC:
            Ac = A_cond[:, :, None] * present[None, :, :]      # (m, nC, k)
            M[:m, m:m + nC] = Ac
            M[m:m + nC, :m] = Ac.transpose(1, 0, 2)
            M[m:m + nC, m:m + nC] = eye_c * (~present)[None, :, :]
        M[:m, -1] = An
        M[-1, :m] = An
        sum_n = n_j.sum(axis=0)
        M[-1, -1] = sum_n - n_tot
        nmu = n_j * mu
        rhs = np.empty((size, k))
        rhs[:m] = bb - An - A_cond @ cond + A_gas @ nmu
        if nC:
            rhs[m:m + nC] = np.where(present, g0c, 0.0)
        rhs[-1] = n_tot - sum_n + nmu.sum(axis=0)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            sol = solve_batched(M, rhs)
        pi = sol[:m]
        d_cond = np.where(present, sol[m:m + nC], 0.0) if nC else sol[m:m]
        d_ln_tot = sol[-1]
        d_ln_gas = pi.T @ A_gas                                 # (k, nG)
        d_ln_gas = d_ln_gas.T - mu + d_ln_tot
        # --- step control, RP-1311 eqs. (3.1)-(3.3)
        rel = ln_gas - ln_tot
        big = rel > LN_TRACE
        grow = np.where(big & (d_ln_gas > 0), d_ln_gas, 0.0).max(axis=0)
        denom1 = np.maximum(5.0 * np.abs(d_ln_tot), grow)
        with np.errstate(divide="ignore", invalid="ignore"):
            lam1 = 2.0 / denom1
            ratio = np.abs((-rel - 9.2103404) / (d_ln_gas - d_ln_tot))
        ratio = np.where((~big) & (d_ln_gas >= 0) & np.isfinite(ratio), ratio, np.inf)
        lam = np.minimum(1.0, np.minimum(lam1, ratio.min(axis=0)))
        lam = np.where(np.isfinite(lam), lam, 0.0)
        ln_gas = np.maximum(ln_gas + lam * d_ln_gas, LN_FLOOR)
        cond = cond + lam * d_cond
        ln_tot = ln_tot + lam * d_ln_tot
        # --- convergence: Newton step sizes and conservation residuals
        floored = (ln_gas <= LN_FLOOR) & (d_ln_gas < 0)
        step = np.where(floored, 0.0, np.abs(d_ln_gas)).max(axis=0)
        step = np.maximum(step, np.abs(d_ln_tot))
        if nC:
            step = np.maximum(step, np.abs(d_cond).max(axis=0) / bscale)
        bal = np.abs(A_gas @ np.exp(ln_gas) + A_cond @ cond - bb).max(axis=0) / bscale
        res = np.maximum(step, bal)
        iterations[idx] += 1
        residual[idx] = res
        done = (res < tolerance) & (lam >= 1.0)
        bad = ~np.isfinite(res)
        finished = done | bad
        if finished.any() or it == max_iterations - 1:
            sel = finished if it < max_iterations - 1 else np.ones(k, dtype=bool)
            rows = idx[sel]
            state.ln_gas[rows] = ln_gas[:, sel].T
            state.ln_total[rows] = ln_tot[sel]
            state.cond[rows] = cond[:, sel].T
            state.potentials[rows] = pi[:, sel].T
            converged[idx[done]] = True
            keep = ~finished
            idx = idx[keep]
            if idx.size == 0:
                break
            ln_gas, ln_tot, cond, present = ln_gas[:, keep], ln_tot[keep], cond[:, keep], present[:, keep]
            g0g, g0c, bb, lnp, bscale = g0g[:, keep], g0c[:, keep], bb[:, keep], lnp[keep], bscale[keep]
    return converged, iterations, residual


def minimise_gibbs(g0_gas: np.ndarray, g0_cond: np.ndarray, A_gas: np.ndarray, A_cond: np.ndarray,
                   b: np.ndarray, ln_p: np.ndarray, *, state: CoreState | None = None,
                   fugacity: Callable | None = None, tolerance: float = 1e-11,
                   max_iterations: int = 300, max_phase_rounds: int | None = None) -> CoreOutcome:
    """Minimise G/RT of an ideal (or corrected) gas plus pure condensed species, batched.

    Parameters
    ----------
    g0_gas : ndarray, shape (p, nG)
        μ°_j/RT of the gas species at T and the standard pressure [-].
    g0_cond : ndarray, shape (p, nC)
        μ°_j/RT of the pure condensed species [-].
    A_gas, A_cond : ndarray, shapes (m, nG), (m, nC)
        Conservation matrix (full row rank over the species allowed).
    b : ndarray, shape (p, m)
        Conserved totals.
    ln_p : ndarray, shape (p,)
        ln(P / P°).
    state : CoreState, optional
        Starting point (warm start); default RP-1311's estimate.
    fugacity : callable, optional
        ``fugacity(rows, y) -> ln φ`` of shape (len(rows), nG) for a real gas; held fixed
        within each Newton step (successive substitution).

    Returns
    -------
    CoreOutcome
    """
    p, nG = g0_gas.shape
    nC = g0_cond.shape[1]
    m = A_gas.shape[0]
    if state is None:
        state = initial_state(p, nG, nC, m, total=1.0)
    converged = np.zeros(p, dtype=bool)
    iterations = np.zeros(p, dtype=int)
    residual = np.full(p, np.inf)
    todo = np.ones(p, dtype=bool)
    rounds = max_phase_rounds if max_phase_rounds is not None else 3 * nC + 6
    settled = np.zeros(p, dtype=bool)
    for _ in range(rounds):
        conv, its, res = _newton(g0_gas, g0_cond, A_gas, A_cond, b, ln_p, state, todo, fugacity,
                                 tolerance, max_iterations)
        iterations += its
        residual = np.where(todo, res, residual)
        converged = np.where(todo, conv, converged)
        if nC == 0:
            settled = converged.copy()
            break
        # --- phase-set test (RP-1311 section 3.5), on converged rows only
        changed = np.zeros(p, dtype=bool)
        rows = np.flatnonzero(todo & conv)
        if rows.size:
            present = state.present[rows]
            cond = state.cond[rows]
            negative = present & (cond <= 0.0)
            drive = g0_cond[rows] - state.potentials[rows] @ A_cond     # Δ(G/RT) per mol added
            candidates = (~present) & (drive < -1e-9)
            remove = negative.any(axis=1)
            # remove the most negative first; otherwise add the most favourable one
            worst = np.argmin(np.where(negative, cond, np.inf), axis=1)
            best = np.argmin(np.where(candidates, drive, np.inf), axis=1)
            add = (~remove) & candidates.any(axis=1)
            r_rm, r_add = rows[remove], rows[add]
            state.present[r_rm, worst[remove]] = False
            state.cond[r_rm, worst[remove]] = 0.0
            state.present[r_add, best[add]] = True
            state.cond[r_add, best[add]] = 0.0
            changed[r_rm] = True
            changed[r_add] = True
            state.cond[rows] = np.where(state.present[rows], state.cond[rows], 0.0)
        settled |= todo & conv & ~changed
        todo = changed
        if not todo.any():
            break
    converged = converged & settled
    return CoreOutcome(gas=np.exp(state.ln_gas), cond=np.where(state.present, state.cond, 0.0),
                       present=state.present.copy(), potentials=state.potentials.copy(),
                       converged=converged, iterations=iterations, residual=residual, state=state)
