"""Design questions asked backwards, approach to equilibrium, and the carbon limit.

Inverse questions: which temperature, pressure or feed ratio gives a wanted equilibrium
conversion of a key reactant::

    from eqdesign.solve.design import temperature_for_conversion
    ans = temperature_for_conversion(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar",
                                     key="N2", target=0.20, T_range=(500, 1000))
    ans.T, ans.message

Each question scans the conversion over the search range with one batched solve, finds
every crossing of the target, refines all crossings together by a bracketed secant method
(the Illinois variant of regula falsi with bisection safeguards: M. Dowell and P. Jarratt,
BIT 11 (1971) 168-174) and picks the answer by one rule:

* if conversion falls as the variable rises (an exothermic reaction in temperature, a
  reaction that makes more gas moles in pressure), the *largest* value that still reaches
  the target: beyond it the target is lost;
* if conversion rises with the variable, the *smallest* value that reaches it;
* when conversion both rises and falls through the target (several reactions), the
  largest crossing where it falls; every crossing is reported in ``crossings``.

Approach to equilibrium: a temperature approach ΔT (``approach="10 K"``) evaluates the
equilibrium at T + ΔT and T − ΔT in one batched solve and keeps, state by state, the side
with the lower conversion of the key: T + ΔT for an exothermic reaction, T − ΔT for an
endothermic one (the sign of d(conversion)/dT, found numerically, which for a single
reaction is the sign of ΔrH° by van 't Hoff's equation).  Answers are operating
temperatures; ``T_equilibrium`` tells where the equilibrium was taken.

Carbon limit: the activity of graphite implied by the gas at equilibrium *without* graphite
(from the element potentials of the equilibrium, or equivalently from any carbon-forming
reaction such as the Boudouard reaction 2 CO = C + CO2).  Where it exceeds 1 graphite is
thermodynamically stable.  This is the thermodynamic ("equilibrated gas") limit; the limit
on a real catalyst differs (J. R. Rostrup-Nielsen, *Catalytic Steam Reforming*, Springer,
1984, discusses the difference).

These are thermodynamic answers for design screening.  Reactors that run near them handle
flammable and toxic gases at high pressure and temperature: the final design must follow
the applicable local codes and licensed engineering practice.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Callable, Mapping, Sequence

import numpy as np

from ..thermo.database import SpeciesDatabase
from ..thermo.reactions import Reaction, bundled_database
from ..thermo.units import to_kelvin, to_pascal, to_si
from .equilibrium import EquilibriumInputError, EquilibriumResult, element_matrix, equilibrium
from .sweep import (
    ConversionMap, FeedRatio, STEAM, approach_kelvin, feed_ratio_spec, resolve_feed, solve_points,
)

#: Largest number of states per batched solver call inside the inverse questions.
BATCH = 20000

GRAPHITE = "C(gr)"


# =========================================================================== helpers
def _species_list(species, feed_names, rxns, db, extra=()) -> list[str]:
    names: list[str] = []
    for n in list(species) + list(feed_names) + list(extra):
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    for r in rxns:
        for n in r.names:
            if n not in names:
                names.append(n)
    return names


def _conversion(names, feed: Mapping[str, np.ndarray], T, P, *, key, reactions, gas_model, approach, db):
    """Equilibrium conversion of ``key`` at flat arrays of states (NaN where not converged)."""
    T = np.asarray(T, dtype=float)
    P = np.broadcast_to(np.asarray(P, dtype=float), T.shape)
    out = np.empty(T.size)
    for s in range(0, T.size, BATCH):
        sl = slice(s, min(s + BATCH, T.size))
        f = {k: np.broadcast_to(np.asarray(v, dtype=float), T.shape)[sl] for k, v in feed.items()}
        res, _ = solve_points(names, f, T[sl], P[sl], key=key, reactions=reactions, gas_model=gas_model,
                              approach=approach, database=db)
        out[sl] = res.conversion(key)
    return out


def _refine(evaluate, a, b, fa, fb, case, *, ftol, utol, max_iter=100):
    """Roots of f(u, case) = 0 in the brackets [a, b] (fa, fb on opposite sides of 0, with
    0 counted as non-negative), all brackets together.

    Illinois regula falsi (Dowell and Jarratt, BIT 11 (1971) 168) with a bisection step
    every fourth iteration and whenever the secant point leaves the bracket.  Stops a
    bracket when |f| <= ftol (per bracket) or the bracket is narrower than utol.

    Returns
    -------
    u, f : ndarray
        The evaluated point with the smallest |f| per bracket, and f there.
    ok : ndarray of bool
        False where an evaluation failed (NaN) before convergence.
    """
    a, b, fa, fb = (np.array(x, dtype=float) for x in (a, b, fa, fb))
    ga, gb = fa.copy(), fb.copy()
    best_u = np.where(np.abs(fa) <= np.abs(fb), a, b)
    best_f = np.where(np.abs(fa) <= np.abs(fb), fa, fb)
    ftol = np.broadcast_to(np.asarray(ftol, dtype=float), a.shape)
    ok = np.ones(a.shape, dtype=bool)
    last = np.zeros(a.shape, dtype=int)
    active = ~((np.abs(best_f) <= ftol) | (np.abs(b - a) <= utol))
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
        fx = evaluate(x, case[idx])
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
        done = bad | (np.abs(fx) <= ftol[idx]) | (np.abs(b[idx] - a[idx]) <= utol)
        active[idx[done]] = False
    return best_u, best_f, ok


def _golden_max(evaluate, a, b, case, *, utol, max_iter=60):
    """Maximum of g(u, case) on [a, b] per case by golden-section search (J. Kiefer,
    Proc. Am. Math. Soc. 4 (1953) 502), all cases together.  Returns (u, g)."""
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
class _Search:
    """Outcome of a batched inverse search, per case (internal)."""

    value: np.ndarray
    reached: np.ndarray
    whole_range: np.ndarray
    best_conversion: np.ndarray
    best_value: np.ndarray
    crossings: list
    n_failed_scan: np.ndarray


def _inverse_search(evaluate, u_lo, u_hi, target, *, n_scan, utol, rtol, from_u) -> _Search:
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

    roots_u, roots_f, roots_ok = _refine(residual, grid[ci, ck], grid[ci, ck + 1], f[ci, ck], f[ci, ck + 1],
                                         ci, ftol=ftol[ci], utol=utol)
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
        gu, gc = _golden_max(evaluate, grid[ii, k[ii] - 1], grid[ii, k[ii] + 1], ii, utol=utol)
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
    return _Search(value=value, reached=reached, whole_range=whole, best_conversion=best_c,
                   best_value=best_u, crossings=crossings, n_failed_scan=(~finite).sum(axis=1))


# ------------------------------------------------------------------- message formatting
def _num(x: float, decimals: int = 2) -> str:
    s = f"{x:.{decimals}f}"
    return s.rstrip("0").rstrip(".") if "." in s else s


def _snap(x, lo: float, hi: float):
    """Values within rounding of the range ends set exactly to them (after exp(log(.)))."""
    x = np.asarray(x, dtype=float)
    x = np.where(np.isclose(x, lo, rtol=1e-12, atol=0), lo, x)
    return np.where(np.isclose(x, hi, rtol=1e-12, atol=0), hi, x)


def _pct(x: float) -> str:
    return f"{100 * x:.6g} %"


def _bar(P: float) -> str:
    return f"{P / 1e5:.4g} bar"


@dataclass(frozen=True)
class _Variable:
    name: str               # "temperature"
    show: Callable          # value -> text with unit
    span: Callable          # (lo, hi) -> "between 500 and 900 K"


_TEMPERATURE = _Variable("temperature", lambda v: f"{_num(v, 2)} K",
                         lambda lo, hi: f"between {lo:g} and {hi:g} K")
_PRESSURE = _Variable("pressure", _bar, lambda lo, hi: f"between {lo / 1e5:.4g} and {hi / 1e5:.4g} bar")


def _ratio_variable(label: str) -> _Variable:
    return _Variable(f"{label} ratio", lambda v: f"{label} {v:.6g}",
                     lambda lo, hi: f"with {label} between {lo:.4g} and {hi:.4g}")


def _messages(search: _Search, var: _Variable, key: str, target, conditions, lo, hi, from_u,
              approach) -> list[str]:
    """One plain-language sentence per question (formatting only)."""
    out = []
    extra = f" with a {approach:g} K approach to equilibrium" if approach else ""
    span = var.span(lo, hi)
    for i in range(target.size):
        head = f"{_pct(target[i])} conversion of {key} "
        cond = conditions[i] + extra
        if not search.reached[i]:
            if np.isfinite(search.best_conversion[i]):
                best = (f"; the best is {100 * search.best_conversion[i]:.1f} % at "
                        f"{var.show(from_u(search.best_value[i]))}")
            else:
                best = "; no state in the range converged"
            out.append(f"{head}is not reachable {cond} {span}{best}")
            continue
        v = from_u(search.value[i])
        if search.whole_range[i]:
            out.append(f"{head}is reached {cond} everywhere {span}; {var.show(v)}, the end of the range, "
                       f"is returned: widen the range to find the limit")
            continue
        crossings = search.crossings[i]
        chosen = min(crossings, key=lambda c: abs(c.value - v))
        if chosen.rising:
            text = (f"{head}is reached {cond} from {var.show(v)} upward (conversion rises with "
                    f"{var.name}: the lowest {var.name} that reaches the target)")
        else:
            text = (f"{head}is reached {cond} up to {var.show(v)} (conversion falls with "
                    f"{var.name}: the highest {var.name} that still reaches the target)")
        if len(crossings) > 1:
            text += "; conversion crosses the target at " + ", ".join(
                f"{var.show(c.value)} ({'rising' if c.rising else 'falling'})" for c in crossings)
        if search.n_failed_scan[i]:
            text += f"; {int(search.n_failed_scan[i])} scan point(s) did not converge"
        out.append(text)
    return out


def _shape_out(x, shape):
    x = np.asarray(x)
    return x.reshape(shape) if shape else x.reshape(()).item()


def _object_array(items, shape):
    arr = np.empty(len(items), dtype=object)
    for i, it in enumerate(items):
        arr[i] = it
    return arr.reshape(shape) if shape else arr[0]


def _prepare(species, feed, key, target, reactions, approach, database, extra=()):
    db = database or bundled_database()
    dT = approach_kelvin(approach)
    base = resolve_feed(feed, db)
    key = db.resolve(key)
    rxns = tuple(Reaction.parse(r, db) if isinstance(r, str) else r for r in (reactions or ()))
    names = _species_list(species, base, rxns, db, extra)
    if key not in names:
        raise EquilibriumInputError(f"key reactant {key!r} is not among the species {names}")
    if base.get(key, 0.0) <= 0 and key not in extra:
        raise EquilibriumInputError(f"the key reactant {key} must be in the feed")
    target = np.asarray(to_si(target, "dimensionless"), dtype=float)
    if np.any(~np.isfinite(target)) or np.any(target >= 1):
        raise EquilibriumInputError("target conversion must be finite and below 1")
    return db, dT, base, key, rxns, names, target


def _range(rng, kind, what):
    try:
        lo, hi = rng
    except (TypeError, ValueError):
        raise EquilibriumInputError(f"{what}: give (low, high)") from None
    lo, hi = float(to_si(lo, kind)), float(to_si(hi, kind))
    if not (0 < lo < hi) or not np.isfinite(hi):
        raise EquilibriumInputError(f"{what}: need 0 < low < high, got ({lo:g}, {hi:g})")
    return lo, hi


# =========================================================================== results
@dataclass(frozen=True)
class TemperatureAnswer:
    """Temperature at which the equilibrium conversion of ``key`` reaches ``target``.

    Scalars for a single question; arrays of the broadcast shape of P and target otherwise
    (``crossings`` and ``message`` then are object/str arrays).

    Attributes
    ----------
    T : float | ndarray
        Operating temperature [K] (NaN where not reached).  With an approach ΔT it is the
        operating temperature, the equilibrium being evaluated at ``T_equilibrium``.
    reached : bool | ndarray
        The target is reached somewhere in the range.
    at_range_end : bool | ndarray
        The target is met over the whole range, so ``T`` is the end of the range chosen
        by the rule, not a crossing: widen ``T_range`` to find the limit.
    conversion_at_T : float | ndarray
        Conversion at ``T`` [-].
    best_conversion, best_T : float | ndarray
        Highest conversion found in the range [-] and where [K].
    crossings : tuple[Crossing, ...] | ndarray of tuples
        Every temperature in the range where conversion equals the target.
    T_equilibrium : float | ndarray
        T ± approach [K].
    P : float | ndarray
        Pressure [Pa].
    target, key, approach, message
    """

    T: object
    reached: object
    at_range_end: object
    conversion_at_T: object
    best_conversion: object
    best_T: object
    crossings: object = field(repr=False)
    T_equilibrium: object = field(repr=False)
    P: object = field(repr=False)
    target: object = field(repr=False)
    key: str = ""
    approach: float | None = None
    message: object = ""


@dataclass(frozen=True)
class PressureAnswer:
    """Pressure at which the equilibrium conversion of ``key`` reaches ``target``.

    Attributes: ``P`` [Pa], ``reached``, ``at_range_end``, ``conversion_at_P`` [-], ``best_conversion`` [-],
    ``best_P`` [Pa], ``crossings`` (values in Pa), ``T`` [K], ``T_equilibrium`` [K],
    ``target``, ``key``, ``approach`` [K], ``message``; shapes as in :class:`TemperatureAnswer`.
    """

    P: object
    reached: object
    at_range_end: object
    conversion_at_P: object
    best_conversion: object
    best_P: object
    crossings: object = field(repr=False)
    T: object = field(repr=False)
    T_equilibrium: object = field(repr=False)
    target: object = field(repr=False)
    key: str = ""
    approach: float | None = None
    message: object = ""


@dataclass(frozen=True)
class FeedRatioAnswer:
    """Feed ratio (numerator/denominator amount) at which the conversion reaches ``target``.

    Attributes: ``ratio`` [mol/mol], ``ratio_name`` (``"H2O/CO"`` or ``"steam-to-carbon"``),
    ``reached``, ``at_range_end``, ``conversion_at_ratio`` [-], ``best_conversion`` [-], ``best_ratio``
    [mol/mol], ``crossings``, ``T`` [K], ``P`` [Pa], ``T_equilibrium`` [K], ``target``,
    ``key``, ``approach`` [K], ``message``; shapes as in :class:`TemperatureAnswer`.
    """

    ratio: object
    ratio_name: str
    reached: object
    at_range_end: object
    conversion_at_ratio: object
    best_conversion: object
    best_ratio: object
    crossings: object = field(repr=False)
    T: object = field(repr=False)
    P: object = field(repr=False)
    T_equilibrium: object = field(repr=False)
    target: object = field(repr=False)
    key: str = ""
    approach: float | None = None
    message: object = ""


# =========================================================================== questions
def temperature_for_conversion(species: Sequence[str], feed: Mapping[str, object], P, key: str, target, *,
                               T_range=(300.0, 1500.0), reactions: Sequence[str] | None = None,
                               gas_model: str = "ideal", approach=None,
                               database: SpeciesDatabase | None = None, n_scan: int = 61) -> TemperatureAnswer:
    """Temperature at which the equilibrium conversion of ``key`` reaches ``target``.

    Conversion is scanned over ``T_range`` at ``n_scan`` temperatures (one batched solve for
    every pressure and target), every crossing of the target is refined to 1e-6 relative in
    conversion or 1e-4 K, and the answer follows the module rule: for an exothermic
    reaction (conversion falls with T) the highest temperature that still reaches the
    target, for an endothermic one the lowest.  A target that cannot be reached is said so,
    with the best conversion in the range and where.

    Parameters
    ----------
    species : sequence of str
        Species that may be present (as for :func:`eqdesign.solve.equilibrium`).
    feed : mapping of str to amount
        Feed amounts [mol] (single amounts).
    P : float | array_like | str | pint.Quantity
        Pressure [Pa]; arrays broadcast with ``target``.
    key : str
        Key reactant.
    target : float | array_like
        Wanted conversion of ``key`` [-] (below 1).
    T_range : (T_low, T_high)
        Search range [K] (numbers or strings such as ``"300 degC"``).
    reactions : sequence of str, optional
        Named-reactions mode.
    gas_model : {"ideal", "peng-robinson"}
    approach : float | str, optional
        Temperature approach ΔT [K]: the equilibrium is taken at T + ΔT (exothermic) or
        T − ΔT (endothermic), the side that lowers conversion; the answer is then the
        operating temperature.
    database : SpeciesDatabase, optional
    n_scan : int
        Temperatures in the scan; crossings closer together than the scan step may be missed.

    Returns
    -------
    TemperatureAnswer

    Examples
    --------
    Ammonia synthesis, 3:1 H2:N2 at 200 bar, ideal gas: the highest temperature giving
    20 % conversion of N2:

    >>> ans = temperature_for_conversion(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "200 bar",
    ...                                  "N2", 0.20, T_range=(500, 1000))
    >>> round(ans.T, 1), ans.reached
    (833.2, True)
    """
    db, dT, base, key, rxns, names, target = _prepare(species, feed, key, target, reactions, approach, database)
    P_arr = np.asarray(to_pascal(P), dtype=float)
    shape = np.broadcast_shapes(P_arr.shape, target.shape)
    P_c = np.broadcast_to(P_arr, shape).reshape(-1)
    tg = np.broadcast_to(target, shape).reshape(-1).copy()
    if np.any(P_c <= 0):
        raise EquilibriumInputError("pressures must be above 0 Pa")
    lo, hi = _range((to_kelvin(T_range[0]), to_kelvin(T_range[1])), "temperature", "T_range")
    if dT and lo - dT <= 0:
        raise EquilibriumInputError("T_range minus the approach must stay above 0 K")
    feed_c = {k: np.float64(v) for k, v in base.items()}

    def evaluate(u, case):
        return _conversion(names, feed_c, u, P_c[case], key=key, reactions=rxns, gas_model=gas_model,
                           approach=dT, db=db)

    S = tg.size
    search = _inverse_search(evaluate, np.full(S, lo), np.full(S, hi), tg, n_scan=n_scan, utol=1e-4,
                             rtol=1e-6, from_u=lambda u: u)
    T_ans = search.value
    conv_at, T_eq = _at_answers(names, lambda idx: feed_c, np.nan_to_num(T_ans, nan=lo), P_c, T_ans, key=key,
                                rxns=rxns, gas_model=gas_model, dT=dT, db=db)
    conditions = [f"at {_bar(p)}" for p in P_c]
    msgs = _messages(search, _TEMPERATURE, key, tg, conditions, lo, hi, lambda u: u, dT)
    return TemperatureAnswer(
        T=_shape_out(T_ans, shape), reached=_shape_out(search.reached, shape),
        at_range_end=_shape_out(search.whole_range, shape),
        conversion_at_T=_shape_out(conv_at, shape), best_conversion=_shape_out(search.best_conversion, shape),
        best_T=_shape_out(search.best_value, shape),
        crossings=_object_array([tuple(c) for c in search.crossings], shape),
        T_equilibrium=_shape_out(T_eq, shape), P=_shape_out(P_c, shape), target=_shape_out(tg, shape),
        key=key, approach=dT, message=_object_array(msgs, shape))


def _at_answers(names, feed, T_op, P, value, *, key, rxns, gas_model, dT, db):
    """Conversion and equilibrium temperature at the answers (one batched solve over the
    questions that have an answer).  ``feed``: callable idx -> feed mapping."""
    S = value.size
    ok = np.isfinite(value)
    conv = np.full(S, np.nan)
    T_eq = np.full(S, np.nan)
    if ok.any():
        idx = np.flatnonzero(ok)
        f = {k: np.broadcast_to(np.asarray(v, dtype=float), idx.shape) for k, v in feed(idx).items()}
        res, _ = solve_points(names, f, T_op[idx], P[idx], key=key, reactions=rxns, gas_model=gas_model,
                              approach=dT, database=db)
        conv[idx] = res.conversion(key)
        T_eq[idx] = res.T
    return conv, T_eq


def pressure_for_conversion(species: Sequence[str], feed: Mapping[str, object], T, key: str, target, *,
                            P_range=(1e5, 300e5), reactions: Sequence[str] | None = None,
                            gas_model: str = "ideal", approach=None,
                            database: SpeciesDatabase | None = None, n_scan: int = 25) -> PressureAnswer:
    """Pressure at which the equilibrium conversion of ``key`` reaches ``target``.

    The search runs in ln P over ``P_range`` (scan, then bracketed refinement to 1e-6
    relative in conversion or 1e-7 relative in P).  Conversion rising with pressure (fewer
    gas moles, Le Chatelier) gives the lowest pressure that reaches the target; falling
    gives the highest pressure that still reaches it.

    Parameters
    ----------
    species, feed, key, target, reactions, gas_model, approach, database
        As for :func:`temperature_for_conversion`.
    T : float | array_like | str | pint.Quantity
        Operating temperature [K]; arrays broadcast with ``target``.
    P_range : (P_low, P_high)
        Search range [Pa] (numbers or strings such as ``"10 bar"``).
    n_scan : int
        Pressures in the scan (uniform in ln P).

    Returns
    -------
    PressureAnswer

    Examples
    --------
    Ammonia synthesis at 700 K, 3:1 H2:N2, ideal gas: the lowest pressure giving 40 % conversion of N2:

    >>> ans = pressure_for_conversion(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, 700, "N2", 0.40,
    ...                               P_range=("10 bar", "500 bar"))
    >>> round(ans.P / 1e5, 1)
    146.1
    """
    db, dT, base, key, rxns, names, target = _prepare(species, feed, key, target, reactions, approach, database)
    T_arr = np.asarray(to_kelvin(T), dtype=float)
    shape = np.broadcast_shapes(T_arr.shape, target.shape)
    T_c = np.broadcast_to(T_arr, shape).reshape(-1).astype(float)
    tg = np.broadcast_to(target, shape).reshape(-1).copy()
    if np.any(T_c <= 0) or (dT and np.any(T_c - dT <= 0)):
        raise EquilibriumInputError("temperatures (minus the approach) must be above 0 K")
    lo, hi = _range(P_range, "pressure", "P_range")
    feed_c = {k: np.float64(v) for k, v in base.items()}

    def evaluate(u, case):
        return _conversion(names, feed_c, T_c[case], np.exp(u), key=key, reactions=rxns,
                           gas_model=gas_model, approach=dT, db=db)

    S = tg.size
    search = _inverse_search(evaluate, np.full(S, np.log(lo)), np.full(S, np.log(hi)), tg, n_scan=n_scan,
                             utol=1e-7, rtol=1e-6, from_u=np.exp)
    P_ans = _snap(np.exp(search.value), lo, hi)
    conv_at, T_eq = _at_answers(names, lambda idx: feed_c, T_c, np.nan_to_num(P_ans, nan=lo), P_ans, key=key,
                                rxns=rxns, gas_model=gas_model, dT=dT, db=db)
    conditions = [f"at {_num(t, 2)} K" for t in T_c]
    msgs = _messages(search, _PRESSURE, key, tg, conditions, lo, hi, lambda u: _snap(np.exp(u), lo, hi), dT)
    return PressureAnswer(
        P=_shape_out(P_ans, shape), reached=_shape_out(search.reached, shape),
        at_range_end=_shape_out(search.whole_range, shape),
        conversion_at_P=_shape_out(conv_at, shape), best_conversion=_shape_out(search.best_conversion, shape),
        best_P=_shape_out(_snap(np.exp(search.best_value), lo, hi), shape),
        crossings=_object_array([tuple(c) for c in search.crossings], shape),
        T=_shape_out(T_c, shape), T_equilibrium=_shape_out(T_eq, shape), target=_shape_out(tg, shape),
        key=key, approach=dT, message=_object_array(msgs, shape))


def feed_ratio_for_conversion(species: Sequence[str], feed: Mapping[str, object], T, P, key: str, target, *,
                              ratio=("H2O", "CO"), ratio_range=(0.1, 10.0),
                              reactions: Sequence[str] | None = None, gas_model: str = "ideal",
                              approach=None, database: SpeciesDatabase | None = None,
                              n_scan: int = 41) -> FeedRatioAnswer:
    """Feed ratio (amount of one feed species per amount of another) that gives ``target``.

    The numerator's feed amount is set to ratio × the denominator's (its amount in ``feed``,
    if any, is replaced); ``ratio="steam_to_carbon"`` sets steam per carbon atom of the
    feed species holding C and H.  The search runs in ln(ratio) over ``ratio_range``:
    conversion rising with the ratio (excess reactant) gives the smallest ratio that
    reaches the target; falling gives the largest that still reaches it.

    Parameters
    ----------
    species, feed, key, target, reactions, gas_model, approach, database
        As for :func:`temperature_for_conversion`.
    T : float | array_like | str | pint.Quantity
        Operating temperature [K].
    P : float | array_like | str | pint.Quantity
        Pressure [Pa].  T, P and target broadcast together.
    ratio : (str, str) | "steam_to_carbon"
        Numerator and denominator species.
    ratio_range : (low, high)
        Search range [mol/mol], low > 0.
    n_scan : int
        Ratios in the scan (uniform in ln ratio).

    Returns
    -------
    FeedRatioAnswer

    Examples
    --------
    Water-gas shift of CO at 500 K and 20 bar, ideal gas: the steam-to-CO ratio for 99 %
    conversion of CO:

    >>> ans = feed_ratio_for_conversion(["CO", "H2O", "CO2", "H2"], {"CO": 1}, 500, "20 bar",
    ...                                 "CO", 0.99, ratio=("H2O", "CO"), ratio_range=(0.5, 10),
    ...                                 reactions=["CO + H2O = CO2 + H2"])
    >>> round(ans.ratio, 3)
    1.705
    """
    db = database or bundled_database()
    spec = feed_ratio_spec(ratio, db)
    db, dT, base, key, rxns, names, target = _prepare(species, feed, key, target, reactions, approach, db,
                                                      extra=(spec.numerator,))
    T_arr = np.asarray(to_kelvin(T), dtype=float)
    P_arr = np.asarray(to_pascal(P), dtype=float)
    shape = np.broadcast_shapes(T_arr.shape, P_arr.shape, target.shape)
    T_c = np.broadcast_to(T_arr, shape).reshape(-1).astype(float)
    P_c = np.broadcast_to(P_arr, shape).reshape(-1).astype(float)
    tg = np.broadcast_to(target, shape).reshape(-1).copy()
    if np.any(T_c <= 0) or (dT and np.any(T_c - dT <= 0)) or np.any(P_c <= 0):
        raise EquilibriumInputError("temperatures (minus the approach) and pressures must be above zero")
    lo, hi = _range(ratio_range, "dimensionless", "ratio_range")
    spec.denominator_amount(base, db)        # checks the denominator is fed

    def evaluate(u, case):
        return _conversion(names, spec.apply(base, np.exp(u), db), T_c[case], P_c[case], key=key,
                           reactions=rxns, gas_model=gas_model, approach=dT, db=db)

    S = tg.size
    search = _inverse_search(evaluate, np.full(S, np.log(lo)), np.full(S, np.log(hi)), tg, n_scan=n_scan,
                             utol=1e-7, rtol=1e-6, from_u=np.exp)
    r_ans = _snap(np.exp(search.value), lo, hi)
    conv_at, T_eq = _at_answers(names, lambda idx: spec.apply(base, r_ans[idx], db), T_c, P_c, r_ans, key=key,
                                rxns=rxns, gas_model=gas_model, dT=dT, db=db)
    conditions = [f"at {_num(t, 2)} K and {_bar(p)}" for t, p in zip(T_c, P_c)]
    msgs = _messages(search, _ratio_variable(spec.label), key, tg, conditions, lo, hi,
                     lambda u: _snap(np.exp(u), lo, hi), dT)
    return FeedRatioAnswer(
        ratio=_shape_out(r_ans, shape), ratio_name=spec.label, reached=_shape_out(search.reached, shape),
        at_range_end=_shape_out(search.whole_range, shape),
        conversion_at_ratio=_shape_out(conv_at, shape),
        best_conversion=_shape_out(search.best_conversion, shape),
        best_ratio=_shape_out(_snap(np.exp(search.best_value), lo, hi), shape),
        crossings=_object_array([tuple(c) for c in search.crossings], shape),
        T=_shape_out(T_c, shape), P=_shape_out(P_c, shape), T_equilibrium=_shape_out(T_eq, shape),
        target=_shape_out(tg, shape), key=key, approach=dT, message=_object_array(msgs, shape))


# =========================================================================== carbon
#: Carbon-forming reactions and the ln a_C each implies: ln a_C = Σ ν_i μ_i/RT − g°_C/RT over
#: the gas species (ν > 0 for reactants, < 0 for gas products).
CARBON_ROUTES = {
    "2 CO = C(gr) + CO2": {"CO": 2.0, "CO2": -1.0},            # Boudouard
    "CH4 = C(gr) + 2 H2": {"CH4": 1.0, "H2": -2.0},            # methane cracking
    "CO + H2 = C(gr) + H2O": {"CO": 1.0, "H2": 1.0, "H2O": -1.0},   # CO reduction
}


def _chemical_potentials(result: EquilibriumResult) -> np.ndarray:
    """μ_i/RT = g°_i/RT + ln a_i at the solution, shape (*shape, n_species)."""
    with np.errstate(invalid="ignore"):
        return result.g0_RT + result.ln_activity()


def carbon_activity_by_route(result: EquilibriumResult, *, database: SpeciesDatabase | None = None) -> dict:
    """Activity of graphite implied by each carbon-forming reaction in the gas [-].

    a_C = K_B p_CO² / p_CO2 (Boudouard, 2 CO = C + CO2), K_M p_CH4 / p_H2² (methane
    cracking, CH4 = C + 2 H2) and K_R p_CO p_H2 / p_H2O (CO reduction, CO + H2 = C + H2O),
    pressures in bar with fugacity coefficients for a real gas, K from the database (the
    graphite data of ``C(gr)``).  At full gas equilibrium the three agree; for a gas held
    off equilibrium (named reactions) they differ.  NaN where a route's species are missing.

    Returns
    -------
    dict[str, float | ndarray]
        Route (reaction text) -> a_C.
    """
    db = database or bundled_database()
    mu = _chemical_potentials(result)
    g_c = np.asarray(db[GRAPHITE].gibbs_RT(np.asarray(result.T, dtype=float)))
    out = {}
    for text, route in CARBON_ROUTES.items():
        if not all(n in result.species for n in route):
            v = np.full(np.shape(result.T), np.nan)
        else:
            ln_a = sum(nu * mu[..., result.species.index(n)] for n, nu in route.items()) - g_c
            with np.errstate(over="ignore"):
                v = np.exp(ln_a)
        out[text] = float(v) if np.ndim(v) == 0 else v
    return out


def _element_potential_ln_a_c(A, elements, mu, y, amounts, gas, g_c):
    """ln a_C from the carbon element potential, flat arrays (p, n_species) (see
    :func:`carbon_activity`); NaN where no weighted species carries carbon."""
    with np.errstate(invalid="ignore"):
        w = np.where(gas & (y > 1e-100), np.clip(y, 1e-10, 1.0), 0.0)
        w = np.where(~gas & (amounts > 0), 1.0, w)
    w = np.where(np.isfinite(mu) & np.isfinite(w), w, 0.0)
    mu = np.where(w > 0, mu, 0.0)
    M = (w[:, None, :] * A[None, :, :]) @ A.T                  # (p, m, m): A diag(w) A^T
    rhs = (w * mu) @ A.T                                          # (p, m)
    m_el = len(elements)
    empty = np.diagonal(M, axis1=1, axis2=2) <= 0                  # element carried by no weighted species
    M[:, np.arange(m_el), np.arange(m_el)] += empty
    pi = np.linalg.solve(M, rhs[..., None])[..., 0]
    iC = elements.index("C")
    return np.where(empty[:, iC], np.nan, pi[:, iC] - g_c)


def carbon_activity(result: EquilibriumResult, *, database: SpeciesDatabase | None = None,
                    method: str = "auto"):
    """Activity of graphite a_C implied by an equilibrium gas [-]; above 1, graphite is stable.

    All-species results are at full gas equilibrium, where every description gives the
    same a_C:

    * ``method="element-potential"``: ln a_C = π_C − g°_C(gr)/RT with π_C the carbon
      element potential, found by least squares from μ_j/RT = Σ_e a_ej π_e over the species
      present, weighted by mole fraction (S. Gordon and B. J. McBride, NASA RP-1311, 1994,
      sec. 2);
    * ``method="auto"`` (default, faster): at each state the carbon-forming reaction of
      :data:`CARBON_ROUTES` whose least abundant species is most abundant (methane
      cracking, Boudouard or CO reduction; :func:`carbon_activity_by_route`), the element
      potential where none of them applies.

    Named-reactions results (gas not at full equilibrium): the largest a_C of the
    carbon-forming routes whose species all have non-zero amounts (a route with an absent
    species gives no finite value and is skipped).

    Parameters
    ----------
    result : EquilibriumResult
        An equilibrium without graphite (if graphite is present at unit activity the value
        is 1).
    database : SpeciesDatabase, optional
        Supplies the data of ``C(gr)``.
    method : {"auto", "element-potential"}

    Returns
    -------
    float | ndarray
        a_C [-]; NaN where not converged or where the gas holds no carbon.

    Examples
    --------
    Methane and steam 1:1 at 1 bar, 1000 K: graphite is stable.

    >>> from eqdesign.solve import equilibrium
    >>> r = equilibrium(["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1, "H2O": 1}, 1000, 1e5)
    >>> round(carbon_activity(r), 2)
    1.33
    """
    if method not in ("auto", "element-potential"):
        raise EquilibriumInputError(f"method {method!r}: use 'auto' or 'element-potential'")
    db = database or bundled_database()
    shape = np.shape(result.T)
    if result.reactions:
        routes = carbon_activity_by_route(result, database=db)
        stack = np.stack([np.asarray(v, dtype=float) for v in routes.values()])
        stack = np.where(np.isfinite(stack), stack, np.nan)    # a route missing a species is undefined
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            v = np.nanmax(stack, axis=0)
        return float(v) if np.ndim(v) == 0 else v
    records = [db[n] for n in result.species]
    elements, A = element_matrix(records)
    if "C" not in elements:
        return float("nan") if shape == () else np.full(shape, np.nan)
    ns = len(records)
    T = np.asarray(result.T, dtype=float).reshape(-1)
    g_c = np.asarray(db[GRAPHITE].gibbs_RT(T), dtype=float).reshape(-1)
    mu = _chemical_potentials(result).reshape(-1, ns)
    y = result.mole_fraction_array.reshape(-1, ns)
    ln_a = np.full(T.size, np.nan)
    todo = np.ones(T.size, dtype=bool)
    if method == "auto":
        best_q = np.zeros(T.size)
        for route in CARBON_ROUTES.values():
            if not all(n in result.species for n in route):
                continue
            cols = [result.species.index(n) for n in route]
            q = np.min(y[:, cols], axis=1)                      # least abundant route species
            with np.errstate(invalid="ignore"):
                value = sum(nu * mu[:, c] for nu, c in zip(route.values(), cols)) - g_c
                take = np.isfinite(value) & (q > 1e-30) & (q > best_q)
            ln_a = np.where(take, value, ln_a)
            best_q = np.where(take, q, best_q)
        todo = ~np.isfinite(ln_a)
    if todo.any():
        idx = np.flatnonzero(todo)
        ln_a[idx] = _element_potential_ln_a_c(A, elements, mu[idx], y[idx],
                                              result.amount_array.reshape(-1, ns)[idx], result.gas_mask, g_c[idx])
    with np.errstate(over="ignore"):
        a = np.exp(ln_a)
    a = np.where(np.asarray(result.converged).reshape(-1), a, np.nan)
    return float(a[0]) if shape == () else a.reshape(shape)


def graphite_stable(obj, *, database: SpeciesDatabase | None = None):
    """True where graphite is thermodynamically stable (a_C > 1) at an equilibrium state.

    Parameters
    ----------
    obj : EquilibriumResult | ConversionMap
        An equilibrium result (a_C from :func:`carbon_activity`) or a conversion map (its
        ``carbon_activity``).

    Returns
    -------
    bool | ndarray of bool
        False where a_C is NaN.
    """
    if isinstance(obj, ConversionMap):
        if obj.carbon_activity is None:
            raise EquilibriumInputError("the map's gas holds no carbon: graphite cannot form")
        a = obj.carbon_activity
    else:
        a = carbon_activity(obj, database=database)
    with np.errstate(invalid="ignore"):
        s = np.asarray(a) > 1.0
    return bool(s) if s.ndim == 0 else s


@dataclass(frozen=True)
class CarbonLimit:
    """The feed ratio below which graphite is thermodynamically stable, at each (T, P).

    Attributes
    ----------
    T, P : ndarray
        Temperature [K] and pressure [Pa] (broadcast shape of the inputs).
    ratio_name : str
        ``"steam-to-carbon"`` or ``"<numerator>/<denominator>"``.
    critical_ratio : ndarray
        The ratio [mol/mol] at which a_C = 1: graphite is stable below it and not above it.
        NaN where the boundary lies outside ``ratio_range`` (see ``status``).
    status : ndarray of str
        ``"bracketed"``; ``"carbon-free"`` (a_C < 1 already at the low end of the range);
        ``"carbon"`` (a_C > 1 even at the high end); ``"failed"``.
    ratio_range : (float, float)
    ratio_values : ndarray | None
        Ratios [mol/mol] at which ``carbon_activity`` was also evaluated.
    carbon_activity : ndarray | None
        a_C [-] on the grid (*shape, len(ratio_values)).
    graphite_stable : ndarray | None
        ``carbon_activity > 1``.
    message : str
    """

    T: np.ndarray
    P: np.ndarray
    ratio_name: str
    critical_ratio: np.ndarray
    status: np.ndarray
    ratio_range: tuple
    ratio_values: np.ndarray | None = None
    carbon_activity: np.ndarray | None = field(default=None, repr=False)
    graphite_stable: np.ndarray | None = field(default=None, repr=False)
    message: str = ""


def carbon_limit(species: Sequence[str], feed: Mapping[str, object], *, T, P, steam_to_carbon=None,
                 feed_ratio=None, ratio_range=(0.05, 10.0), gas_model: str = "ideal",
                 database: SpeciesDatabase | None = None, tolerance: float = 1e-8) -> CarbonLimit:
    """Critical steam-to-carbon (or other feed) ratio for graphite formation at each (T, P).

    The gas is equilibrated *without* graphite (condensed species in ``species`` are left
    out) and the graphite activity a_C is taken from its element potentials
    (:func:`carbon_activity`); the ratio where a_C = 1 is found by a vectorised bracketed
    search in ln(ratio) (Illinois regula falsi), every (T, P) at once.  a_C is taken to
    fall as the ratio rises (more oxidant per carbon).

    Parameters
    ----------
    species : sequence of str
        C-H-O gas species (e.g. CH4, H2O, CO, CO2, H2).
    feed : mapping of str to amount
        Base feed [mol], e.g. ``{"CH4": 1}``; the ratio numerator is set from the ratio.
    T, P : float | array_like | str | pint.Quantity
        Temperature [K] and pressure [Pa]; they broadcast (use ``T[:, None]`` and
        ``P[None, :]`` for a grid).
    steam_to_carbon : array_like, optional
        Steam-to-carbon ratios [mol/mol] at which a_C is also returned.  The default ratio
        is steam-to-carbon (steam per carbon atom of the feed species holding C and H).
    feed_ratio : (str, str) or (str, str, array_like), optional
        Another ratio instead (``("CO2", "CH4")``), optionally with values at which a_C is
        returned.
    ratio_range : (low, high)
        Search range of the ratio [mol/mol], low > 0.
    gas_model : {"ideal", "peng-robinson"}
    database : SpeciesDatabase, optional
    tolerance : float
        On |ln a_C| at the boundary.

    Returns
    -------
    CarbonLimit

    Examples
    --------
    Methane steam reforming at 1 bar, 1073.15 K (800 degC), ideal gas:

    >>> lim = carbon_limit(["CH4", "H2O", "CO", "CO2", "H2"], {"CH4": 1}, T=1073.15, P=1e5)
    >>> round(float(lim.critical_ratio), 2)
    1.02
    """
    db = database or bundled_database()
    base = resolve_feed(feed, db)
    values = None
    if feed_ratio is not None:
        if steam_to_carbon is not None:
            raise EquilibriumInputError("give steam_to_carbon or feed_ratio, not both")
        if len(feed_ratio) == 3:
            spec, values = feed_ratio_spec(feed_ratio[:2], db), feed_ratio[2]
        else:
            spec = feed_ratio_spec(feed_ratio, db)
    else:
        spec = FeedRatio(STEAM, "carbon")
        values = steam_to_carbon
    names = [n for n in _species_list(species, base, (), db, (spec.numerator,)) if db[n].is_gas]
    if not any(db[n].elements.get("C", 0) > 0 for n in names):
        raise EquilibriumInputError("no carbon-containing gas species: graphite cannot form")
    spec.denominator_amount(base, db)
    T_arr = np.asarray(to_kelvin(T), dtype=float)
    P_arr = np.asarray(to_pascal(P), dtype=float)
    shape = np.broadcast_shapes(T_arr.shape, P_arr.shape)
    T_c = np.broadcast_to(T_arr, shape).reshape(-1)
    P_c = np.broadcast_to(P_arr, shape).reshape(-1)
    lo, hi = _range(ratio_range, "dimensionless", "ratio_range")
    S = T_c.size

    def ln_a_c(u, case):
        out = np.empty(u.size)
        for s in range(0, u.size, BATCH):
            sl = slice(s, min(s + BATCH, u.size))
            f = spec.apply(base, np.exp(u[sl]), db)
            f = {k: np.broadcast_to(v, u[sl].shape) for k, v in f.items()}
            res = equilibrium(names, f, T_c[case[sl]], P_c[case[sl]], gas_model=gas_model, database=db, warn=False)
            with np.errstate(divide="ignore"):
                out[sl] = np.log(carbon_activity(res, database=db))
        return out

    cases = np.arange(S)
    ends = ln_a_c(np.concatenate([np.full(S, np.log(lo)), np.full(S, np.log(hi))]), np.concatenate([cases, cases]))
    f_lo, f_hi = ends[:S], ends[S:]
    status = np.full(S, "bracketed", dtype=object)
    status[np.isfinite(f_lo) & (f_lo < 0)] = "carbon-free"
    status[np.isfinite(f_hi) & (f_hi >= 0)] = "carbon"
    status[~np.isfinite(f_lo) | ~np.isfinite(f_hi)] = "failed"
    br = np.flatnonzero(status == "bracketed")
    critical = np.full(S, np.nan)
    if br.size:
        u, fu, ok = _refine(ln_a_c, np.full(br.size, np.log(lo)), np.full(br.size, np.log(hi)), f_lo[br], f_hi[br],
                            br, ftol=tolerance, utol=1e-10)
        critical[br] = np.where(ok, np.exp(u), np.nan)
        status[br[~ok]] = "failed"

    a_grid = stable = ratio_values = None
    if values is not None:
        ratio_values = np.atleast_1d(np.asarray(to_si(values, "dimensionless"), dtype=float))
        nv = ratio_values.size
        u = np.tile(np.log(ratio_values), S)
        case = np.repeat(cases, nv)
        a_grid = np.exp(ln_a_c(u, case)).reshape(shape + (nv,))
        with np.errstate(invalid="ignore"):
            stable = a_grid > 1.0
    n_out = int(np.count_nonzero(status != "bracketed"))
    message = (f"{S} state(s): boundary found at {S - n_out}"
               + (f"; {n_out} outside {spec.label} {lo:g}-{hi:g} or failed (see status)" if n_out else ""))
    return CarbonLimit(T=np.broadcast_to(T_arr, shape).copy(), P=np.broadcast_to(P_arr, shape).copy(),
                       ratio_name=spec.label, critical_ratio=critical.reshape(shape),
                       status=status.reshape(shape), ratio_range=(lo, hi), ratio_values=ratio_values,
                       carbon_activity=a_grid, graphite_stable=stable, message=message)
