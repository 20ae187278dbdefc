"""Energy balances on equilibrium mixtures, adiabatic equilibrium, staged adiabatic beds.

    from eqdesign.solve import adiabatic_equilibrium, staged_converter
    out = adiabatic_equilibrium(["SO2", "O2", "SO3", "N2"],
                                {"SO2": 0.10, "O2": 0.11, "N2": 0.79}, "420 degC", "1.2 bar")
    out.T            # adiabatic outlet temperature [K]

Enthalpies are on the formation basis: the standard molar enthalpy of every species is
``h°_i(T) = ΔfH°_i(298.15 K) + ∫ cp°_i dT``, so a sum ``Σ n_i h°_i(T)`` over a reacting
mixture carries the heat of reaction with it and the energy balance of an adiabatic,
isobaric, work-free reactor is simply ``H_out(T_out) = H_in(T_in)`` (first law for a
steady-flow system; e.g. J. M. Smith, H. C. Van Ness, M. M. Abbott, *Introduction to
Chemical Engineering Thermodynamics*, 7th ed., McGraw-Hill, 2005, ch. 4).  With the
Peng-Robinson gas model the gas adds ``n_gas H_res(T, P, y)``, the residual enthalpy of
D.-Y. Peng, D. B. Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64.

The adiabatic temperature solves ``H_eq(T) = H_in`` for every state of a batch at once:
one batched :func:`eqdesign.solve.equilibrium` call per iteration, safeguarded Newton on T
with the exact slope of the equilibrium enthalpy.  That slope comes from the temperature
derivatives of the equilibrium composition at fixed pressure and conserved amounts, the
linear system of S. Gordon and B. J. McBride, NASA Reference Publication RP-1311, Part I:
Analysis (1994), section 2.5 (derivatives with respect to temperature), which also
predicts the composition at the next temperature for the warm start.

CAUTION: adiabatic equilibrium temperatures are the hottest a bed can become (infinite
catalyst, no heat loss); real beds run below them, and hot spots, runaway exotherms and
the toxic or flammable gases of these processes (SO2, SO3, CO, H2, NH3) need a design
checked against local codes and licensed engineering practice.
"""
from __future__ import annotations

import dataclasses
import warnings
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.models import Nasa7Polynomial, R
from ...thermo.reactions import bundled_database
from ..core.equilibrium import equilibrium
from ..core.result import EquilibriumInputError, EquilibriumResult, NotConvergedWarning
from .enthalpy import (MixtureEnthalpy, broadcast_inputs, composition_temperature_derivative,
                       conservation_matrix, records_for)


#: The caution that goes with every adiabatic-bed answer (see the module docstring).
CAUTION = ("Equilibrium adiabatic beds: temperatures and conversions are limits (infinite "
           "catalyst, no heat loss), not a design. Hot spots, runaway exotherms and toxic or "
           "flammable gases need checking against local codes and licensed engineering practice.")


# ====================================================================== adiabatic equilibrium
@dataclass(frozen=True)
class AdiabaticResult:
    """Adiabatic equilibrium at every state of a batch.

    Arrays have the broadcast shape of the inputs.  States that did not converge hold NaN
    in ``T`` and in the equilibrium amounts, with ``converged`` False.

    Attributes
    ----------
    T : ndarray
        Adiabatic outlet temperature [K].
    equilibrium : EquilibriumResult
        Composition at the outlet: equilibrium at ``T`` (at ``T ± approach`` when an
        approach to equilibrium was asked for; its own ``.T`` is that temperature).
    converged : ndarray of bool
    iterations : ndarray of int
        General path: equilibrium evaluations used (one batched call each).  Compiled
        fixed-enthalpy path (ideal gas, NASA data, no approach): the Newton iterations of
        that kernel, temperature included (``equilibrium.iterations``).
    enthalpy_residual : ndarray
        ``|H_out - H_in| / H_scale`` [-] with ``H_scale = Σ n_i |h°_i(T_in)| + n R T_in``.
    T_in : ndarray
        Inlet temperature [K].
    P : ndarray
        Pressure [Pa].
    inlet_enthalpy : ndarray
        H_in [J] of the feed at T_in (formation basis).
    approach : float
        Approach to equilibrium [K] used (0: full equilibrium).
    message : str
    """

    T: np.ndarray
    equilibrium: EquilibriumResult = field(repr=False)
    converged: np.ndarray = field(repr=False)
    iterations: np.ndarray = field(repr=False)
    enthalpy_residual: np.ndarray = field(repr=False)
    T_in: np.ndarray = field(repr=False)
    P: np.ndarray = field(repr=False)
    inlet_enthalpy: np.ndarray = field(repr=False)
    approach: float = 0.0
    message: str = ""

    @property
    def shape(self) -> tuple:
        return np.shape(self.T)

    @property
    def all_converged(self) -> bool:
        return bool(np.all(self.converged))

    @property
    def temperature_rise(self):
        """T_out - T_in [K] (negative for an endothermic change)."""
        d = np.asarray(self.T) - np.asarray(self.T_in)
        return float(d) if d.ndim == 0 else d

    def conversion(self, key: str | None = None):
        """Conversion of a reactant at the outlet [-] (see EquilibriumResult.conversion)."""
        return self.equilibrium.conversion(key)

    @property
    def trustworthy(self):
        """Per state: converged, and the outlet equilibrium uses no species outside its data
        range (see :attr:`EquilibriumResult.trustworthy`)."""
        ok = np.asarray(self.converged, dtype=bool) & np.asarray(self.equilibrium.trustworthy, dtype=bool)
        return bool(ok) if ok.ndim == 0 else ok

    def state_flags(self):
        """Per state, what makes the outlet untrustworthy ("" where nothing does)."""
        return self.equilibrium.state_flags()


def _take(result: EquilibriumResult, rows: np.ndarray, p: int, **override) -> EquilibriumResult:
    """The states ``rows`` of a flat result of ``p`` states (every per-state array field)."""
    changes = {}
    for f in dataclasses.fields(result):
        v = getattr(result, f.name)
        if isinstance(v, np.ndarray) and v.ndim >= 1 and v.shape[0] == p:
            changes[f.name] = v[rows]
    changes.update(override)
    return dataclasses.replace(result, **changes)


def _hermite_root(T0, f0, s0, T1, f1, s1):
    """Root in (T0, T1) of the cubic Hermite interpolant through (T0, f0, f0' = s0) and
    (T1, f1, s1), f0 < 0 < f1: Newton on the cubic from the secant point, kept inside a
    shrinking bracket (bisection when a step leaves it); vectorised."""
    L = T1 - T0
    a, b, c, d = f0, s0 * L, f1, s1 * L
    # power-basis coefficients of the cubic in t = (T - T0)/L
    k3 = 2 * a + b - 2 * c + d
    k2 = -3 * a - 2 * b + 3 * c - d
    k1 = b
    k0 = a
    lo = np.zeros_like(T0)
    hi = np.ones_like(T0)
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.clip(-a / (c - a), 0.0, 1.0)
        for _ in range(16):
            value = ((k3 * t + k2) * t + k1) * t + k0
            neg = value < 0
            lo = np.where(neg, t, lo)
            hi = np.where(neg, hi, t)
            t_new = t - value / ((3 * k3 * t + 2 * k2) * t + k1)
            t = np.where((t_new > lo) & (t_new < hi), t_new, 0.5 * (lo + hi))
    return T0 + t * L


# Stays long: one sequential iteration on T (bracket, Hermite/secant steps, per-state bookkeeping)
# whose steps share many arrays; splitting it would only pass them around.
def adiabatic_equilibrium(species: Sequence[str], feed: Mapping[str, object], T_in, P, *,
                          reactions: Sequence[str] | None = None, gas_model: str = "ideal",
                          database: SpeciesDatabase | None = None,
                          binary_interaction: Mapping | None = None, key: str | None = None,
                          approach: float = 0.0, T_limits: tuple | None = None,
                          tolerance: float = 1e-10, max_iterations: int = 50,
                          max_step: float = 2000.0, warn: bool = True) -> AdiabaticResult:
    """Adiabatic, isobaric equilibrium: the outlet temperature where H_eq(T) = H_in.

    Every state of the batch is solved together: each iteration is one batched
    :func:`eqdesign.solve.equilibrium` call on the states not yet converged, warm-started
    from the previous composition moved along d ln n/dT when the step is small.  The step
    in T is Newton's with the exact slope of the equilibrium enthalpy,
    ``dH/dT = Σ n_i cp°_i + Σ h°_i dn_i/dT`` (composition derivatives as in NASA RP-1311
    Part I, 1994, section 2.5; for Peng-Robinson the fugacity terms of the slope are left
    out, which only slows Newton down), safeguarded by a bracket: once both sides are
    known the step goes to the root of the cubic through H and dH/dT at the two ends, and
    steps that leave the bracket or stall become bisections; steps are limited to
    ``max_step``.  A state counts as converged when its equilibrium converged and
    ``|H_out - H_in| <= tolerance * H_scale``, ``H_scale = Σ n_i |h°_i(T_in)| + n R T_in``.
    A state whose equilibrium fails is retried halfway back to its last good temperature
    (or higher up, if it has none).

    Parameters
    ----------
    species : sequence of str
        Species that may be present (as for :func:`eqdesign.solve.equilibrium`).
    feed : mapping of str to amount
        Feed amounts [mol] (numbers, arrays broadcast with T_in and P, or strings).
    T_in : float | array_like | str
        Inlet temperature [K] or a quantity string (``"420 degC"``).
    P : float | array_like | str
        Pressure [Pa] or a quantity string (``"1.2 bar"``).
    reactions : sequence of str, optional
        Named-reactions mode (only these reactions proceed).
    gas_model : {"ideal", "peng-robinson"}
    database : SpeciesDatabase, optional
    binary_interaction : mapping, optional
        Peng-Robinson kij overrides.
    key : str, optional
        Key reactant for ``.conversion()``.
    approach : float
        Approach to equilibrium [K]: the outlet composition is the equilibrium
        composition at ``T_out + approach`` for a heat-releasing change (at
        ``T_out - approach`` for a heat-absorbing one), i.e. short of equilibrium.
    T_limits : (float, float), optional
        Search range for T_out [K]; default: the range common to the gas species' data.
        A state whose outlet lies outside is flagged as not converged.
    tolerance : float
        Relative enthalpy tolerance [-].
    max_iterations : int
        Most equilibrium evaluations per state (general path; the compiled
        fixed-enthalpy path, used for ideal gases with NASA data and no approach
        margin when this is at least 20, iterates on T inside each Newton step).
    max_step : float
        Largest change of T in one iteration [K].
    warn : bool
        Warn (NotConvergedWarning) when some states did not converge.

    Returns
    -------
    AdiabaticResult

    Examples
    --------
    SO2 oxidation in air, 10 % SO2 and 11 % O2, inlet 420 degC, 1.2 bar (an invented
    converter; the adiabatic heat-up and equilibrium curves of such feeds are discussed in
    M. J. King, W. G. Davenport, M. S. Moats, *Sulfuric Acid Manufacture*, 2nd ed.,
    Elsevier, 2013):

    >>> out = adiabatic_equilibrium(["SO2", "O2", "SO3", "N2"],
    ...                             {"SO2": 0.10, "O2": 0.11, "N2": 0.79}, "420 degC", "1.2 bar",
    ...                             key="SO2")
    >>> print(f"{float(out.T):.1f} K, conversion {out.conversion():.3f}")
    894.0 K, conversion 0.691
    """
    db = database or bundled_database()
    names, shape, T_in_f, P_f, n0, _ = broadcast_inputs(db, species, feed, T_in, P)
    p = T_in_f.size
    if np.any(~np.isfinite(T_in_f)) or np.any(T_in_f <= 0):
        raise EquilibriumInputError("inlet temperatures must be finite and above 0 K")
    approach = float(approach)
    if approach < 0:
        raise EquilibriumInputError("approach to equilibrium must be >= 0 K")
    feed_flat = {n: n0[:, k] for k, n in enumerate(names) if np.any(n0[:, k] > 0)}
    rxns = tuple(reactions or ())
    # the compiled fixed-enthalpy Newton when it applies (it iterates on T inside each
    # Newton step, so ``max_iterations``, which counts equilibrium evaluations of the
    # general path below, only needs to allow a normal solve)
    if gas_model == "ideal" and approach == 0.0 and T_limits is None and max_iterations >= 20:
        fast = _adiabatic_compiled(db, names, shape, feed_flat, n0, T_in_f, P_f, rxns, key,
                                   tolerance)
        if fast is not None:
            return fast
    common = dict(reactions=rxns or None, gas_model=gas_model, database=db,
                  binary_interaction=binary_interaction, key=key, warn=False)

    # --- first evaluation: equilibrium at the inlet temperature (every state)
    first = equilibrium(names, feed_flat, T_in_f, P_f, **common)
    names = list(first.species)
    common["reactions"] = first.reactions or None
    feed_flat = {n: first.feed_array[:, k] for k, n in enumerate(names) if np.any(first.feed_array[:, k] > 0)}
    records = records_for(names, db)
    model = MixtureEnthalpy(records, gas_model, binary_interaction)
    C = conservation_matrix(first, records)
    is_gas = model.is_gas
    n_feed = first.feed_array
    h_in = model.species_properties(T_in_f)[1]
    H_in = model.total(n_feed, T_in_f, P_f, h=h_in)
    H_scale = (n_feed * np.abs(h_in)).sum(axis=1) + n_feed.sum(axis=1) * R * T_in_f

    gas_records = [sp for sp in records if sp.is_gas]
    lo_lim = max(sp.T_min for sp in gas_records)
    hi_lim = min(sp.T_max for sp in gas_records)
    if T_limits is not None:
        lo_lim, hi_lim = float(T_limits[0]), float(T_limits[1])
    lo_lim = min(lo_lim, float(T_in_f.min())) if T_limits is None else lo_lim

    # full-size stores of the answer: every per-state array field of the result
    store = {}
    for f_ in dataclasses.fields(first):
        v = getattr(first, f_.name)
        if isinstance(v, np.ndarray) and v.ndim >= 1 and v.shape[0] == p:
            store[f_.name] = np.array(v, copy=True)
    T_out = np.full(p, np.nan)
    done = np.zeros(p, dtype=bool)
    failed = np.zeros(p, dtype=bool)
    iterations = np.ones(p, dtype=int)
    residual = np.full(p, np.nan)
    outside = np.zeros(p, dtype=bool)     # outlet beyond the temperature range
    direction = np.ones(p)                # +1 heat-releasing (T rises), -1 heat-absorbing

    # per-state iteration variables
    T = T_in_f.copy()
    # bracket ends: T, H_eq - H_in and dH_eq/dT at the largest T known to be below the
    # answer (H_eq < H_in) and the smallest known to be above it
    lower = (np.full(p, -np.inf), np.full(p, np.nan), np.full(p, np.nan))
    upper = (np.full(p, np.inf), np.full(p, np.nan), np.full(p, np.nan))
    T_lo, T_hi = lower[0], upper[0]
    f_prev = np.full(p, np.inf)
    bracketed = np.zeros(p, dtype=bool)   # the last step was taken inside a bracket
    misses = np.zeros(p, dtype=int)       # failed equilibrium evaluations
    T_good = np.full(p, np.nan)           # last T whose equilibrium converged
    T_eq_good = np.full(p, np.nan)        # ... and the temperature of its composition
    n_good = np.full_like(n_feed, np.nan)
    dlnn_good = np.zeros_like(n_feed)
    cold = np.where(is_gas, np.maximum(n_feed, 1e-6 * n_feed.sum(axis=1, keepdims=True)), 0.0)

    current = first
    rows = np.arange(p)
    for it in range(max_iterations + 1):
        k = rows.size
        amounts = current.amount_array
        T_r = T[rows]
        T_eq = np.asarray(current.T, dtype=float).reshape(k)
        ok_eq = np.asarray(current.converged).reshape(k) & np.all(np.isfinite(amounts), axis=1)
        safe = np.where(ok_eq[:, None], amounts, 0.0)
        cp_r, h_r = model.species_properties(T_r)
        H = model.total(safe, T_r, P_f[rows], h=h_r)
        f = np.where(ok_eq, H - H_in[rows], np.nan)
        rel = np.abs(f) / H_scale[rows]
        # with an approach to equilibrium, the first evaluation (composition at T_in) is
        # only a starting point: its composition is not the one the balance needs
        exact = it > 0 or approach == 0.0
        if it == 0:
            direction[rows] = np.where(f > 0, -1.0, 1.0)
        conv_now = ok_eq & (rel <= tolerance) & exact
        if np.any(conv_now):
            sub = np.flatnonzero(conv_now)
            sel = rows[sub]
            done[sel] = True
            T_out[sel] = T_r[sub]
            residual[sel] = rel[sub]
            for name, full in store.items():
                full[sel] = getattr(current, name)[sub]
        active = ~conv_now
        if it == max_iterations or not np.any(active):
            failed[rows[active]] = True
            break

        # --- bracket and safeguarded Newton step for the states still active
        idx = np.flatnonzero(active)
        st = rows[idx]
        fa, Ta, good = f[idx], T_r[idx], ok_eq[idx]
        am = safe[idx]
        T_eq_a = T_eq[idx]
        h_eq = h_r[idx] if np.array_equal(T_eq_a, Ta) else model.species_properties(T_eq_a)[1]
        with np.errstate(invalid="ignore", over="ignore", divide="ignore"):
            dn, dlnn = composition_temperature_derivative(am, h_eq, T_eq_a, C, is_gas)
            slope = model.frozen_heat_capacity(am, Ta, P_f[st], cp=cp_r[idx])
            slope = slope + (h_r[idx] * dn).sum(axis=1)
            step = -fa / slope
        newton_ok = good & np.isfinite(step) & (slope > 0)
        if exact:
            below = good & (fa < 0) & (Ta > T_lo[st])
            above = good & (fa > 0) & (Ta < T_hi[st])
            for side, sel in ((lower, below), (upper, above)):
                side[0][st[sel]] = Ta[sel]
                side[1][st[sel]] = fa[sel]
                side[2][st[sel]] = np.where(newton_ok[sel], slope[sel], np.nan)
        # where the slope is unusable, a fixed move towards the missing side
        step = np.where(newton_ok, step, np.where(fa > 0, -50.0, 50.0))
        step = np.clip(step, -max_step, max_step)
        T_new = Ta + step
        lo_b, hi_b = T_lo[st], T_hi[st]
        both = np.isfinite(lo_b) & np.isfinite(hi_b)
        # with both sides known, the root of the cubic through f and dH/dT at both ends
        cubic = both & np.isfinite(lower[2][st]) & np.isfinite(upper[2][st])
        if np.any(cubic):
            c = np.flatnonzero(cubic)
            s_ = st[c]
            T_new[c] = _hermite_root(T_lo[s_], lower[1][s_], lower[2][s_],
                                     T_hi[s_], upper[1][s_], upper[2][s_])
        # safeguard: a step leaving the bracket, or |f| not halved since last time -> bisect
        slow = good & bracketed[st] & (np.abs(fa) > 0.5 * np.abs(f_prev[st]))
        bracketed[st] = both
        use_bisect = both & ((T_new <= lo_b) | (T_new >= hi_b) | slow | ~np.isfinite(T_new))
        T_new = np.where(use_bisect, 0.5 * (np.where(both, lo_b, 0.0) + np.where(both, hi_b, 0.0)), T_new)
        # failed equilibrium: halve the way back to the last good temperature
        # (no good point yet: move up in widening steps, where mixtures are less extreme)
        bad = ~good
        if np.any(bad):
            misses[st[bad]] += 1
            away = Ta + 50.0 * 2.0 ** np.minimum(misses[st], 6)
            back = np.where(np.isfinite(T_good[st]), 0.5 * (Ta + T_good[st]), away)
            T_new = np.where(bad, back, T_new)
        # the temperature range: an outlet beyond it cannot be found
        stuck = good & exact & (((Ta >= hi_lim) & (fa < 0)) | ((Ta <= lo_lim) & (fa > 0)))
        T_new = np.clip(T_new, lo_lim, hi_lim)
        failed[st[stuck]] = True
        outside[st[stuck]] = True
        # remember the last good point for damping and warm starts
        T_good[st[good]] = Ta[good]
        T_eq_good[st[good]] = T_eq_a[good]
        n_good[st[good]] = am[good]
        dlnn_good[st[good]] = dlnn[good]
        f_prev[st[good]] = np.where(exact, fa[good], np.inf)

        keep = ~stuck
        st, T_new = st[keep], T_new[keep]
        if st.size == 0:
            break
        T[st] = T_new
        # --- warm start: the last good composition moved along d ln n / dT, used when
        # most states move little (the predicted change of every species above 1e-6 of
        # the mixture within a factor e); after big moves the solver's own start is better
        T_eq_new = T_new + approach * direction[st]
        dT = np.nan_to_num(T_eq_new - T_eq_good[st])
        with np.errstate(over="ignore", invalid="ignore"):
            shift = dlnn_good[st] * dT[:, None]
            pred = np.where(is_gas, n_good[st] * np.exp(np.clip(shift, -30.0, 30.0)), n_good[st])
            major = n_good[st] > 1e-6 * np.nansum(n_good[st], axis=1, keepdims=True)
            small = np.all(np.where(major, np.abs(shift) <= 1.0, True), axis=1)
        usable = small & np.all(np.isfinite(pred), axis=1)
        warm = None
        if np.count_nonzero(usable) >= 0.75 * st.size:
            pred = np.where(usable[:, None], pred, cold[st])
            warm = _take(first, st, p, amount_array=pred)
        current = equilibrium(names, {n: v[st] for n, v in feed_flat.items()}, T_eq_new, P_f[st],
                              initial=warm, **common)
        rows = st
        iterations[st] += 1

    # --- assemble the answer
    ok = done & ~failed
    T_out[~ok] = np.nan
    for name, full in store.items():
        if name == "converged":
            full &= ok
        elif name in ("amount_array", "ln_phi_array", "T", "g0_RT") and full.dtype.kind == "f":
            full[~ok] = np.nan
    out_fields = {name: full.reshape(shape + full.shape[1:]) for name, full in store.items()}
    if shape == ():
        for name in ("T", "P"):
            if name in out_fields:
                out_fields[name] = np.float64(out_fields[name])
    n_bad = int(p - ok.sum())
    if n_bad == 0:
        message = "all states converged"
    else:
        message = f"{n_bad} of {p} state(s) did not converge (NaN)"
        if np.any(outside):
            message += (f"; {int(outside.sum())} with the outlet temperature outside "
                        f"{lo_lim:.6g}-{hi_lim:.6g} K")
    eq = dataclasses.replace(first, message=message, **out_fields)
    if n_bad and warn:
        warnings.warn(f"adiabatic equilibrium: {message}", NotConvergedWarning, stacklevel=2)

    def shaped(a, scalar_as_float=False):
        a = np.asarray(a).reshape(shape)
        return np.float64(a) if (scalar_as_float and shape == ()) else a

    return AdiabaticResult(
        T=shaped(T_out, True), equilibrium=eq, converged=shaped(ok), iterations=shaped(iterations),
        enthalpy_residual=shaped(np.where(ok, residual, np.nan)), T_in=shaped(T_in_f, True),
        P=shaped(P_f, True), inlet_enthalpy=shaped(H_in, True), approach=approach, message=message)


def _adiabatic_compiled(db, names, shape, feed_flat, n0, T_in_f, P_f, rxns, key, tolerance):
    """Ideal gas, NASA data, no approach margin: the fixed-enthalpy Newton of the compiled
    kernel (temperature as one more unknown; NASA RP-1311 Part I §2.5), every state in one
    call.  Returns None (the general path then runs) unless every state converged with
    the enthalpy balance closed to ``tolerance``."""
    records = [db[n] for n in names]
    if not all(isinstance(sp.model, Nasa7Polynomial) for sp in records):
        return None
    h_in = np.stack([sp.model.enthalpy(T_in_f) for sp in records], axis=1)
    H_in = (n0 * h_in).sum(axis=1)
    try:
        eq = equilibrium(names, {n: v.reshape(shape) for n, v in feed_flat.items()},
                         T_in_f.reshape(shape), P_f.reshape(shape), reactions=rxns or None,
                         key=key, database=db, enthalpy=H_in.reshape(shape), tolerance=1e-13,
                         warn=False)
    except EquilibriumInputError:
        return None
    if not eq.all_converged:
        return None
    T_out = np.asarray(eq.T, dtype=float).reshape(-1)
    amounts = eq.amount_array.reshape(T_out.size, -1)
    h_out = np.stack([sp.model.enthalpy(T_out) for sp in records], axis=1)
    H_scale = (n0 * np.abs(h_in)).sum(axis=1) + n0.sum(axis=1) * R * T_in_f
    residual = np.abs((amounts * h_out).sum(axis=1) - H_in) / H_scale
    if not np.all(residual <= max(tolerance, 1e-10)):
        return None

    def shaped(a, scalar_as_float=False):
        a = np.asarray(a).reshape(shape)
        return np.float64(a) if (scalar_as_float and shape == ()) else a

    return AdiabaticResult(
        T=shaped(T_out, True), equilibrium=eq, converged=shaped(np.ones(T_out.size, dtype=bool)),
        iterations=shaped(np.asarray(eq.iterations).reshape(-1)),
        enthalpy_residual=shaped(residual), T_in=shaped(T_in_f, True), P=shaped(P_f, True),
        inlet_enthalpy=shaped(H_in, True), approach=0.0, message="all states converged")
