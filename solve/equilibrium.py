"""Public equilibrium entry point: species names, feed, T and P in; a result object out.

    from eqdesign.solve import equilibrium
    res = equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "450 degC", "200 bar")
    res.mole_fractions["NH3"]

Two modes share one solver (:mod:`eqdesign.solve.gibbs_core`):

* all species (``reactions=None``): element conservation, every listed species may form;
* named reactions: only the listed reactions proceed; the conservation matrix is a basis
  of the reaction invariants, the left null space of the stoichiometric matrix
  (W. R. Smith, R. W. Missen, *Chemical Reaction Equilibrium Analysis*, Wiley, 1982).
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np
from scipy.optimize import linprog

from ..thermo.database import SpeciesDatabase
from ..thermo.models import P_STANDARD, R
from ..thermo.reactions import Reaction, bundled_database
from ..thermo.species import standard_gibbs_RT
from ..thermo.units import to_kelvin, to_pascal, to_si
from .gibbs_core import CoreState, initial_state, minimise_gibbs

GAS_MODELS = ("ideal", "peng-robinson")


class EquilibriumInputError(ValueError):
    """The species, feed, conditions or reactions given to the solver are inconsistent."""


class NotConvergedWarning(UserWarning):
    """Some states did not converge; their results are NaN and flagged."""


class CondensationWarning(UserWarning):
    """At some states a dense (liquid-like) phase is more stable than the gas."""


def _as_dict_of(values: np.ndarray, names: Sequence[str], shape: tuple) -> dict:
    out = {}
    for k, name in enumerate(names):
        v = values[..., k].reshape(shape)
        out[name] = float(v) if v.ndim == 0 else v
    return out


@dataclass(frozen=True)
class EquilibriumResult:
    """Equilibrium composition at every state of a batch, with how it was reached.

    Arrays carry the broadcast shape of the inputs, ``shape``; per-species arrays have a
    trailing species axis ``(*shape, n_species)``.  States that did not converge hold NaN
    and ``converged`` False: they are never returned as answers.

    Attributes
    ----------
    species : tuple[str, ...]
        Species names, in the column order of ``amount_array``.
    phases : tuple[str, ...]
        ``"gas"``, ``"solid"`` or ``"liquid"`` for each species.
    T, P : ndarray
        Temperature [K] and pressure [Pa] of each state.
    amount_array : ndarray, shape (*shape, n_species)
        Equilibrium amounts [mol] (same basis as the feed).
    feed_array : ndarray, shape (*shape, n_species)
        Feed amounts [mol].
    converged : ndarray of bool
    iterations : ndarray of int
        Newton iterations used (all phase-set rounds together).
    max_residual : ndarray
        Largest scaled residual at the end (conservation and chemical-potential steps).
    reactions : tuple[Reaction, ...]
        The named reactions (empty in all-species mode).
    gas_model : str
    ln_phi_array : ndarray or None, shape (*shape, n_species)
        ln of the fugacity coefficients (0 for an ideal gas; NaN for condensed species).
    condensation_possible : ndarray of bool or None
        Peng-Robinson only: True where the equation of state has a liquid-like root more
        stable than the vapour root at the equilibrium composition (the gas may condense;
        the gas-phase answer there is a metastable vapour).
    """

    species: tuple
    phases: tuple
    T: np.ndarray
    P: np.ndarray
    amount_array: np.ndarray = field(repr=False)
    feed_array: np.ndarray = field(repr=False)
    converged: np.ndarray = field(repr=False)
    iterations: np.ndarray = field(repr=False)
    max_residual: np.ndarray = field(repr=False)
    g0_RT: np.ndarray = field(repr=False)
    reactions: tuple = ()
    gas_model: str = "ideal"
    ln_phi_array: np.ndarray | None = field(default=None, repr=False)
    key: str | None = None
    message: str = ""
    condensation_possible: np.ndarray | None = field(default=None, repr=False)

    # ----------------------------------------------------------------- shapes
    @property
    def shape(self) -> tuple:
        return np.shape(self.T)

    @property
    def gas_mask(self) -> np.ndarray:
        return np.array([ph == "gas" for ph in self.phases])

    @property
    def all_converged(self) -> bool:
        return bool(np.all(self.converged))

    # ----------------------------------------------------------------- amounts
    @property
    def amounts(self) -> dict:
        """Species name -> equilibrium amount [mol] (float for scalar input, else ndarray)."""
        return _as_dict_of(self.amount_array, self.species, self.shape)

    @property
    def gas_amount(self):
        """Total amount in the gas phase [mol]."""
        total = self.amount_array[..., self.gas_mask].sum(axis=-1)
        return float(total) if total.ndim == 0 else total

    @property
    def mole_fraction_array(self) -> np.ndarray:
        """Gas-phase mole fractions, shape (*shape, n_species); 0 for condensed species."""
        gas = np.where(self.gas_mask, self.amount_array, 0.0)
        return gas / gas.sum(axis=-1, keepdims=True)

    @property
    def mole_fractions(self) -> dict:
        """Gas species name -> gas-phase mole fraction [-]."""
        y = self.mole_fraction_array
        names = [s for s, g in zip(self.species, self.gas_mask) if g]
        return _as_dict_of(y[..., self.gas_mask], names, self.shape)

    @property
    def partial_pressures(self) -> dict:
        """Gas species name -> partial pressure y_i P [Pa]."""
        y = self.mole_fraction_array[..., self.gas_mask] * np.asarray(self.P)[..., None]
        names = [s for s, g in zip(self.species, self.gas_mask) if g]
        return _as_dict_of(y, names, self.shape)

    @property
    def condensed(self) -> dict:
        """Condensed species name -> amount [mol] (0 where the phase is absent)."""
        names = [s for s, g in zip(self.species, self.gas_mask) if not g]
        return _as_dict_of(self.amount_array[..., ~self.gas_mask], names, self.shape)

    @property
    def condensed_present(self) -> dict:
        """Condensed species name -> bool array: is the phase present at equilibrium."""
        return {k: np.asarray(v) > 0 for k, v in self.condensed.items()}

    # ----------------------------------------------------------------- reactions
    def conversion(self, key: str | None = None):
        """Fractional conversion of a reactant, (n_in - n_out) / n_in [-]."""
        key = key or self.key
        if key is None:
            raise EquilibriumInputError("name the key reactant: conversion('N2')")
        if key not in self.species:
            raise EquilibriumInputError(f"key reactant {key!r} is not among the species {list(self.species)}")
        k = self.species.index(key)
        n0 = self.feed_array[..., k]
        with np.errstate(invalid="ignore", divide="ignore"):
            x = (n0 - self.amount_array[..., k]) / n0
        return float(x) if np.ndim(x) == 0 else x

    @property
    def extents(self) -> dict:
        """Reaction text -> extent ξ [mol] (named-reactions mode; minimum-norm if the
        reactions are linearly dependent)."""
        if not self.reactions:
            return {}
        N = _stoichiometric_matrix(self.reactions, self.species)           # (ns, nr)
        delta = (self.amount_array - self.feed_array).reshape(-1, len(self.species))
        xi = np.linalg.lstsq(N, delta.T, rcond=None)[0].T                   # (p, nr)
        return {r.text: (float(xi[0, j]) if self.shape == () else xi[:, j].reshape(self.shape))
                for j, r in enumerate(self.reactions)}

    def ln_activity(self) -> np.ndarray:
        """ln a_i at the solution, shape (*shape, n_species): gases ln(φ_i y_i P/P°),
        condensed species 0 where present (-inf where absent)."""
        y = self.mole_fraction_array
        lnP = np.log(np.asarray(self.P) / P_STANDARD)[..., None]
        with np.errstate(divide="ignore"):
            ln_gas = np.log(y) + lnP
            if self.ln_phi_array is not None:
                ln_gas = ln_gas + np.nan_to_num(self.ln_phi_array)
            ln_cond = np.where(self.amount_array > 0, 0.0, -np.inf)
        return np.where(self.gas_mask, ln_gas, ln_cond)

    def quotient_over_K(self, reaction: Reaction | str | None = None) -> dict:
        """Q/K of each named reaction (or of ``reaction``) at the solution; 1 at equilibrium
        for every reaction whose species are all present."""
        rxns = self.reactions if reaction is None else (reaction,)
        out = {}
        lna = self.ln_activity()
        for r in rxns:
            r = r if isinstance(r, Reaction) else Reaction.parse(r)
            idx = [self.species.index(n) for n in r.names]
            ln_q = (lna[..., idx] * r.coefficients).sum(axis=-1)
            ln_k = -(self.g0_RT[..., idx] * r.coefficients).sum(axis=-1)
            with np.errstate(over="ignore", invalid="ignore"):
                v = np.exp(ln_q - ln_k)
            out[r.text] = float(v) if np.ndim(v) == 0 else v
        return out

    def K_phi(self, reaction: Reaction | str | None = None) -> dict:
        """K_φ = Π φ_i^ν_i of each named reaction (1 for an ideal gas)."""
        rxns = self.reactions if reaction is None else (reaction,)
        out = {}
        lnphi = np.zeros_like(self.amount_array) if self.ln_phi_array is None else np.nan_to_num(self.ln_phi_array)
        for r in rxns:
            r = r if isinstance(r, Reaction) else Reaction.parse(r)
            idx = [self.species.index(n) for n in r.names]
            v = np.exp((lnphi[..., idx] * r.coefficients).sum(axis=-1))
            out[r.text] = float(v) if np.ndim(v) == 0 else v
        return out

    def gibbs_energy_RT(self) -> np.ndarray:
        """Total G/RT of the equilibrium mixture [mol] (standard-state basis of the database)."""
        return total_gibbs_RT(self.amount_array, self.g0_RT, self.gas_mask, self.P, self.ln_phi_array)

    def summary(self) -> str:
        n_bad = int(np.size(self.converged) - np.count_nonzero(self.converged))
        return (f"{np.size(self.converged)} state(s), {n_bad} not converged, largest residual "
                f"{np.nanmax(np.where(self.converged, self.max_residual, np.nan)) if n_bad < np.size(self.converged) else np.nan:.1e}")


def total_gibbs_RT(amounts, g0_RT, gas_mask, P, ln_phi=None):
    """G/RT = Σ n_i (g°_i/RT + ln a_i) for an ideal or corrected gas plus pure condensed species."""
    amounts = np.asarray(amounts, dtype=float)
    gas = np.where(gas_mask, amounts, 0.0)
    n_gas = gas.sum(axis=-1, keepdims=True)
    lnP = np.log(np.asarray(P, dtype=float) / P_STANDARD)[..., None]
    with np.errstate(divide="ignore", invalid="ignore"):
        ln_a = np.where(gas > 0, np.log(gas / n_gas) + lnP, 0.0)
    if ln_phi is not None:
        ln_a = ln_a + np.where(gas_mask, np.nan_to_num(ln_phi), 0.0)
    ln_a = np.where(gas_mask, ln_a, 0.0)
    return (amounts * (g0_RT + ln_a)).sum(axis=-1)


def _stoichiometric_matrix(reactions: Sequence[Reaction], species: Sequence[str]) -> np.ndarray:
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


def _row_basis(C: np.ndarray, tol: float = 1e-10) -> np.ndarray:
    if C.size == 0:
        return C
    u, s, vt = np.linalg.svd(C, full_matrices=False)
    rank = int(np.sum(s > tol * max(s.max(), 1.0)))
    return vt[:rank]


def _reachable(C: np.ndarray, n0: np.ndarray, nonneg: bool) -> np.ndarray:
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


def _linear_estimate(g0: np.ndarray, C: np.ndarray, b: np.ndarray, n_gas: int) -> CoreState:
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


def _solve_fixed_enthalpy(records, A_gas, A_cond, b, ln_p, h0, T_start, tolerance, max_iterations):
    """Run the compiled fixed-enthalpy kernel on one group; returns (CoreOutcome, T)."""
    from . import compiled_core
    from .gibbs_core import CoreOutcome
    from ..thermo.models import Nasa7Polynomial
    if compiled_core is None or not all(isinstance(sp.model, Nasa7Polynomial) for sp in records):
        raise EquilibriumInputError("fixed-enthalpy solves need NASA-polynomial data for every "
                                    "species; use adiabatic_equilibrium for other data")
    ns = len(records)
    n_ranges = np.array([sp.model.coefficients.shape[0] for sp in records], dtype=np.int64)
    coeffs = np.zeros((ns, n_ranges.max(), 7))
    bounds = np.full((ns, n_ranges.max() + 1), np.inf)
    for j, sp in enumerate(records):
        coeffs[j, :n_ranges[j]] = sp.model.coefficients
        bounds[j, :n_ranges[j] + 1] = sp.model.T_bounds
    p, nG, nC, m = b.shape[0], A_gas.shape[1], A_cond.shape[1], A_gas.shape[0]
    state = initial_state(p, nG, nC, m)
    ln_T = np.log(np.asarray(T_start, dtype=float)).copy()
    converged = np.zeros(p, dtype=bool)
    iterations = np.zeros(p, dtype=np.int64)
    residual = np.full(p, np.inf)
    f64 = lambda a: np.ascontiguousarray(a, dtype=float)
    compiled_core.solve_sweep_hp(coeffs, bounds, n_ranges, f64(A_gas), f64(A_cond), f64(b), f64(ln_p),
                                 f64(h0), float(tolerance), int(max_iterations), 3 * nC + 6, ln_T,
                                 state.ln_gas, state.ln_total, state.cond, state.present,
                                 state.potentials, converged, iterations, residual)
    T = np.exp(ln_T)
    lo = max(sp.T_min for sp in records)
    hi = min(sp.T_max for sp in records)
    converged &= (T >= lo - 2.0) & (T <= hi)      # never an answer outside every species' data
    out = CoreOutcome(gas=np.exp(state.ln_gas), cond=np.where(state.present, state.cond, 0.0),
                      present=state.present.copy(), potentials=state.potentials.copy(),
                      converged=converged, iterations=iterations.astype(int), residual=residual,
                      state=state)
    return out, np.where(converged, T, np.nan)


def equilibrium(species: Sequence[str], feed: Mapping[str, object], T, P, *,
                reactions: Sequence[str] | None = None, gas_model: str = "ideal",
                key: str | None = None, database: SpeciesDatabase | None = None,
                binary_interaction: Mapping | None = None, initial: EquilibriumResult | None = None,
                tolerance: float = 1e-11, max_iterations: int = 300,
                g0_shift: Mapping[str, object] | None = None,
                enthalpy=None, warn: bool = True) -> EquilibriumResult:
    """Equilibrium composition at fixed T and P by Gibbs-energy minimisation.

    The element-potential method of Gordon and McBride (NASA RP-1311, 1994) applied to an
    ideal-gas (or Peng-Robinson) mixture plus pure condensed species at unit activity,
    which appear or vanish as the Gibbs energy dictates.

    Parameters
    ----------
    species : sequence of str
        Database names (or aliases) of the species that may be present.  Feed species
        and species of the named reactions are added when missing.
    feed : mapping of str to amount
        Feed amounts [mol]; numbers, arrays (broadcast with T and P), or strings with units.
    T : float | array_like | str | pint.Quantity
        Temperature [K] (numbers) or quantity (``"450 degC"``).
    P : float | array_like | str | pint.Quantity
        Pressure [Pa] (numbers) or quantity (``"200 bar"``).
    reactions : sequence of str, optional
        Named-reactions mode: only these reactions proceed.
    gas_model : {"ideal", "peng-robinson"}
        Ideal gas, or Peng-Robinson fugacity coefficients (needs critical constants).
    key : str, optional
        Key reactant for :meth:`EquilibriumResult.conversion`.
    database : SpeciesDatabase, optional
        Defaults to the bundled database.
    binary_interaction : mapping, optional
        ``{("CO2", "H2"): kij, ...}`` overriding the bundled Peng-Robinson kij values.
    initial : EquilibriumResult, optional
        A previous result of the same shape to start from (warm start).
    g0_shift : mapping of str to float or array, optional
        Shift of a species' standard Gibbs energy [J/mol] at each state (broadcast with
        T and P), e.g. ``δΔfH° - T δS°`` for uncertainty propagation.
    enthalpy : float or array, optional
        Solve at fixed enthalpy and pressure instead: the total enthalpy [J] (formation
        basis, same amount basis as the feed) at each state; ``T`` is then the starting
        temperature and the result's ``T`` the equilibrium temperature.  Ideal gas and
        NASA-polynomial species only (see :func:`eqdesign.solve.adiabatic_equilibrium`
        for the general case).
    tolerance : float
        Convergence tolerance on Newton steps (in ln n) and relative conservation residual.

    Returns
    -------
    EquilibriumResult

    Examples
    --------
    Ammonia from a 3:1 H2:N2 feed at 450 degC and 300 atm, ideal gas:

    >>> r = equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "450 degC", "300 atm")
    >>> round(r.mole_fractions["NH3"], 3)
    0.32
    """
    db = database or bundled_database()
    if gas_model not in GAS_MODELS:
        raise EquilibriumInputError(f"gas_model {gas_model!r}: use one of {', '.join(GAS_MODELS)}")
    rxns = tuple(Reaction.parse(r, db) if isinstance(r, str) else r for r in (reactions or ()))
    names: list[str] = []
    for n in list(species) + list(feed):
        resolved = db.resolve(n)
        if resolved not in names:
            names.append(resolved)
    for r in rxns:
        for n in r.names:
            if n not in names:
                names.append(n)
    records = [db.species[n] for n in names]
    ns = len(names)

    T_arr = np.asarray(to_kelvin(T), dtype=float)
    P_arr = np.asarray(to_pascal(P), dtype=float)
    feed_arrays = {db.resolve(k): np.asarray(to_si(v, "amount"), dtype=float) for k, v in feed.items()}
    shift_arrays = {db.resolve(k): np.asarray(v, dtype=float) for k, v in (g0_shift or {}).items()}
    H_arr = None if enthalpy is None else np.asarray(to_si(enthalpy, "energy"), dtype=float)
    shape = np.broadcast_shapes(T_arr.shape, P_arr.shape, *(a.shape for a in feed_arrays.values()),
                                *(a.shape for a in shift_arrays.values()),
                                *(() if H_arr is None else (H_arr.shape,)))
    T_b = np.broadcast_to(T_arr, shape)
    P_b = np.broadcast_to(P_arr, shape)
    if np.any(~np.isfinite(T_b)) or np.any(T_b <= 0):
        raise EquilibriumInputError("temperatures must be finite and above 0 K")
    if np.any(~np.isfinite(P_b)) or np.any(P_b <= 0):
        raise EquilibriumInputError("pressures must be finite and above 0 Pa")
    n_points = int(np.prod(shape)) if shape else 1
    n0 = np.zeros((n_points, ns))
    for name, arr in feed_arrays.items():
        v = np.broadcast_to(arr, shape).reshape(n_points)
        if np.any(v < 0) or np.any(~np.isfinite(v)):
            raise EquilibriumInputError(f"feed of {name} must be finite and non-negative")
        n0[:, names.index(name)] = v
    total_feed = n0.sum(axis=1)
    if np.any(total_feed <= 0):
        raise EquilibriumInputError("the feed is empty (all amounts zero) at some state")
    Tf = T_b.reshape(n_points).copy()
    Pf = P_b.reshape(n_points)
    if H_arr is not None:
        if gas_model != "ideal" or shift_arrays:
            raise EquilibriumInputError("fixed-enthalpy solves take the ideal gas and no g0_shift; "
                                        "use adiabatic_equilibrium for the general case")
        Hf = np.broadcast_to(H_arr, shape).reshape(n_points)

    # standard chemical potentials, (p, ns)
    g0 = standard_gibbs_RT(records, Tf)
    for name, shift in shift_arrays.items():
        if name not in names:
            raise EquilibriumInputError(f"g0_shift names {name!r}, which is not among the species")
        g0[:, names.index(name)] += np.broadcast_to(shift, shape).reshape(n_points) / (R * Tf)
    is_gas = np.array([sp.is_gas for sp in records])
    if not is_gas.any():
        raise EquilibriumInputError("at least one gas species is needed")

    if rxns:
        C = invariant_basis(_stoichiometric_matrix(rxns, names))
        nonneg = False
    else:
        _, C = element_matrix(records)
        nonneg = True

    eos = None
    if gas_model == "peng-robinson":
        from .real_gas import FugacityModel
        eos = FugacityModel([sp for sp in records if sp.is_gas], binary_interaction)

    # group states by which feed species are present: the reachable set depends only on that
    amounts = np.full((n_points, ns), np.nan)
    ln_phi_all = np.full((n_points, ns), np.nan) if eos is not None else None
    dense = np.zeros(n_points, dtype=bool)
    converged = np.zeros(n_points, dtype=bool)
    iterations = np.zeros(n_points, dtype=int)
    residual = np.full(n_points, np.inf)
    present_feed = n0 > 0
    codes = present_feed @ (1 << np.arange(ns, dtype=np.int64) % 62)   # pattern id per state
    first = {}
    for i, c in enumerate(codes[:1] if np.all(codes == codes[0]) else codes):
        first.setdefault(int(c), i)
    for code, i0 in first.items():
        pattern = present_feed[i0]
        rows = np.arange(n_points) if len(first) == 1 else np.flatnonzero(codes == code)
        reach = _reachable(C, pattern.astype(float), nonneg)
        gas_cols = np.flatnonzero(reach & is_gas)
        cond_cols = np.flatnonzero(reach & ~is_gas)
        if gas_cols.size == 0:
            raise EquilibriumInputError("no gas species can be present; add a gas species")
        cols = np.concatenate([gas_cols, cond_cols])
        basis = _row_basis(C[:, cols])
        scale = total_feed[rows]
        b = (n0[rows][:, cols] / scale[:, None]) @ basis.T
        A_gas = basis[:, :gas_cols.size]
        A_cond = basis[:, gas_cols.size:]
        state = None
        if initial is not None and initial.amount_array.size == n_points * ns:
            prev = initial.amount_array.reshape(n_points, ns)[rows] / scale[:, None]
            if np.all(np.isfinite(prev)):
                state = initial_state(rows.size, gas_cols.size, cond_cols.size, basis.shape[0])
                state.ln_gas = np.log(np.maximum(prev[:, gas_cols], 1e-300))
                state.ln_total = np.log(prev[:, gas_cols].sum(axis=1))
                state.cond = prev[:, cond_cols].copy()
                state.present = state.cond > 0
        fug = None
        if eos is not None:
            gas_index = [int(np.flatnonzero(np.flatnonzero(is_gas) == c)[0]) for c in gas_cols]
            Tg, Pg = Tf[rows], Pf[rows]

            def fug(sub, y, _gi=gas_index, _T=Tg, _P=Pg):
                return eos.ln_phi(_T[sub], _P[sub], y, _gi)
        if H_arr is not None:
            out, T_solved = _solve_fixed_enthalpy([records[c] for c in cols], A_gas, A_cond, b,
                                                  np.log(Pf[rows] / P_STANDARD),
                                                  Hf[rows] / (R * scale), Tf[rows], tolerance,
                                                  max_iterations)
            Tf[rows] = T_solved
            g0[rows] = standard_gibbs_RT(records, T_solved)
        else:
            out = minimise_gibbs(g0[rows][:, gas_cols], g0[rows][:, cond_cols], A_gas, A_cond, b,
                                 np.log(Pf[rows] / P_STANDARD), state=state, fugacity=fug,
                                 tolerance=tolerance, max_iterations=max_iterations)
            # second chance for stragglers: restart them from the linear-programming estimate
            # (minimum of Σ g°_j n_j without the mixing terms, the starting point of White,
            # Johnson and Dantzig 1958), which also picks the condensed phases a gas alone
            # could not replace
            bad = np.flatnonzero(~out.converged)
            if bad.size:
                retry = _linear_estimate(g0[rows][bad][:, cols], basis, b[bad], gas_cols.size)
                fug2 = None
                if eos is not None:
                    def fug2(sub, y, _gi=gas_index, _T=Tf[rows][bad], _P=Pf[rows][bad]):
                        return eos.ln_phi(_T[sub], _P[sub], y, _gi)
                out2 = minimise_gibbs(g0[rows][bad][:, gas_cols], g0[rows][bad][:, cond_cols], A_gas,
                                      A_cond, b[bad], np.log(Pf[rows][bad] / P_STANDARD), state=retry,
                                      fugacity=fug2, tolerance=tolerance, max_iterations=max_iterations * 2)
                for attr in ("gas", "cond", "converged", "residual"):
                    getattr(out, attr)[bad] = getattr(out2, attr)
                out.iterations[bad] += out2.iterations
        sol = np.zeros((rows.size, ns))
        sol[:, gas_cols] = out.gas * scale[:, None]
        sol[:, cond_cols] = out.cond * scale[:, None]
        sol[~out.converged] = np.nan
        amounts[rows] = sol
        converged[rows] = out.converged
        iterations[rows] = out.iterations
        residual[rows] = out.residual
        if eos is not None:
            ok = out.converged
            lp = np.full((rows.size, ns), np.nan)
            y = out.gas[ok] / out.gas[ok].sum(axis=1, keepdims=True)
            if ok.any():
                lp[np.ix_(np.flatnonzero(ok), gas_cols)] = eos.ln_phi(Tg[ok], Pg[ok], y, gas_index)
                dense[rows[ok]] = eos.condensation_possible(Tg[ok], Pg[ok], y, gas_index)
            ln_phi_all[rows] = lp
    n_bad = int(n_points - converged.sum())
    message = "all states converged" if n_bad == 0 else f"{n_bad} of {n_points} state(s) did not converge (NaN)"
    if n_bad and warn:
        warnings.warn(message, NotConvergedWarning, stacklevel=2)
    if dense.any():
        note = (f"{int(dense.sum())} state(s) where a liquid-like root of the equation of state "
                "is more stable than the gas: the gas may condense there and a gas-phase "
                "equilibrium does not apply")
        message += "; " + note
        if warn:
            warnings.warn(note, CondensationWarning, stacklevel=2)
    return EquilibriumResult(
        species=tuple(names), phases=tuple(sp.phase for sp in records),
        T=Tf.reshape(shape).copy() if shape else np.float64(Tf[0]), P=P_b.copy() if shape else np.float64(Pf[0]),
        amount_array=amounts.reshape(shape + (ns,)), feed_array=n0.reshape(shape + (ns,)),
        converged=converged.reshape(shape), iterations=iterations.reshape(shape),
        max_residual=residual.reshape(shape), g0_RT=g0.reshape(shape + (ns,)), reactions=rxns,
        gas_model=gas_model,
        ln_phi_array=None if ln_phi_all is None else ln_phi_all.reshape(shape + (ns,)),
        key=db.resolve(key) if key else None, message=message,
        condensation_possible=dense.reshape(shape) if eos is not None else None)
