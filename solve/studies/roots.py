"""Vectorised root finding for the inverse questions: scan, bracket, refine.

Every crossing of a target along a scanned range is bracketed and refined together for all
states by a bracketed secant (Illinois regula falsi: M. Dowell, P. Jarratt, BIT 11 (1971)
168-174); a golden-section search finds the best conversion where the target is not
reached.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def bracketed_roots(f, a, b, fa, fb, *, ftol, xtol, max_iter=100):
    """Roots of f(x, idx) = 0 in the brackets [a, b], all brackets together.

    ``fa``, ``fb`` are f at the ends, on opposite sides of 0 (0 counted as non-negative).
    ``f(x, idx)`` evaluates the functions of the brackets ``idx`` (indices into ``a``) at
    the points ``x`` in one batched call.  Illinois regula falsi (M. Dowell, P. Jarratt,
    BIT 11 (1971) 168-174) with a bisection step every fourth iteration and whenever the
    secant point leaves the bracket.  A bracket stops when |f| <= ftol (scalar or one per
    bracket) or when it is narrower than xtol.

    Parameters
    ----------
    f : callable
        ``f(x, idx) -> ndarray`` of the same size as ``x``.
    a, b, fa, fb : array_like, shape (n,)
        Bracket ends and f there.
    ftol : float | array_like, shape (n,)
        Tolerance on |f| [unit of f].
    xtol : float
        Tolerance on the bracket width [unit of x].
    max_iter : int
        Iteration limit; a bracket still active then returns its best point so far.

    Returns
    -------
    x, fx : ndarray, shape (n,)
        The evaluated point with the smallest |f| per bracket, and f there.
    ok : ndarray of bool, shape (n,)
        False where an evaluation failed (NaN) before convergence.

    Examples
    --------
    >>> c = np.array([2.0, 3.0])
    >>> x, fx, ok = bracketed_roots(lambda x, idx: x**2 - c[idx], [1.0, 1.0], [2.0, 2.0],
    ...                             [-1.0, -2.0], [2.0, 1.0], ftol=1e-12, xtol=1e-14)
    >>> [round(float(v), 10) for v in x]
    [1.4142135624, 1.7320508076]
    """
    a, b, fa, fb = (np.array(x, dtype=float) for x in (a, b, fa, fb))
    ga, gb = fa.copy(), fb.copy()
    best_u = np.where(np.abs(fa) <= np.abs(fb), a, b)
    best_f = np.where(np.abs(fa) <= np.abs(fb), fa, fb)
    ftol = np.broadcast_to(np.asarray(ftol, dtype=float), a.shape)
    ok = np.ones(a.shape, dtype=bool)
    last = np.zeros(a.shape, dtype=int)
    active = ~((np.abs(best_f) <= ftol) | (np.abs(b - a) <= xtol))
    for it in range(max_iter):
        idx = np.flatnonzero(active)
        if idx.size == 0:
            break
        A, B, GA, GB = a[idx], b[idx], ga[idx], gb[idx]
        with np.errstate(invalid="ignore", divide="ignore"):
            x = (A * GB - B * GA) / (GB - GA)
        lo, hi = np.minimum(A, B), np.maximum(A, B)
        width = hi - lo
        bisect = (~np.isfinite(x)) | (x <= lo + 1e-3 * width) | (x >= hi - 1e-3 * width) | (it % 4 == 3)
        x = np.where(bisect, 0.5 * (A + B), x)
        fx = f(x, idx)
        bad = ~np.isfinite(fx)
        better = np.abs(fx) < np.abs(best_f[idx])
        best_u[idx] = np.where(better, x, best_u[idx])
        best_f[idx] = np.where(better, fx, best_f[idx])
        replace_a = (fx >= 0) == (fa[idx] >= 0)
        # Illinois: when the same end is replaced twice running, halve the other end's value
        gb[idx] = np.where(replace_a & (last[idx] == 1), GB * 0.5, GB)
        ga[idx] = np.where(~replace_a & (last[idx] == -1), GA * 0.5, GA)
        a[idx] = np.where(replace_a, x, A)
        fa[idx] = np.where(replace_a, fx, fa[idx])
        ga[idx] = np.where(replace_a, fx, ga[idx])
        b[idx] = np.where(replace_a, B, x)
        fb[idx] = np.where(replace_a, fb[idx], fx)
        gb[idx] = np.where(replace_a, gb[idx], fx)
        last[idx] = np.where(replace_a, 1, -1)
        ok[idx[bad]] = False
        done = bad | (np.abs(fx) <= ftol[idx]) | (np.abs(b[idx] - a[idx]) <= xtol)
        active[idx[done]] = False
    return best_u, best_f, ok


def golden_max(evaluate, a, b, case, *, utol, max_iter=60):
    """Maximum of g(u, case) on [a, b] per case by golden-section search (J. Kiefer,
    Proc. Am. Math. Soc. 4 (1953) 502), all cases together.

    ``evaluate(u, case)`` gives g at flat arrays; ``case`` (n,) labels the intervals.
    Stops when every interval is narrower than ``utol`` or after ``max_iter`` steps.
    Returns (u, g), each shape (n,): the best point per interval and g there.
    """
    a, b = np.array(a, dtype=float), np.array(b, dtype=float)
    r = (np.sqrt(5.0) - 1.0) / 2.0
    c = b - r * (b - a)
    d = a + r * (b - a)
    gcd = evaluate(np.concatenate([c, d]), np.concatenate([case, case]))
    gc, gd = gcd[:c.size], gcd[c.size:]
    for _ in range(max_iter):
        if np.all(np.abs(b - a) <= utol):
            break
        left = np.nan_to_num(gc, nan=-np.inf) >= np.nan_to_num(gd, nan=-np.inf)
        # keep [a, d] if g(c) >= g(d), else [c, b]
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        new_c = np.where(left, b - r * (b - a), d)
        new_d = np.where(left, c, a + r * (b - a))
        u_new = np.where(left, new_c, new_d)
        g_new = evaluate(u_new, case)
        gc, gd = np.where(left, g_new, gd), np.where(left, gc, g_new)
        c, d = new_c, new_d
    pick_c = np.nan_to_num(gc, nan=-np.inf) >= np.nan_to_num(gd, nan=-np.inf)
    return np.where(pick_c, c, d), np.where(pick_c, gc, gd)


@dataclass(frozen=True)
class Crossing:
    """A point where the equilibrium conversion equals the target.

    Attributes
    ----------
    value : float
        Temperature [K], pressure [Pa] or feed ratio [mol/mol] of the crossing.
    conversion : float
        Conversion there [-] (equal to the target within the tolerance).
    rising : bool
        True if conversion rises with the variable through the crossing.
    """

    value: float
    conversion: float
    rising: bool


@dataclass
class InverseSearch:
    """Outcome of :func:`inverse_search`, one entry per case (arrays of shape (n_cases,)).

    ``value``: the answer in the search variable u (NaN where not reached); ``reached``;
    ``whole_range``: the target is met over the whole range (the answer is a range end);
    ``best_conversion``, ``best_value``: the highest conversion over the range and where;
    ``crossings``: per case, the list of :class:`Crossing`; ``n_failed_scan``: scan points
    that failed to solve.
    """

    value: np.ndarray
    reached: np.ndarray
    whole_range: np.ndarray
    best_conversion: np.ndarray
    best_value: np.ndarray
    crossings: list
    n_failed_scan: np.ndarray


def inverse_search(evaluate, u_lo, u_hi, target, *, n_scan, utol, rtol, from_u) -> InverseSearch:
    """Scan conversion(u) on a grid per case, refine every crossing of the target, pick the
    answer by the module rule, and find the best conversion.  ``evaluate(u, case)`` gives
    the conversion at flat arrays; ``from_u`` maps u back to the variable."""
    S = target.size
    frac = np.linspace(0.0, 1.0, n_scan)
    grid = u_lo[:, None] + (u_hi - u_lo)[:, None] * frac[None, :]
    case = np.repeat(np.arange(S), n_scan)
    conv = evaluate(grid.reshape(-1), case).reshape(S, n_scan)
    f = conv - target[:, None]
    finite = np.isfinite(f)
    feasible = f >= 0
    cross = (feasible[:, :-1] != feasible[:, 1:]) & finite[:, :-1] & finite[:, 1:]
    ci, ck = np.nonzero(cross)
    ftol = rtol * np.maximum(np.abs(target), 1e-3)

    def residual(u, cases):
        return evaluate(u, cases) - target[cases]

    roots_u, roots_f, roots_ok = bracketed_roots(lambda u, idx: residual(u, ci[idx]), grid[ci, ck],
                                                 grid[ci, ck + 1], f[ci, ck], f[ci, ck + 1], ftol=ftol[ci],
                                                 xtol=utol)
    rising = f[ci, ck + 1] >= 0
    roots_u = np.where(roots_ok, roots_u, np.nan)

    # answer: the largest falling crossing, else the smallest rising one
    fall = np.full(S, -np.inf)
    np.maximum.at(fall, ci[~rising & roots_ok], roots_u[~rising & roots_ok])
    rise = np.full(S, np.inf)
    np.minimum.at(rise, ci[rising & roots_ok], roots_u[rising & roots_ok])
    value = np.where(np.isfinite(fall), fall, np.where(np.isfinite(rise), rise, np.nan))
    n_cross = np.bincount(ci[roots_ok], minlength=S)
    any_feasible = np.any(feasible & finite, axis=1)
    whole = (n_cross == 0) & any_feasible
    if whole.any():
        # target met over the whole range: the end of the range, by the same rule
        fin = finite[whole]
        rows = np.arange(fin.shape[0])
        first = conv[whole][rows, np.argmax(fin, axis=1)]
        last = conv[whole][rows, n_scan - 1 - np.argmax(fin[:, ::-1], axis=1)]
        value[whole] = np.where(last < first, u_hi[whole], u_lo[whole])
    reached = np.isfinite(value)

    # best conversion over the range (golden-section refinement of interior maxima)
    safe = np.where(finite, conv, -np.inf)
    k = np.argmax(safe, axis=1)
    best_c = safe[np.arange(S), k]
    best_u = grid[np.arange(S), k]
    interior = (k > 0) & (k < n_scan - 1) & np.isfinite(best_c)
    if interior.any():
        ii = np.flatnonzero(interior)
        gu, gc = golden_max(evaluate, grid[ii, k[ii] - 1], grid[ii, k[ii] + 1], ii, utol=utol)
        better = np.isfinite(gc) & (gc > best_c[ii])
        best_c[ii] = np.where(better, gc, best_c[ii])
        best_u[ii] = np.where(better, gu, best_u[ii])
    best_c = np.where(np.isfinite(best_c), best_c, np.nan)
    best_u = np.where(k == 0, u_lo, np.where(k == n_scan - 1, u_hi, best_u))

    crossings = [[] for _ in range(S)]
    order = np.lexsort((roots_u, ci))
    for j in order:           # one entry per crossing (not per state)
        if roots_ok[j]:
            crossings[ci[j]].append(Crossing(float(from_u(roots_u[j])), float(roots_f[j] + target[ci[j]]),
                                             bool(rising[j])))
    return InverseSearch(value=value, reached=reached, whole_range=whole, best_conversion=best_c,
                   best_value=best_u, crossings=crossings, n_failed_scan=(~finite).sum(axis=1))


# ------------------------------------------------------------------- message formatting
