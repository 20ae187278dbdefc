"""Design questions asked backwards, approach to equilibrium, and the carbon limit.

Inverse questions: which temperature, pressure or feed ratio gives a wanted equilibrium
conversion of a key reactant::

    from eqdesign.solve import temperature_for_conversion
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

from dataclasses import dataclass, field
from typing import Callable, ClassVar, Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ...thermo.units import to_kelvin, to_si
from ..core.inputs import (broadcast_shape, conversion_targets, feed_mapping, pressures, quantity,
                           reaction_list, species_names, temperatures, whole_number)
from ..core.result import EquilibriumInputError
from .answers import InverseAnswer, shape_out
from .feeds import approach_kelvin, feed_ratio_spec, resolve_feed
from .maps import solve_points
from .roots import InverseSearch, inverse_search


#: Largest number of states per batched solver call inside the inverse questions.
BATCH = 20000


# =========================================================================== helpers
def species_list(species, feed_names, rxns, db, extra=()) -> list[str]:
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


def _messages(search: InverseSearch, var: _Variable, key: str, target, conditions, lo, hi, from_u,
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



def _object_array(items, shape):
    arr = np.empty(len(items), dtype=object)
    for i, it in enumerate(items):
        arr[i] = it
    return arr.reshape(shape) if shape else arr[0]


def _prepare(species, feed, key, target, reactions, approach, database, n_scan, extra=()):
    """Checked common inputs of the three questions (EquilibriumInputError naming the
    argument otherwise)."""
    db = database or bundled_database()
    whole_number(n_scan, "n_scan", 2)
    dT = approach_kelvin(approach)
    base = resolve_feed(feed_mapping(feed), db)
    if not isinstance(key, str):
        raise EquilibriumInputError(f"key must be the name of the key reactant (text), got {key!r}")
    key = db.resolve(key)
    rxns = reaction_list(reactions, db)
    names = species_list(species_names(species), base, rxns, db, extra)
    if key not in names:
        raise EquilibriumInputError(f"key reactant {key!r} is not among the species {names}")
    if base.get(key, 0.0) <= 0 and key not in extra:
        raise EquilibriumInputError(f"the key reactant {key} must be in the feed")
    target = conversion_targets(target)
    return db, dT, base, key, rxns, names, target


def search_range(rng, kind, what, reader=None):
    """A search range (low, high) in SI, 0 < low < high, both finite."""
    if isinstance(rng, (str, bytes)) or not isinstance(rng, (tuple, list, np.ndarray)) or len(rng) != 2:
        raise EquilibriumInputError(f"{what}: give (low, high), got {rng!r}")
    read = reader or (lambda v: to_si(v, kind))
    lo, hi = (float(quantity(read(v), "dimensionless", what)) for v in rng)
    if not (0 < lo < hi) or not np.isfinite(hi):
        raise EquilibriumInputError(f"{what}: need 0 < low < high, got ({lo:g}, {hi:g})")
    return lo, hi


# =========================================================================== results
@dataclass(frozen=True)
class TemperatureAnswer(InverseAnswer):
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
    trustworthy : bool | ndarray
        The state at the answer is converged and uses no species outside its data range
        (False where there is no answer).
    flags : str | ndarray of str
        What makes that state untrustworthy ("" where nothing does, "no answer" where there
        is none; :meth:`EquilibriumResult.state_flags`).
    value, unit, status, shape
        The shared answer shape (:class:`~eqdesign.solve.studies.answers.InverseAnswer`):
        ``value`` is ``T``, ``unit`` ``"K"``, ``status`` per question ``"reached"``,
        ``"search-range end"`` or ``"not reachable"``.
    """

    value_field: ClassVar[str] = "T"
    unit: ClassVar[str] = "K"

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
    trustworthy: object = None
    flags: object = None


@dataclass(frozen=True)
class PressureAnswer(InverseAnswer):
    """Pressure at which the equilibrium conversion of ``key`` reaches ``target``.

    Attributes: ``P`` [Pa], ``reached``, ``at_range_end``, ``conversion_at_P`` [-], ``best_conversion`` [-],
    ``best_P`` [Pa], ``crossings`` (values in Pa), ``T`` [K], ``T_equilibrium`` [K],
    ``target``, ``key``, ``approach`` [K], ``message``; shapes as in :class:`TemperatureAnswer`.
    ``value`` is ``P``, ``unit`` ``"Pa"``; ``status`` as in :class:`TemperatureAnswer`.
    """

    value_field: ClassVar[str] = "P"
    unit: ClassVar[str] = "Pa"

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
    trustworthy: object = None
    flags: object = None


@dataclass(frozen=True)
class FeedRatioAnswer(InverseAnswer):
    """Feed ratio (numerator/denominator amount) at which the conversion reaches ``target``.

    Attributes: ``ratio`` [mol/mol], ``ratio_name`` (``"H2O/CO"`` or ``"steam-to-carbon"``),
    ``reached``, ``at_range_end``, ``conversion_at_ratio`` [-], ``best_conversion`` [-], ``best_ratio``
    [mol/mol], ``crossings``, ``T`` [K], ``P`` [Pa], ``T_equilibrium`` [K], ``target``,
    ``key``, ``approach`` [K], ``message``; shapes as in :class:`TemperatureAnswer`.
    ``value`` is ``ratio``, ``unit`` ``"mol/mol"``; ``status`` as in :class:`TemperatureAnswer`.
    """

    value_field: ClassVar[str] = "ratio"
    unit: ClassVar[str] = "mol/mol"

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
    trustworthy: object = None
    flags: object = None


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
        Wanted conversion of ``key`` [-], strictly between 0 and 1.
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
    db, dT, base, key, rxns, names, target = _prepare(species, feed, key, target, reactions, approach,
                                                      database, n_scan)
    P_arr = pressures(P)
    shape = broadcast_shape(P=P_arr, target=target)
    P_c = np.broadcast_to(P_arr, shape).reshape(-1)
    tg = np.broadcast_to(target, shape).reshape(-1).copy()
    if np.any(P_c <= 0):
        raise EquilibriumInputError("pressures must be above 0 Pa")
    lo, hi = search_range(T_range, "temperature", "T_range", reader=to_kelvin)
    if dT and lo - dT <= 0:
        raise EquilibriumInputError("T_range minus the approach must stay above 0 K")
    feed_c = {k: np.float64(v) for k, v in base.items()}

    def evaluate(u, case):
        return _conversion(names, feed_c, u, P_c[case], key=key, reactions=rxns, gas_model=gas_model,
                           approach=dT, db=db)

    S = tg.size
    search = inverse_search(evaluate, np.full(S, lo), np.full(S, hi), tg, n_scan=n_scan, utol=1e-4,
                             rtol=1e-6, from_u=lambda u: u)
    T_ans = search.value
    conv_at, T_eq, trusted, flags = _at_answers(names, lambda idx: feed_c, np.nan_to_num(T_ans, nan=lo), P_c, T_ans, key=key,
                                rxns=rxns, gas_model=gas_model, dT=dT, db=db)
    conditions = [f"at {_bar(p)}" for p in P_c]
    msgs = _messages(search, _TEMPERATURE, key, tg, conditions, lo, hi, lambda u: u, dT)
    return TemperatureAnswer(
        T=shape_out(T_ans, shape), reached=shape_out(search.reached, shape),
        at_range_end=shape_out(search.whole_range, shape),
        conversion_at_T=shape_out(conv_at, shape), best_conversion=shape_out(search.best_conversion, shape),
        best_T=shape_out(search.best_value, shape),
        crossings=_object_array([tuple(c) for c in search.crossings], shape),
        T_equilibrium=shape_out(T_eq, shape), P=shape_out(P_c, shape), target=shape_out(tg, shape),
        key=key, approach=dT, message=_object_array(msgs, shape),
        trustworthy=shape_out(trusted, shape), flags=_object_array(list(flags), shape))


def _at_answers(names, feed, T_op, P, value, *, key, rxns, gas_model, dT, db):
    """Conversion, equilibrium temperature, trustworthiness and flags at the answers (one
    batched solve over the questions that have an answer; "no answer" and untrustworthy where
    there is none).  ``feed``: callable idx -> feed mapping."""
    S = value.size
    ok = np.isfinite(value)
    conv = np.full(S, np.nan)
    T_eq = np.full(S, np.nan)
    trusted = np.zeros(S, dtype=bool)
    flags = np.full(S, "no answer", dtype=object)
    if ok.any():
        idx = np.flatnonzero(ok)
        f = {k: np.broadcast_to(np.asarray(v, dtype=float), idx.shape) for k, v in feed(idx).items()}
        res, _ = solve_points(names, f, T_op[idx], P[idx], key=key, reactions=rxns, gas_model=gas_model,
                              approach=dT, database=db)
        conv[idx] = res.conversion(key)
        T_eq[idx] = res.T
        trusted[idx] = res.trustworthy
        flags[idx] = res.state_flags()
    return conv, T_eq, trusted, flags


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
    db, dT, base, key, rxns, names, target = _prepare(species, feed, key, target, reactions, approach,
                                                      database, n_scan)
    T_arr = temperatures(T)
    shape = broadcast_shape(T=T_arr, target=target)
    T_c = np.broadcast_to(T_arr, shape).reshape(-1).astype(float)
    tg = np.broadcast_to(target, shape).reshape(-1).copy()
    if np.any(T_c <= 0) or (dT and np.any(T_c - dT <= 0)):
        raise EquilibriumInputError("temperatures (minus the approach) must be above 0 K")
    lo, hi = search_range(P_range, "pressure", "P_range")
    feed_c = {k: np.float64(v) for k, v in base.items()}

    def evaluate(u, case):
        return _conversion(names, feed_c, T_c[case], np.exp(u), key=key, reactions=rxns,
                           gas_model=gas_model, approach=dT, db=db)

    S = tg.size
    search = inverse_search(evaluate, np.full(S, np.log(lo)), np.full(S, np.log(hi)), tg, n_scan=n_scan,
                             utol=1e-7, rtol=1e-6, from_u=np.exp)
    P_ans = _snap(np.exp(search.value), lo, hi)
    conv_at, T_eq, trusted, flags = _at_answers(names, lambda idx: feed_c, T_c, np.nan_to_num(P_ans, nan=lo), P_ans, key=key,
                                rxns=rxns, gas_model=gas_model, dT=dT, db=db)
    conditions = [f"at {_num(t, 2)} K" for t in T_c]
    msgs = _messages(search, _PRESSURE, key, tg, conditions, lo, hi, lambda u: _snap(np.exp(u), lo, hi), dT)
    return PressureAnswer(
        P=shape_out(P_ans, shape), reached=shape_out(search.reached, shape),
        at_range_end=shape_out(search.whole_range, shape),
        conversion_at_P=shape_out(conv_at, shape), best_conversion=shape_out(search.best_conversion, shape),
        best_P=shape_out(_snap(np.exp(search.best_value), lo, hi), shape),
        crossings=_object_array([tuple(c) for c in search.crossings], shape),
        T=shape_out(T_c, shape), T_equilibrium=shape_out(T_eq, shape), target=shape_out(tg, shape),
        key=key, approach=dT, message=_object_array(msgs, shape),
        trustworthy=shape_out(trusted, shape), flags=_object_array(list(flags), shape))


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
                                                      n_scan, extra=(spec.numerator,))
    T_arr = temperatures(T)
    P_arr = pressures(P)
    shape = broadcast_shape(T=T_arr, P=P_arr, target=target)
    T_c = np.broadcast_to(T_arr, shape).reshape(-1).astype(float)
    P_c = np.broadcast_to(P_arr, shape).reshape(-1).astype(float)
    tg = np.broadcast_to(target, shape).reshape(-1).copy()
    if np.any(T_c <= 0) or (dT and np.any(T_c - dT <= 0)) or np.any(P_c <= 0):
        raise EquilibriumInputError("temperatures (minus the approach) and pressures must be above zero")
    lo, hi = search_range(ratio_range, "dimensionless", "ratio_range")
    spec.checked_basis(base, db)        # checks the denominator is fed

    def evaluate(u, case):
        return _conversion(names, spec.feed_at(base, np.exp(u), db), T_c[case], P_c[case], key=key,
                           reactions=rxns, gas_model=gas_model, approach=dT, db=db)

    S = tg.size
    search = inverse_search(evaluate, np.full(S, np.log(lo)), np.full(S, np.log(hi)), tg, n_scan=n_scan,
                             utol=1e-7, rtol=1e-6, from_u=np.exp)
    r_ans = _snap(np.exp(search.value), lo, hi)
    conv_at, T_eq, trusted, flags = _at_answers(names, lambda idx: spec.feed_at(base, r_ans[idx], db), T_c, P_c, r_ans, key=key,
                                rxns=rxns, gas_model=gas_model, dT=dT, db=db)
    conditions = [f"at {_num(t, 2)} K and {_bar(p)}" for t, p in zip(T_c, P_c)]
    msgs = _messages(search, _ratio_variable(spec.name), key, tg, conditions, lo, hi,
                     lambda u: _snap(np.exp(u), lo, hi), dT)
    return FeedRatioAnswer(
        ratio=shape_out(r_ans, shape), ratio_name=spec.name, reached=shape_out(search.reached, shape),
        at_range_end=shape_out(search.whole_range, shape),
        conversion_at_ratio=shape_out(conv_at, shape),
        best_conversion=shape_out(search.best_conversion, shape),
        best_ratio=shape_out(_snap(np.exp(search.best_value), lo, hi), shape),
        crossings=_object_array([tuple(c) for c in search.crossings], shape),
        T=shape_out(T_c, shape), P=shape_out(P_c, shape), T_equilibrium=shape_out(T_eq, shape),
        target=shape_out(tg, shape), key=key, approach=dT, message=_object_array(msgs, shape),
        trustworthy=shape_out(trusted, shape), flags=_object_array(list(flags), shape))


# =========================================================================== carbon
#: Carbon-forming reactions and the ln a_C each implies: ln a_C = Σ ν_i μ_i/RT − g°_C/RT over
#: the gas species (ν > 0 for reactants, < 0 for gas products).
