"""Carbon: the activity of graphite in an equilibrium gas, and the carbon limit.

Solid carbon can form where the gas's carbon activity a_C exceeds 1 (graphite reference).
The routes (Boudouard, methane cracking, CO reduction) give the same a_C at full
equilibrium and different ones where only named reactions proceed.
"""
from __future__ import annotations

import warnings

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ..core.problem import element_matrix
from ..core.result import EquilibriumInputError, EquilibriumResult


CARBON_ROUTES = {
    "2 CO = C(gr) + CO2": {"CO": 2.0, "CO2": -1.0},            # Boudouard
    "CH4 = C(gr) + 2 H2": {"CH4": 1.0, "H2": -2.0},            # methane cracking
    "CO + H2 = C(gr) + H2O": {"CO": 1.0, "H2": 1.0, "H2O": -1.0},   # CO reduction
}


def _chemical_potentials(result: EquilibriumResult) -> np.ndarray:
    """μ_i/RT = g°_i/RT + ln a_i at the solution, shape (*shape, n_species)."""
    with np.errstate(invalid="ignore"):
        return result.g0_RT + result.ln_activity()


def _require_result(result) -> None:
    if not isinstance(result, EquilibriumResult):
        raise EquilibriumInputError(f"give the EquilibriumResult of an equilibrium() call, got "
                                    f"{type(result).__name__}")


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
    _require_result(result)
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

    Named-reactions results (gas not at full equilibrium): the largest finite a_C of the
    carbon-forming routes (a route with a species missing from the result, or whose value
    is not finite because a species amount is zero, is skipped); ``method`` does not apply.

    Parameters
    ----------
    result : EquilibriumResult
        An equilibrium without graphite (if graphite is present at unit activity the value
        is 1).
    database : SpeciesDatabase, optional
        Supplies the data of ``C(gr)``.
    method : {"auto", "element-potential"}
        All-species results only: the route of the most abundant species (``"auto"``,
        element potential as fallback) or the element potential at every state.

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
    _require_result(result)
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
    if not isinstance(obj, EquilibriumResult):       # a conversion map: its own carbon activity
        if obj.carbon_activity is None:
            raise EquilibriumInputError("the map's gas holds no carbon: graphite cannot form")
        a = obj.carbon_activity
    else:
        a = carbon_activity(obj, database=database)
    with np.errstate(invalid="ignore"):
        s = np.asarray(a) > 1.0
    return bool(s) if s.ndim == 0 else s


GRAPHITE = "C(gr)"
