"""Compiled per-state kernel of the element-potential method (numba).

The same algorithm as :func:`eqdesign.solve.gibbs_core.minimise_gibbs` — Gordon and
McBride, NASA RP-1311 (1994): Newton on ln n_j, element potentials, condensed amounts
and ln n; the step-control factors of its eqs. (3.1)-(3.3); the add/remove test for pure
condensed species — compiled with numba and run state after state inside one compiled
loop, each state starting from its neighbour's answer along the sweep (a state that
does not converge from there is restarted from RP-1311's estimate).  Used for ideal-gas
batches; real-gas batches use the numpy path, which calls the fugacity model.

numba is a dependency because it makes the solver's inner loop run at compiled speed
without any C code in the project (see the commit that introduced it).
"""
from __future__ import annotations

import numpy as np
from numba import njit

LN_FLOOR = -690.0
LN_TRACE = np.log(1e-8)


@njit(cache=True, error_model='numpy', fastmath={'nsz', 'arcp', 'contract', 'reassoc'})
def _linear_solve(M, r, size):
    """Gaussian elimination with partial pivoting, in place; returns False if singular."""
    for k in range(size):
        piv = k
        best = abs(M[k, k])
        for i in range(k + 1, size):
            if abs(M[i, k]) > best:
                best = abs(M[i, k])
                piv = i
        if best == 0.0 or not np.isfinite(best):
            return False
        if piv != k:
            for j in range(size):
                tmp = M[k, j]
                M[k, j] = M[piv, j]
                M[piv, j] = tmp
            tmp = r[k]
            r[k] = r[piv]
            r[piv] = tmp
        inv = 1.0 / M[k, k]
        for i in range(k + 1, size):
            f = M[i, k] * inv
            if f != 0.0:
                for j in range(k + 1, size):
                    M[i, j] -= f * M[k, j]
                r[i] -= f * r[k]
    for k in range(size - 1, -1, -1):
        acc = r[k]
        for j in range(k + 1, size):
            acc -= M[k, j] * r[j]
        r[k] = acc / M[k, k]
    return True


@njit(cache=True, error_model='numpy')
def _nasa_properties(T, coeffs, bounds, nranges, j):
    """cp/R, h/RT and g/RT of species j at T from its NASA 7-coefficient rows."""
    r = 0
    while r < nranges[j] - 1 and T > bounds[j, r + 1]:
        r += 1
    a1 = coeffs[j, r, 0]
    a2 = coeffs[j, r, 1]
    a3 = coeffs[j, r, 2]
    a4 = coeffs[j, r, 3]
    a5 = coeffs[j, r, 4]
    a6 = coeffs[j, r, 5]
    a7 = coeffs[j, r, 6]
    cp = a1 + T * (a2 + T * (a3 + T * (a4 + T * a5)))
    h = a1 + T * (a2 / 2.0 + T * (a3 / 3.0 + T * (a4 / 4.0 + T * a5 / 5.0))) + a6 / T
    s = a1 * np.log(T) + T * (a2 + T * (a3 / 2.0 + T * (a4 / 3.0 + T * a5 / 4.0))) + a7
    return cp, h, h - s


@njit(cache=True, error_model='numpy', fastmath={'nsz', 'arcp', 'contract', 'reassoc'})
def _newton(fixed_h, c_gas, g0c, coeffs, bounds, nranges, ln_p, h0, A_gas, A_cond, b, bscale,
            present, ln_gas, ln_tot, cond, ln_T, pi, tolerance, step_tol, max_iterations, M, r,
            n_j, mu, d_ln, hg, hc):
    """Newton iterations for one state with the phase set fixed (RP-1311 Part I §2).

    Unknowns: element potentials π, condensed amounts Δn_c, Δln n and Δln T.  At fixed
    temperature (``fixed_h`` False) the Δln T row is the identity and μ°/RT comes from
    ``c_gas`` (g°/RT + ln P/P°) and ``g0c``.  At fixed enthalpy and pressure the NASA
    polynomials are evaluated at the current T and the energy equation
    Σ n_j h_j + Σ n_c h_c = H0 is linearised with d(g°/RT)/d ln T = -h°/RT and
    dh°/d ln T = cp° T (RP-1311 §2.5); ``h0`` is H0/R [K mol].
    Returns (converged, iterations, residual); ``ln_tot`` and ``ln_T`` are 1-element
    arrays (in/out).
    """
    m, nG = A_gas.shape
    nC = A_cond.shape[1]
    iN = m + nC
    iT = m + nC + 1            # used only at fixed enthalpy (M has room for it either way)
    size = m + nC + 2 if fixed_h else m + nC + 1
    residual = np.inf
    for j in range(nG):
        n_j[j] = np.exp(ln_gas[j])
        hg[j] = 0.0
    for c in range(nC):
        hc[c] = 0.0
    for it in range(max_iterations):
        lt = ln_tot[0]
        n_tot = np.exp(lt)
        sum_n = 0.0
        H = 0.0                    # H/(RT) at fixed enthalpy
        cp_all = 0.0               # Σ n cp/R at fixed enthalpy
        T = np.exp(ln_T[0]) if fixed_h else 1.0
        for j in range(nG):
            if fixed_h:
                cp, h, g = _nasa_properties(T, coeffs, bounds, nranges, j)
                hg[j] = h
                mu[j] = g + ln_p + ln_gas[j] - lt
                H += n_j[j] * h
                cp_all += n_j[j] * cp
            else:
                mu[j] = c_gas[j] + ln_gas[j] - lt
            sum_n += n_j[j]
        if fixed_h:
            for c in range(nC):
                cp, h, g = _nasa_properties(T, coeffs, bounds, nranges, nG + c)
                hc[c] = h
                g0c[c] = g
                if present[c]:
                    H += cond[c] * h
                    cp_all += cond[c] * cp
        for i in range(size):
            for k in range(size):
                M[i, k] = 0.0
            r[i] = 0.0
        sum_nmu = 0.0
        sum_nh = 0.0
        sum_nhh = 0.0
        sum_nhmu = 0.0
        for j in range(nG):
            nj = n_j[j]
            nmu = nj * mu[j]
            sum_nmu += nmu
            if fixed_h:
                nh = nj * hg[j]
                sum_nh += nh
                sum_nhh += nh * hg[j]
                sum_nhmu += nh * mu[j]
            for i in range(m):
                aij = A_gas[i, j]
                if aij != 0.0:
                    w = aij * nj
                    for k in range(i, m):
                        M[i, k] += w * A_gas[k, j]
                    M[i, iN] += w
                    if fixed_h:
                        M[i, iT] += w * hg[j]
                    r[i] += aij * (nmu - nj)
        for i in range(m):
            for k in range(i):
                M[i, k] = M[k, i]
            M[iN, i] = M[i, iN]
            M[iT, i] = M[i, iT]
            r[i] += b[i]
            for c in range(nC):
                r[i] -= A_cond[i, c] * cond[c]
        for c in range(nC):
            row = m + c
            if present[c]:
                for i in range(m):
                    M[i, row] = A_cond[i, c]
                    M[row, i] = A_cond[i, c]
                M[row, iT] = hc[c]
                M[iT, row] = hc[c]
                r[row] = g0c[c]
            else:
                M[row, row] = 1.0
        M[iN, iN] = sum_n - n_tot
        M[iN, iT] = sum_nh
        M[iT, iN] = sum_nh
        r[iN] = n_tot - sum_n + sum_nmu
        d_T = 0.0
        if fixed_h:
            M[iT, iT] = cp_all + sum_nhh
            r[iT] = h0 / T - H + sum_nhmu
        if not _linear_solve(M, r, size):
            return False, it + 1, np.inf
        d_tot = r[iN]
        if fixed_h:
            d_T = r[iT]
        for i in range(m):
            pi[i] = r[i]
        # step control, RP-1311 eqs. (3.1)-(3.3)
        grow = 0.0
        lam2 = np.inf
        for j in range(nG):
            d = -mu[j] + d_tot + hg[j] * d_T
            for i in range(m):
                d += A_gas[i, j] * r[i]
            d_ln[j] = d
            rel = ln_gas[j] - lt
            if rel > LN_TRACE:
                if d > grow:
                    grow = d
            elif d >= 0.0:
                den = d - d_tot
                if den != 0.0:
                    ratio = abs((-rel - 9.2103404) / den)
                    if ratio < lam2:
                        lam2 = ratio
        denom1 = max(5.0 * abs(d_tot), 5.0 * abs(d_T), grow)
        lam = 1.0
        if denom1 > 0.0:
            lam = min(lam, 2.0 / denom1)
        lam = min(lam, lam2)
        if not np.isfinite(lam):
            return False, it + 1, np.inf
        step = max(abs(d_tot), abs(d_T))
        for j in range(nG):
            new = ln_gas[j] + lam * d_ln[j]
            if new <= LN_FLOOR:
                new = LN_FLOOR
            ln_gas[j] = new
        ln_tot[0] = lt + lam * d_tot
        ln_T[0] += lam * d_T
        inv_tot = np.exp(-ln_tot[0])
        for j in range(nG):
            n_j[j] = np.exp(ln_gas[j])
            # RP-1311's test weights each log step by the species' share of the gas: the
            # last full step has set every trace species consistent with the potentials
            w = min(n_j[j] * inv_tot, 1.0)
            if w * abs(d_ln[j]) > step:
                step = w * abs(d_ln[j])
        for c in range(nC):
            if present[c]:
                dc = r[m + c]
                cond[c] += lam * dc
                if abs(dc) / bscale > step:
                    step = abs(dc) / bscale
        bal = 0.0
        for i in range(m):
            s = -b[i]
            for j in range(nG):
                s += A_gas[i, j] * n_j[j]
            for c in range(nC):
                s += A_cond[i, c] * cond[c]
            if abs(s) > bal:
                bal = abs(s)
        bal /= bscale
        if not (np.isfinite(step) and np.isfinite(bal)):
            return False, it + 1, np.inf
        if lam >= 1.0 and step < step_tol and bal < tolerance:
            return True, it + 1, max(step * step, bal)
        residual = max(step, bal)
    return False, max_iterations, residual


@njit(cache=True, error_model='numpy', fastmath={'nsz', 'arcp', 'contract', 'reassoc'})
def _solve_state(fixed_h, c_gas, g0c, coeffs, bounds, nranges, ln_p, h0, A_gas, A_cond, b,
                 ln_gas, ln_tot, cond, ln_T, present, pi, tolerance, step_tol, max_iterations,
                 rounds, M, r, n_j, mu, d_ln, hg, hc):
    """Newton plus the condensed-phase add/remove rounds for one state (RP-1311 §3.5):
    after each converged sub-problem remove the most negative condensed species, else add
    the absent one whose formation lowers G most, else stop."""
    m = A_gas.shape[0]
    nC = A_cond.shape[1]
    bscale = 0.0
    for i in range(m):
        bscale += abs(b[i])
    bscale = max(bscale, 1e-300)
    total_it = 0
    residual = np.inf
    for _ in range(rounds):
        ok, its, residual = _newton(fixed_h, c_gas, g0c, coeffs, bounds, nranges, ln_p, h0, A_gas,
                                    A_cond, b, bscale, present, ln_gas, ln_tot, cond, ln_T, pi,
                                    tolerance, step_tol, max_iterations, M, r, n_j, mu, d_ln, hg, hc)
        total_it += its
        if not ok:
            return False, total_it, residual
        if nC == 0:
            return True, total_it, residual
        worst = -1
        worst_val = 0.0
        for c in range(nC):
            if present[c] and cond[c] <= 0.0 and (worst < 0 or cond[c] < worst_val):
                worst = c
                worst_val = cond[c]
        if worst >= 0:
            present[worst] = False
            cond[worst] = 0.0
            continue
        best = -1
        best_val = -1e-9
        for c in range(nC):
            if not present[c]:
                drive = g0c[c]       # at fixed enthalpy: g°/RT at the converged T
                for i in range(m):
                    drive -= A_cond[i, c] * pi[i]
                if drive < best_val:
                    best_val = drive
                    best = c
        if best < 0:
            return True, total_it, residual
        present[best] = True
        cond[best] = 0.0
    return False, total_it, residual


@njit(cache=True, error_model='numpy', fastmath={'nsz', 'arcp', 'contract', 'reassoc'})
def _sweep(fixed_h, g0_gas, g0_cond, coeffs, bounds, nranges, h0, A_gas, A_cond, b, ln_p,
           tolerance, max_iterations, rounds, step_tol, ln_T_out, ln_gas_out, ln_tot_out, cond_out,
           present_out, pi_out, converged, iterations, residual, mode):
    """Solve every state in order.

    ``mode`` 0: each state starts from the linear extrapolation of the last two converged
    answers along the sweep (plain continuation after a phase change); ``mode`` 1: from
    the values passed in the output arrays.  Either way a state that fails is restarted
    from RP-1311's estimate (equal gas amounts, no condensed species; at fixed enthalpy
    from the starting temperature passed in ``ln_T_out``).
    """
    p = b.shape[0]
    m, nG = A_gas.shape
    nC = A_cond.shape[1]
    size = m + nC + 2
    M = np.empty((size, size))
    r = np.empty(size)
    n_j = np.empty(nG)
    mu = np.empty(nG)
    d_ln = np.empty(nG)
    hg = np.zeros(nG)
    hc = np.zeros(nC)
    c_gas = np.empty(nG)
    g0c = np.empty(nC)
    ln_gas = np.empty(nG)
    ln_tot = np.empty(1)
    ln_T = np.empty(1)
    cond = np.empty(nC)
    present = np.zeros(nC, dtype=np.bool_)
    pi = np.zeros(m)
    have_prev = False
    have_prev2 = False
    prev_gas = np.empty(nG)
    prev2_gas = np.zeros(nG)
    prev_tot = 0.0
    prev2_tot = 0.0
    prev_T = 0.0
    prev2_T = 0.0
    prev_cond = np.empty(nC)
    prev_present = np.zeros(nC, dtype=np.bool_)
    prev2_present = np.zeros(nC, dtype=np.bool_)
    for q in range(p):
        if not fixed_h:
            for j in range(nG):
                c_gas[j] = g0_gas[q, j] + ln_p[q]
            for c in range(nC):
                g0c[c] = g0_cond[q, c]
        start_T = ln_T_out[q]
        done = False
        its_all = 0
        res = np.inf
        for attempt in range(2):
            if attempt == 0 and mode == 1:
                for j in range(nG):
                    ln_gas[j] = ln_gas_out[q, j]
                ln_tot[0] = ln_tot_out[q]
                ln_T[0] = start_T
                for c in range(nC):
                    cond[c] = cond_out[q, c]
                    present[c] = present_out[q, c]
            elif attempt == 0 and not have_prev:
                continue
            elif attempt == 0:
                same = have_prev2
                for c in range(nC):
                    if prev_present[c] != prev2_present[c]:
                        same = False
                w = 1.0 if same else 0.0
                for j in range(nG):
                    ln_gas[j] = prev_gas[j] + w * (prev_gas[j] - prev2_gas[j])
                ln_tot[0] = prev_tot + w * (prev_tot - prev2_tot)
                ln_T[0] = prev_T + w * (prev_T - prev2_T) if fixed_h else start_T
                for c in range(nC):
                    cond[c] = prev_cond[c]
                    present[c] = prev_present[c]
            else:
                for j in range(nG):
                    ln_gas[j] = np.log(1.0 / nG)
                ln_tot[0] = 0.0
                ln_T[0] = start_T
                for c in range(nC):
                    cond[c] = 0.0
                    present[c] = False
            ok, its, res = _solve_state(fixed_h, c_gas, g0c, coeffs, bounds, nranges, ln_p[q], h0[q],
                                        A_gas, A_cond, b[q], ln_gas, ln_tot, cond, ln_T, present, pi,
                                        tolerance, step_tol, max_iterations, rounds, M, r, n_j, mu,
                                        d_ln, hg, hc)
            its_all += its
            if ok:
                done = True
                break
        converged[q] = done
        iterations[q] = its_all
        residual[q] = res
        ln_T_out[q] = ln_T[0]
        for j in range(nG):
            ln_gas_out[q, j] = ln_gas[j]
        ln_tot_out[q] = ln_tot[0]
        for c in range(nC):
            cond_out[q, c] = cond[c] if present[c] else 0.0
            present_out[q, c] = present[c]
        for i in range(m):
            pi_out[q, i] = pi[i]
        if done:
            have_prev2 = have_prev
            for j in range(nG):
                prev2_gas[j] = prev_gas[j]
                prev_gas[j] = ln_gas[j]
            prev2_tot = prev_tot
            prev_tot = ln_tot[0]
            prev2_T = prev_T
            prev_T = ln_T[0]
            for c in range(nC):
                prev2_present[c] = prev_present[c]
                prev_present[c] = present[c]
                prev_cond[c] = cond[c]
            have_prev = True


def solve_sweep(g0_gas, g0_cond, A_gas, A_cond, b, ln_p, tolerance, max_iterations, rounds,
                ln_gas_out, ln_tot_out, cond_out, present_out, pi_out, converged, iterations, residual,
                warm):
    """Fixed temperature and pressure for every state (``g0_*`` = g°/RT at each state).

    With ``warm`` True each state starts from its neighbours' answers along the sweep;
    with ``warm`` False from the values passed in the output arrays.
    """
    p, nG = g0_gas.shape
    step_tol = min(np.sqrt(tolerance) * 10.0, 1e-5)
    _sweep(False, g0_gas, g0_cond, np.zeros((1, 1, 7)), np.zeros((1, 2)), np.ones(1, np.int64),
           np.zeros(p), A_gas, A_cond, b, ln_p, tolerance, max_iterations, rounds, step_tol,
           np.zeros(p), ln_gas_out, ln_tot_out, cond_out, present_out, pi_out, converged,
           iterations, residual, 0 if warm else 1)


def solve_sweep_hp(coeffs, bounds, nranges, A_gas, A_cond, b, ln_p, h0, tolerance, max_iterations,
                   rounds, ln_T_out, ln_gas_out, ln_tot_out, cond_out, present_out, pi_out,
                   converged, iterations, residual):
    """Fixed enthalpy ``h0`` = H0/R [K mol] and pressure for every state, each starting
    from its neighbours' answers; on input ``ln_T_out`` holds the starting temperatures."""
    p = b.shape[0]
    nG, nC = A_gas.shape[1], A_cond.shape[1]
    # the caller checks the enthalpy balance to ~1e-10: keep the final error in ln T at
    # the square of this step
    step_tol = min(np.sqrt(tolerance) * 10.0, 1e-7)
    _sweep(True, np.zeros((p, nG)), np.zeros((p, nC)), coeffs, bounds, nranges, h0, A_gas,
           A_cond, b, ln_p, tolerance, max_iterations, rounds, step_tol, ln_T_out, ln_gas_out,
           ln_tot_out, cond_out, present_out, pi_out, converged, iterations, residual, 0)
