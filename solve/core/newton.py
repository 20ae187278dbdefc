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

from . import compiled as compiled_core     # the compiled kernel (numba); the numpy path below serves real gases and fallbacks

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




def _minimise_compiled(g0_gas, g0_cond, A_gas, A_cond, b, ln_p, state, tolerance, max_iterations,
                       max_phase_rounds) -> CoreOutcome:
    """Ideal-gas batch through the compiled kernel: states in order, each warm-started
    from its neighbour's answer (or from ``state`` when given)."""
    p, nG = g0_gas.shape
    nC = g0_cond.shape[1]
    m = A_gas.shape[0]
    rounds = max_phase_rounds if max_phase_rounds is not None else 3 * nC + 6
    out = initial_state(p, nG, nC, m) if state is None else state
    converged = np.zeros(p, dtype=bool)
    iterations = np.zeros(p, dtype=np.int64)
    residual = np.full(p, np.inf)
    f64 = lambda a: np.ascontiguousarray(a, dtype=float)
    compiled_core.solve_sweep(
        f64(g0_gas), f64(g0_cond), f64(A_gas), f64(A_cond), f64(b), f64(ln_p), float(tolerance),
        int(max_iterations), int(rounds), out.ln_gas, out.ln_total, out.cond, out.present,
        out.potentials, converged, iterations, residual, state is None)
    return CoreOutcome(gas=np.exp(out.ln_gas), cond=np.where(out.present, out.cond, 0.0),
                       present=out.present.copy(), potentials=out.potentials.copy(),
                       converged=converged, iterations=iterations.astype(int), residual=residual,
                       state=out)


#: Stride of the coarse subset solved first in a large batch; the others start from the
#: answer of their nearest solved neighbour (in input order, i.e. along the sweep).
WARM_STRIDE = 8


def _warm_start_from_coarse_subset(g0_gas, g0_cond, A_gas, A_cond, b, ln_p, fugacity, tolerance,
                                   max_iterations, state: CoreState) -> CoreState:
    """Solve every WARM_STRIDE-th state from RP-1311's estimate, then start every state
    from its nearest solved neighbour: along a sweep that is close to its own answer, so
    Newton needs a few iterations instead of many."""
    p = g0_gas.shape[0]
    coarse = np.arange(0, p, WARM_STRIDE)
    sub_fug = None if fugacity is None else (lambda rows, y: fugacity(coarse[rows], y))
    sub = minimise_gibbs(g0_gas[coarse], g0_cond[coarse], A_gas, A_cond, b[coarse], ln_p[coarse],
                         state=initial_state(coarse.size, g0_gas.shape[1], g0_cond.shape[1],
                                             A_gas.shape[0]),
                         fugacity=sub_fug, tolerance=tolerance, max_iterations=max_iterations)
    near = np.minimum(np.rint(np.arange(p) / WARM_STRIDE).astype(int), coarse.size - 1)
    ok = sub.converged[near]
    for name in ("ln_gas", "cond", "present", "ln_total"):
        target = getattr(state, name)
        source = getattr(sub.state, name)[near]
        target[ok] = source[ok]
    return state


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

    Convergence.  For an ideal gas the iteration is Newton's method on the full system,
    so once a full step (λ = 1) is smaller than ``sqrt(tolerance)`` the error left after
    it is of the order of the step squared, below ``tolerance``; the conservation
    residual is checked directly.  With fugacity corrections (successive substitution,
    linear convergence) the step itself must fall below ``tolerance``.
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
    step_tol = tolerance if fugacity is not None else min(np.sqrt(tolerance), 1e-6)
    AA = (A_gas[:, None, :] * A_gas[None, :, :]).reshape(m * m, nG)    # outer products
    A_gas_T = np.ascontiguousarray(A_gas.T)
    b_scale_all = np.maximum(np.abs(b).sum(axis=1), 1e-300)

    ln_gas = state.ln_gas[idx].T.copy()
    ln_tot = state.ln_total[idx].copy()
    cond = state.cond[idx].T.copy()
    present = state.present[idx].T.copy()
    c_gas = (g0_gas[idx] + ln_p[idx, None]).T.copy()        # g°/RT + ln(P/P°), (nG, k)
    g0c = g0_cond[idx].T.copy()
    bb = b[idx].T.copy()
    bscale = b_scale_all[idx]
    n_j = np.exp(ln_gas)
    eye_c = np.eye(nC)[:, :, None]
    for it in range(max_iterations):
        k = idx.size
        n_tot = np.exp(ln_tot)
        mu = c_gas + ln_gas
        mu -= ln_tot
        if fugacity is not None:
            mu += fugacity(idx, (n_j / n_j.sum(axis=0)).T).T
        An = A_gas @ n_j                                       # (m, k)
        nmu = n_j * mu
        sum_n = n_j.sum(axis=0)
        M = np.empty((size, size, k))
        M[:m, :m] = (AA @ n_j).reshape(m, m, k)
        M[:m, -1] = An
        M[-1, :m] = An
        M[-1, -1] = sum_n - n_tot
        rhs = np.empty((size, k))
        rhs[:m] = A_gas @ nmu
        rhs[:m] += bb
        rhs[:m] -= An
        if nC:
            rhs[:m] -= A_cond @ cond
            Ac = A_cond[:, :, None] * present[None, :, :]      # (m, nC, k)
            M[:m, m:m + nC] = Ac
            M[m:m + nC, :m] = Ac.transpose(1, 0, 2)
            M[m:m + nC, m:m + nC] = eye_c * (~present)[None, :, :]
            M[m:m + nC, -1] = 0.0
            M[-1, m:m + nC] = 0.0
            rhs[m:m + nC] = np.where(present, g0c, 0.0)
        rhs[-1] = nmu.sum(axis=0) + n_tot - sum_n
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            sol = solve_batched(M, rhs)
        pi = sol[:m]
        d_ln_tot = sol[-1]
        d_ln_gas = A_gas_T @ pi
        d_ln_gas -= mu
        d_ln_gas += d_ln_tot
        # --- step control, RP-1311 eqs. (3.1)-(3.3)
        rel = ln_gas - ln_tot
        big = rel > LN_TRACE
        up = d_ln_gas > 0
        grow = np.where(big & up, d_ln_gas, 0.0).max(axis=0)
        denom1 = np.maximum(5.0 * np.abs(d_ln_tot), grow)
        with np.errstate(divide="ignore", invalid="ignore"):
            lam = np.minimum(1.0, 2.0 / denom1)
            small_up = up & ~big
            if small_up.any():
                ratio = np.abs((-rel - 9.2103404) / (d_ln_gas - d_ln_tot))
                ratio = np.where(small_up & np.isfinite(ratio), ratio, np.inf)
                lam = np.minimum(lam, ratio.min(axis=0))
        lam = np.where(np.isfinite(lam), lam, 0.0)
        ln_gas += lam * d_ln_gas
        np.maximum(ln_gas, LN_FLOOR, out=ln_gas)
        ln_tot = ln_tot + lam * d_ln_tot
        n_j = np.exp(ln_gas)
        # --- convergence: Newton step sizes and conservation residuals
        # RP-1311's test: each log step weighted by the species' share of the gas
        share = np.minimum(n_j * np.exp(-ln_tot), 1.0)
        step = np.maximum((share * np.abs(d_ln_gas)).max(axis=0), np.abs(d_ln_tot))
        resid = A_gas @ n_j
        resid -= bb
        if nC:
            d_cond = np.where(present, sol[m:m + nC], 0.0)
            cond = cond + lam * d_cond
            step = np.maximum(step, np.abs(d_cond).max(axis=0) / bscale)
            resid += A_cond @ cond
        bal = np.abs(resid).max(axis=0) / bscale
        iterations[idx] += 1
        done = (step < step_tol) & (bal < tolerance) & (lam >= 1.0)
        res = np.where(done, np.maximum(step * step, bal), np.maximum(step, bal))
        residual[idx] = res
        bad = ~np.isfinite(res)
        finished = done | bad
        last = it == max_iterations - 1
        if finished.any() or last:
            sel = finished if not last else np.ones(k, dtype=bool)
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
            c_gas, g0c, bb, bscale, n_j = c_gas[:, keep], g0c[:, keep], bb[:, keep], bscale[keep], n_j[:, keep]
    return converged, iterations, residual


def minimise_gibbs(g0_gas: np.ndarray, g0_cond: np.ndarray, A_gas: np.ndarray, A_cond: np.ndarray,
                   b: np.ndarray, ln_p: np.ndarray, *, state: CoreState | None = None,
                   fugacity: Callable | None = None, tolerance: float = 1e-11,
                   max_iterations: int = 300, max_phase_rounds: int | None = None,
                   use_compiled: bool = True) -> CoreOutcome:
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
    if fugacity is None and use_compiled and compiled_core is not None:
        return _minimise_compiled(g0_gas, g0_cond, A_gas, A_cond, b, ln_p, state, tolerance,
                                  max_iterations, max_phase_rounds)
    cold_start = state is None
    if state is None:
        state = initial_state(p, nG, nC, m, total=1.0)
        if p >= 4 * WARM_STRIDE:
            state = _warm_start_from_coarse_subset(g0_gas, g0_cond, A_gas, A_cond, b, ln_p, fugacity,
                                                   tolerance, max_iterations, state)
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
    if cold_start and p >= 4 * WARM_STRIDE and not converged.all():
        # states that a neighbour's answer led astray start again from RP-1311's estimate
        bad = np.flatnonzero(~converged)
        sub_fug = None if fugacity is None else (lambda rows, y: fugacity(bad[rows], y))
        again = minimise_gibbs(g0_gas[bad], g0_cond[bad], A_gas, A_cond, b[bad], ln_p[bad],
                               state=initial_state(bad.size, nG, nC, m), fugacity=sub_fug,
                               tolerance=tolerance, max_iterations=max_iterations,
                               max_phase_rounds=max_phase_rounds)
        for name in ("ln_gas", "cond", "present", "ln_total", "potentials"):
            getattr(state, name)[bad] = getattr(again.state, name)
        converged[bad] = again.converged
        iterations[bad] += again.iterations
        residual[bad] = again.residual
    return CoreOutcome(gas=np.exp(state.ln_gas), cond=np.where(state.present, state.cond, 0.0),
                       present=state.present.copy(), potentials=state.potentials.copy(),
                       converged=converged, iterations=iterations, residual=residual, state=state)
