"""Public equilibrium entry point: species names, feed, T and P in; a result object out.

    from eqdesign.solve import equilibrium
    res = equilibrium(["N2", "H2", "NH3"], {"N2": 1, "H2": 3}, "450 degC", "200 bar")
    res.mole_fractions["NH3"]

Two modes share one solver (:mod:`eqdesign.solve.core.newton`):

* all species (``reactions=None``): element conservation, every listed species may form;
* named reactions: only the listed reactions proceed; the conservation matrix is a basis
  of the reaction invariants, the left null space of the stoichiometric matrix
  (W. R. Smith, R. W. Missen, *Chemical Reaction Equilibrium Analysis*, Wiley, 1982).
"""
from __future__ import annotations

import warnings
from typing import Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.models import Nasa7Polynomial, Nasa7Table, P_STANDARD, R
from ...thermo.reactions import bundled_database
from ...thermo.species import ExtrapolationWarning, standard_gibbs_RT
from . import compiled as compiled_core
from .fugacity import FugacityModel
from .inputs import (broadcast_shape, feed_mapping, mapping_or_none, positive_number, pressures, quantity,
                     reaction_list, species_names, temperatures, whole_number)
from .newton import CoreOutcome, initial_state, minimise_gibbs
from .problem import (element_matrix, invariant_basis, linear_estimate, reachable_species, row_basis,
                      stoichiometric_matrix)
from .result import (CondensationWarning, EquilibriumInputError, EquilibriumResult, GAS_MODELS,
                     NotConvergedWarning)


def _solve_fixed_enthalpy(records, A_gas, A_cond, b, ln_p, h0, T_start, tolerance, max_iterations):
    """Run the compiled fixed-enthalpy kernel on one group; returns (CoreOutcome, T, beyond):
    ``beyond`` marks states whose solution lies outside the data range (refused, T NaN)."""
    if compiled_core is None or not all(isinstance(sp.model, Nasa7Polynomial) for sp in records):
        raise EquilibriumInputError("fixed-enthalpy solves need NASA-polynomial data for every "
                                    "species; use adiabatic_equilibrium for other data")
    table = Nasa7Table.from_polynomials([sp.model for sp in records])
    # writable copies: the compiled kernel is specialised on writable arrays
    coeffs, bounds, n_ranges = (np.array(a) for a in (table.coefficients, table.bounds, table.n_ranges))
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
    inside = (T >= lo - 2.0) & (T <= hi)
    beyond = np.isfinite(T) & ~inside            # solved (or heading) beyond the data
    converged &= inside                           # never an answer outside every species' data
    out = CoreOutcome(gas=np.exp(state.ln_gas), cond=np.where(state.present, state.cond, 0.0),
                      present=state.present.copy(), potentials=state.potentials.copy(),
                      converged=converged, iterations=iterations.astype(int), residual=residual,
                      state=state)
    return out, np.where(converged, T, np.nan), beyond


def _read_states(db, species, feed, T, P, rxns, g0_shift, enthalpy, gas_model):
    """Species names and records, and every state's inputs checked and broadcast.

    Returns (names, records, shape, n0 (p, ns) [mol], T (p,) [K], P broadcast to shape [Pa],
    H (p,) [J] or None, g0 shifts by species [J/mol]); EquilibriumInputError naming the
    argument for any bad value.
    """
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

    T_arr = temperatures(T)
    P_arr = pressures(P)
    feed_arrays = {db.resolve(k): quantity(v, "amount", f"feed of {k}") for k, v in feed.items()}
    shift_arrays = {db.resolve(k): quantity(v, "molar_energy", f"g0_shift of {k}") for k, v in (g0_shift or {}).items()}
    H_arr = None if enthalpy is None else quantity(enthalpy, "energy", "enthalpy")
    shape = broadcast_shape(T=T_arr, P=P_arr, **{f"feed of {k}": a for k, a in feed_arrays.items()},
                            **{f"g0_shift of {k}": a for k, a in shift_arrays.items()},
                            **({} if H_arr is None else {"enthalpy": H_arr}))
    T_b = np.broadcast_to(T_arr, shape)
    P_b = np.broadcast_to(P_arr, shape)
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
    if np.any(total_feed < np.finfo(float).tiny):
        raise EquilibriumInputError(f"the feed total is below {np.finfo(float).tiny:.3g} mol (the smallest "
                                    "normal float) at some state; scale the amounts up (the equilibrium "
                                    "composition does not depend on the scale)")
    Tf = T_b.reshape(n_points).copy()
    Pf = P_b.reshape(n_points)
    Hf = None
    if H_arr is not None:
        if gas_model != "ideal" or shift_arrays:
            raise EquilibriumInputError("fixed-enthalpy solves take the ideal gas and no g0_shift; "
                                        "use adiabatic_equilibrium for the general case")
        Hf = np.broadcast_to(H_arr, shape).reshape(n_points)
    return names, records, shape, n0, Tf, P_b, Hf, shift_arrays



# Stays long: one sequential pass (conservation rows, solve per feed pattern, second chance for
# stragglers, result); the input checks live in _read_states.
def equilibrium(species: Sequence[str], feed: Mapping[str, object], T, P, *,
                reactions: Sequence[str] | None = None, gas_model: str = "ideal",
                key: str | None = None, database: SpeciesDatabase | None = None,
                binary_interaction: Mapping | None = None, initial: EquilibriumResult | None = None,
                tolerance: float = 1e-11, max_iterations: int = 300,
                g0_shift: Mapping[str, object] | None = None,
                enthalpy=None, warn: bool = True,
                admit_out_of_range: bool = False) -> EquilibriumResult:
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
    admit_out_of_range : bool
        By default a condensed species is left out of the minimisation at every state whose
        temperature lies outside its data range (``Species.valid_at``: [T_min - 2 K, T_max]),
        so that no liquid is reported above the range of its record (e.g. above the critical
        point) and no solid beyond its stability range.  True admits them; either way every
        species used outside its range is flagged per state (``out_of_range_array``) and the
        state is not ``trustworthy``.  A fed condensed species whose elements no other species
        can carry stays in (flagged).

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
    species = species_names(species)
    feed = feed_mapping(feed)
    rxns = reaction_list(reactions, db)
    if key is not None and not isinstance(key, str):
        raise EquilibriumInputError(f"key must be a species name (text), got {key!r}")
    if initial is not None and not isinstance(initial, EquilibriumResult):
        raise EquilibriumInputError(f"initial must be an EquilibriumResult of an earlier solve, got "
                                    f"{type(initial).__name__}")
    tolerance = positive_number(tolerance, "tolerance")
    max_iterations = whole_number(max_iterations, "max_iterations", 1)
    mapping_or_none(g0_shift, "g0_shift", "{'NH3': 500.0} (J/mol)")
    names, records, shape, n0, Tf, P_b, Hf, shift_arrays = _read_states(
        db, species, feed, T, P, rxns, g0_shift, enthalpy, gas_model)
    ns, n_points = len(names), Tf.size
    Pf = P_b.reshape(n_points)
    total_feed = n0.sum(axis=1)

    # standard chemical potentials, (p, ns)
    # extrapolation warnings are held back and re-issued after the solve for the species
    # actually used outside their range (a condensed species left out there is not)
    with warnings.catch_warnings(record=True) as held:
        warnings.simplefilter("always", ExtrapolationWarning)
        g0 = standard_gibbs_RT(records, Tf)
    for name, shift in shift_arrays.items():
        if name not in names:
            raise EquilibriumInputError(f"g0_shift names {name!r}, which is not among the species")
        g0[:, names.index(name)] += np.broadcast_to(shift, shape).reshape(n_points) / (R * Tf)
    is_gas = np.array([sp.is_gas for sp in records])
    if not is_gas.any():
        raise EquilibriumInputError("at least one gas species is needed")

    if rxns:
        C = invariant_basis(stoichiometric_matrix(rxns, names))
        nonneg = False
    else:
        _, C = element_matrix(records)
        nonneg = True

    eos = None
    if gas_model == "peng-robinson":
        eos = FugacityModel([sp for sp in records if sp.is_gas], binary_interaction)

    # group states by which feed species are present: the reachable set depends only on that
    amounts = np.full((n_points, ns), np.nan)
    ln_phi_all = np.full((n_points, ns), np.nan) if eos is not None else None
    dense = np.zeros(n_points, dtype=bool)
    converged = np.zeros(n_points, dtype=bool)
    iterations = np.zeros(n_points, dtype=int)
    residual = np.full(n_points, np.inf)
    present_feed = n0 > 0
    # condensed species outside their data range are left out where they are not valid (the
    # fixed-enthalpy path learns T only from the solve: its T is bounded by every range instead)
    valid = np.column_stack([np.asarray(sp.valid_at(Tf), dtype=bool).reshape(n_points) for sp in records])
    excluded = (~valid & ~is_gas) if (Hf is None and not admit_out_of_range) else np.zeros_like(valid)
    used = np.zeros((n_points, ns), dtype=bool)     # species in the minimisation at each state
    beyond_data = np.zeros(n_points, dtype=bool)
    # group states by the exact pattern (fed species, excluded condensed species): the
    # reachable set and the conservation rows depend only on that
    patterns, group_of = _exact_patterns(np.concatenate([present_feed, excluded], axis=1))
    for g, key_row in enumerate(patterns):
        pattern, left_out = key_row[:ns], key_row[ns:]
        rows = np.arange(n_points) if len(patterns) == 1 else np.flatnonzero(group_of == g)
        reach = reachable_species(C, pattern.astype(float), nonneg)
        scale = total_feed[rows]
        b = basis = None
        if left_out.any():
            # conservation of the full feed (fed condensed species included) by the rest
            keep = reach & ~left_out
            cols = np.concatenate([np.flatnonzero(keep & is_gas), np.flatnonzero(keep & ~is_gas)])
            basis, b, feasible = _conserved_by(C, cols, n0[rows] / scale[:, None])
            if not feasible:          # the feed's elements need a left-out fed species: keep it
                left_out = left_out & ~pattern
                basis = b = None
            reach &= ~left_out
            excluded[rows] &= left_out
        gas_cols = np.flatnonzero(reach & is_gas)
        cond_cols = np.flatnonzero(reach & ~is_gas)
        if gas_cols.size == 0:
            raise EquilibriumInputError("no gas species can be present; add a gas species")
        cols = np.concatenate([gas_cols, cond_cols])
        used[np.ix_(rows, cols)] = True
        if basis is None:
            basis = row_basis(C[:, cols])
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
        if Hf is not None:
            out, T_solved, beyond_data[rows] = _solve_fixed_enthalpy([records[c] for c in cols], A_gas, A_cond, b,
                                                  np.log(Pf[rows] / P_STANDARD),
                                                  Hf[rows] / (R * scale), Tf[rows], tolerance,
                                                  max_iterations)
            Tf[rows] = T_solved
            with warnings.catch_warnings(record=True) as held_h:
                warnings.simplefilter("always", ExtrapolationWarning)
                g0[rows] = standard_gibbs_RT(records, T_solved)
            held.extend(held_h)
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
                retry = linear_estimate(g0[rows][bad][:, cols], basis, b[bad], gas_cols.size)
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
    # every conserved quantity (element or reaction invariant) to 0.1 % of its own size: a
    # trace element far below the solver's resolution (relative to the whole feed) is lost,
    # and that state is not an answer
    with np.errstate(invalid="ignore", divide="ignore"):
        drift = np.abs(np.nan_to_num(amounts - n0) @ C.T)
        size = (n0 + np.nan_to_num(amounts)) @ np.abs(C).T
        lost = converged & np.any(drift > 1e-3 * size + 1e-300, axis=1)
    if lost.any():
        converged &= ~lost
        amounts[lost] = np.nan
    n_bad = int(n_points - converged.sum())
    message = "all states converged" if n_bad == 0 else f"{n_bad} of {n_points} state(s) did not converge (NaN)"
    if lost.any():
        message += (f"; {int(lost.sum())} state(s) lose a conserved quantity (an element or reaction invariant "
                    "fed in a trace amount below the solver's resolution): raise its amount or leave it out")
    # species used outside their data range, per state (T of the solve on the enthalpy path)
    valid_solved = np.column_stack([np.asarray(sp.valid_at(Tf), dtype=bool).reshape(n_points)
                                    for sp in records])
    cond_used = np.where(is_gas, True, np.nan_to_num(amounts) > 0)
    out_of_range = used & ~valid_solved & converged[:, None] & cond_used
    if beyond_data.any():    # fixed-enthalpy states whose temperature left the data: refused
        message += (f"; {int(beyond_data.sum())} fixed-enthalpy state(s) reach a temperature outside "
                    "the data range of the species (not an answer)")
    used_outside = {names[j] for j in np.flatnonzero(out_of_range.any(axis=0))}
    for w in held:
        if not issubclass(w.category, ExtrapolationWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
        elif str(w.message).split(":")[0] in used_outside:
            warnings.warn(str(w.message), ExtrapolationWarning, stacklevel=2)
    if out_of_range.any():
        bad_names = [names[j] for j in np.flatnonzero(out_of_range.any(axis=0))]
        note = (f"{int(out_of_range.any(axis=1).sum())} state(s) use species outside their data "
                f"range ({', '.join(bad_names)}): not trustworthy")
        message += "; " + note
    if excluded.any():
        left = [names[j] for j in np.flatnonzero(excluded.any(axis=0))]
        message += (f"; condensed species left out outside their data range at "
                    f"{int(excluded.any(axis=1).sum())} state(s) ({', '.join(left)})")
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
        condensation_possible=dense.reshape(shape) if eos is not None else None,
        out_of_range_array=out_of_range.reshape(shape + (ns,)),
        excluded_array=excluded.reshape(shape + (ns,)))


def _exact_patterns(key: np.ndarray):
    """The distinct rows of a boolean matrix (p, k) and the group of each row: (patterns
    (g, k), group index (p,)).  Rows are compared bit for bit (packed bits), so no two
    patterns share a group however many columns there are."""
    if np.all(key == key[:1]):
        return key[:1], np.zeros(key.shape[0], dtype=np.intp)
    packed = np.ascontiguousarray(np.packbits(key, axis=1))
    rows = packed.view(np.dtype((np.void, packed.shape[1]))).ravel()
    _, first, group_of = np.unique(rows, return_index=True, return_inverse=True)
    return key[first], group_of.reshape(-1)


def _conserved_by(C, cols, n0):
    """Conservation rows over the species ``cols`` for the full feed ``n0`` (p, ns) [mol]:
    (basis, b (p, rank), feasible).  Feasible where ``C n0`` lies in the span of ``C[:, cols]``
    (the kept species can carry every conserved quantity of the feed)."""
    U, S, Vt = np.linalg.svd(C[:, cols], full_matrices=False)
    rank = int(np.sum(S > 1e-10 * max(S.max(initial=0.0), 1.0)))
    target = n0 @ C.T                                         # (p, m)
    b = (target @ U[:, :rank]) / S[:rank]
    back = (b * S[:rank]) @ U[:, :rank].T
    feasible = bool(np.all(np.abs(target - back) <= 1e-9 * np.maximum(np.abs(target).max(axis=1,
                                                                                          keepdims=True), 1e-300)))
    return Vt[:rank], b, feasible
