"""Mixture enthalpies on the formation basis, feed enthalpies and isothermal duties,
and the temperature derivatives of an equilibrium composition.
"""
from __future__ import annotations

from typing import Mapping, Sequence

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.models import Nasa7Polynomial, Nasa7Table, R
from ...thermo.reactions import bundled_database
from ..core.equilibrium import equilibrium
from ..core.fugacity import FugacityModel
from ..core.inputs import broadcast_shape, feed_mapping, pressures, quantity, species_names, temperatures
from ..core.problem import element_matrix, invariant_basis, stoichiometric_matrix
from ..core.result import EquilibriumInputError, EquilibriumResult


# ====================================================================== enthalpy models
class MixtureEnthalpy:
    """Enthalpy of a mixture of fixed species: ideal gas plus pure condensed species,
    optionally with the Peng-Robinson residual enthalpy of the gas."""

    def __init__(self, records, gas_model: str = "ideal", binary_interaction=None):
        self.records = list(records)
        self.is_gas = np.array([sp.is_gas for sp in self.records])
        self.gas_columns = np.flatnonzero(self.is_gas)
        # NASA polynomials (nearly every species) evaluated together
        self._nasa = [j for j, sp in enumerate(self.records) if isinstance(sp.model, Nasa7Polynomial)]
        self._other = [j for j, sp in enumerate(self.records) if not isinstance(sp.model, Nasa7Polynomial)]
        self._table = (Nasa7Table.from_polynomials([self.records[j].model for j in self._nasa])
                       if self._nasa else None)
        self.eos = None
        if gas_model == "peng-robinson":
            self.eos = FugacityModel([sp for sp in self.records if sp.is_gas], binary_interaction)
        elif gas_model != "ideal":
            raise EquilibriumInputError(f"gas_model {gas_model!r}: use one of ideal, peng-robinson")

    def species_properties(self, T):
        """cp° [J/(mol K)] and h° [J/mol] of every species, each shape (*T.shape, n_species)."""
        T = np.asarray(T, dtype=float)
        if T.size:
            ends = np.array([np.nanmin(T), np.nanmax(T)])
            for sp in self.records:
                sp.check_temperature(ends[np.isfinite(ends)])
        Tc = T[..., None]
        cp = np.zeros(T.shape + (len(self.records),))
        h = np.zeros(T.shape + (len(self.records),))
        if self._table is not None:
            cp_R, h_RT = self._table.heat_capacity_enthalpy(T)
            cp[..., self._nasa] = R * cp_R
            h[..., self._nasa] = R * Tc * h_RT
        for j in self._other:
            cp_j, h_j, _ = self.records[j].model.dimensionless(T)
            cp[..., j] = R * cp_j
            h[..., j] = R * T * h_j
        return cp, h

    def residual(self, amounts, T, P):
        """n_gas H_res [J] of the gas part (0 for the ideal gas), shape of T."""
        T = np.asarray(T, dtype=float)
        if self.eos is None:
            return np.zeros(T.shape)
        gas = amounts[..., self.gas_columns]
        n_gas = gas.sum(axis=-1)
        out = np.zeros(T.shape)
        ok = np.isfinite(n_gas) & (n_gas > 0)
        if np.any(ok):
            Tb, Pb = np.broadcast_to(T, ok.shape)[ok], np.broadcast_to(P, ok.shape)[ok]
            y = gas[ok] / n_gas[ok][..., None]
            out[ok] = n_gas[ok] * self.eos.residual_enthalpy(Tb, Pb, y, np.arange(y.shape[-1]))
        out[~np.isfinite(n_gas)] = np.nan
        return out

    def total(self, amounts, T, P, h=None):
        """H = Σ n_i h°_i(T) (+ n_gas H_res) [J], shape of T."""
        if h is None:
            h = self.species_properties(T)[1]
        return (amounts * h).sum(axis=-1) + self.residual(amounts, T, P)

    def frozen_heat_capacity(self, amounts, T, P, cp=None):
        """dH/dT at fixed composition [J/K] (Peng-Robinson part by a central difference)."""
        if cp is None:
            cp = self.species_properties(T)[0]
        c = (amounts * cp).sum(axis=-1)
        if self.eos is not None:
            dT = 1e-3 * np.asarray(T, dtype=float)
            c = c + (self.residual(amounts, T + dT, P) - self.residual(amounts, T - dT, P)) / (2 * dT)
        return c


def records_for(names, db: SpeciesDatabase):
    return [db.species[db.resolve(n)] for n in names]


def mixture_enthalpy(result: EquilibriumResult, *, database: SpeciesDatabase | None = None,
                     binary_interaction: Mapping | None = None):
    """Total enthalpy [J] of the amounts of an :class:`EquilibriumResult` at its T and P.

    ``H = Σ n_i h°_i(T)`` on the formation basis (h°(298.15 K) = ΔfH°), so heats of
    reaction are included; with ``result.gas_model == "peng-robinson"`` the gas adds
    ``n_gas H_res(T, P, y)`` (Peng and Robinson, Ind. Eng. Chem. Fundam. 15 (1976) 59-64).

    Parameters
    ----------
    result : EquilibriumResult
        Amounts [mol] (any basis: J per that basis come out), T [K], P [Pa].
    database : SpeciesDatabase, optional
        The database the result was computed with (default: the bundled one).
    binary_interaction : mapping, optional
        Peng-Robinson kij overrides used for the result.

    Returns
    -------
    float | ndarray
        H [J], the shape of ``result.T``; NaN where the result did not converge.

    Examples
    --------
    Elements in their reference states have zero enthalpy at 298.15 K, so the enthalpy of
    2 mol of ammonia brought to equilibrium at 298.15 K and 1 bar is n_NH3 ΔfH°(NH3)
    (CODATA key value -45.94 kJ/mol, Cox, Wagman and Medvedev 1989); about 3 % of the
    ammonia dissociates:

    >>> from eqdesign.solve import equilibrium
    >>> r = equilibrium(["N2", "H2", "NH3"], {"NH3": 2.0}, 298.15, 1e5)
    >>> print(f"{r.amounts['NH3']:.4f} mol, {mixture_enthalpy(r) / 1000:.2f} kJ")
    1.9359 mol, -88.93 kJ
    """
    db = database or bundled_database()
    model = MixtureEnthalpy(records_for(result.species, db), result.gas_model, binary_interaction)
    T = np.asarray(result.T, dtype=float)
    H = model.total(np.asarray(result.amount_array, dtype=float), T, np.asarray(result.P, dtype=float))
    return float(H) if np.ndim(H) == 0 else H


def broadcast_inputs(db, species, feed, T, P, T_other=None):
    """Resolve names and broadcast feed, T [K], P [Pa] (and a second temperature [K]);
    returns names, shape, flat T, flat P, feed amounts (p, n_species) and flat T_other."""
    feed = feed_mapping(feed)
    names: list[str] = []
    for n in species_names(species) + list(feed):
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    T_arr = temperatures(T)
    P_arr = pressures(P)
    T2_arr = np.asarray(0.0) if T_other is None else temperatures(T_other, "second temperature")
    feed_arrays = {db.resolve(k): quantity(v, "amount", f"feed of {k}") for k, v in feed.items()}
    for k, a in feed_arrays.items():
        if np.any(a < 0):
            raise EquilibriumInputError(f"feed of {k} must be non-negative")
    shape = broadcast_shape(T=T_arr, P=P_arr, **({} if T_other is None else {"second temperature": T2_arr}),
                            **{f"feed of {k}": a for k, a in feed_arrays.items()})
    p = int(np.prod(shape)) if shape else 1
    n0 = np.zeros((p, len(names)))
    for name, arr in feed_arrays.items():
        n0[:, names.index(name)] += np.broadcast_to(arr, shape).reshape(p)
    if np.any(n0.sum(axis=1) < np.finfo(float).tiny):
        raise EquilibriumInputError("the feed is empty (all amounts zero or subnormal) at some state; "
                                    "give at least one positive amount")

    def flat(a):
        return np.broadcast_to(a, shape).reshape(p).copy()

    return names, shape, flat(T_arr), flat(P_arr), n0, flat(T2_arr)


def feed_enthalpy(species: Sequence[str], feed: Mapping[str, object], T, P, *,
                  gas_model: str = "ideal", database: SpeciesDatabase | None = None,
                  binary_interaction: Mapping | None = None):
    """Total enthalpy [J] of a feed at T and P, unreacted.

    Parameters
    ----------
    species : sequence of str
        Species of the mixture (feed species are added when missing; extra species have
        zero amount and change nothing).
    feed : mapping of str to amount
        Amounts [mol] (numbers, arrays or strings with units), broadcast with T and P.
    T : float | array_like | str
        Temperature [K] or a quantity string (``"420 degC"``).
    P : float | array_like | str
        Pressure [Pa] or a quantity string; used only by the Peng-Robinson model.
    gas_model : {"ideal", "peng-robinson"}
    database : SpeciesDatabase, optional
    binary_interaction : mapping, optional

    Returns
    -------
    float | ndarray
        H [J] on the formation basis, the broadcast shape of the inputs.

    Examples
    --------
    One mole of nitrogen heated from 298.15 K to 1000 K takes 21.46 kJ (NIST-JANAF,
    Chase 1998: H(1000) - H(298.15) = 21.460 kJ/mol):

    >>> round(float(feed_enthalpy(["N2"], {"N2": 1.0}, 1000.0, 1e5)) / 1000, 2)
    21.46
    """
    db = database or bundled_database()
    names, shape, T_f, P_f, n0, _ = broadcast_inputs(db, species, feed, T, P)
    model = MixtureEnthalpy(records_for(names, db), gas_model, binary_interaction)
    H = model.total(n0, T_f, P_f).reshape(shape)
    return float(H) if H.ndim == 0 else H


def isothermal_duty(species: Sequence[str], feed: Mapping[str, object], T_in, T, P,
                    **equilibrium_kwargs):
    """Heat [J] to add to take a feed at T_in to equilibrium at T (negative: heat removed).

    ``Q = H_eq(T, P) - H_feed(T_in, P)``: a steady-flow energy balance with no work, the
    amounts being those of the feed (J per mol-basis of ``feed``; W for mol/s).

    Parameters
    ----------
    species, feed
        As for :func:`eqdesign.solve.equilibrium`.
    T_in : float | array_like | str
        Feed temperature [K].
    T : float | array_like | str
        Outlet (equilibrium) temperature [K].
    P : float | array_like | str
        Pressure [Pa].
    **equilibrium_kwargs
        Passed to :func:`eqdesign.solve.equilibrium` (``reactions``, ``gas_model``,
        ``database``, ``binary_interaction``, ...).

    Returns
    -------
    float | ndarray
        Q [J], broadcast shape of the inputs; NaN where the equilibrium did not converge.

    Examples
    --------
    With nothing to react, the duty is the sensible heat: 1 mol N2 from 298.15 K to
    1000 K, 21.46 kJ (NIST-JANAF, Chase 1998):

    >>> round(float(isothermal_duty(["N2"], {"N2": 1.0}, 298.15, 1000.0, 1e5)) / 1000, 2)
    21.46
    """
    db = equilibrium_kwargs.get("database") or bundled_database()
    gas_model = equilibrium_kwargs.get("gas_model", "ideal")
    kij = equilibrium_kwargs.get("binary_interaction")
    names, shape, T_in_f, P_f, n0, T_f = broadcast_inputs(db, species, feed, T_in, P, T_other=T)
    feed_flat = {n: n0[:, k] for k, n in enumerate(names) if np.any(n0[:, k] > 0)}
    res = equilibrium(names, feed_flat, T_f, P_f, **equilibrium_kwargs)
    model = MixtureEnthalpy(records_for(res.species, db), gas_model, kij)
    n_in = np.zeros((T_f.size, len(res.species)))
    n_in[:, [res.species.index(n) for n in names]] = n0
    Q = (model.total(res.amount_array, T_f, P_f) - model.total(n_in, T_in_f, P_f)).reshape(shape)
    return float(Q) if Q.ndim == 0 else Q


# ====================================================================== temperature derivatives
def conservation_matrix(result: EquilibriumResult, records) -> np.ndarray:
    """Rows conserved by the result's problem: element counts, or reaction invariants."""
    if result.reactions:
        return invariant_basis(stoichiometric_matrix(result.reactions, list(result.species)))
    return element_matrix(records)[1]


def composition_temperature_derivative(amounts, h, T, C, is_gas):
    """d n_j / dT [mol/K] of an equilibrium mixture at fixed P and conserved ``C n``.

    Ideal gas plus pure condensed species (those present, n > 0); the linear system is
    that of Gordon and McBride, NASA RP-1311 Part I (1994), section 2.5: with
    ``ĥ = h°/(R T²)``,

        Σ_l [C diag(n_g) Cᵀ]_il δπ_l + Σ_k c_ik δn_k + (C n_g)_i δlnN = -Σ_j c_ij n_j ĥ_j
        Σ_l c_lk δπ_l = -ĥ_k                              (condensed k present)
        Σ_l (C n_g)_l δπ_l = -Σ_j n_j ĥ_j
        δ ln n_j = ĥ_j + δlnN + Σ_l c_lj δπ_l            (gas j)

    solved for every state at once.  Amounts are scaled to 1 mol per state inside.
    """
    p, ns = amounts.shape
    scale = np.nansum(amounts, axis=1, keepdims=True)
    n = np.nan_to_num(amounts / np.where(scale > 0, scale, 1.0))
    h_hat = h / (R * T[:, None] ** 2)
    gas = np.where(is_gas, n, 0.0)
    cond_idx = np.flatnonzero(~is_gas)
    m, nc = C.shape[0], cond_idx.size
    k = m + nc + 1
    M = np.zeros((p, k, k))
    rhs = np.zeros((p, k))
    Cn = gas @ C.T                                             # (p, m)
    M[:, :m, :m] = (C[None, :, :] * gas[:, None, :]) @ C.T
    M[:, :m, -1] = Cn
    M[:, -1, :m] = Cn
    gh = gas * h_hat
    rhs[:, :m] = -(gh @ C.T)
    rhs[:, -1] = -gh.sum(axis=1)
    if nc:
        present = n[:, cond_idx] > 0                           # (p, nc)
        block = C[:, cond_idx][None, :, :] * present[:, None, :]
        M[:, :m, m:m + nc] = block
        M[:, m:m + nc, :m] = block.transpose(0, 2, 1)
        rhs[:, m:m + nc] = np.where(present, -h_hat[:, cond_idx], 0.0)
    # Rows of absent elements or phases are empty; rows of elements locked in fixed ratios
    # are dependent.  A tiny Tikhonov term (relative 1e-13) makes every system regular and
    # leaves consistent solutions unchanged to that order.
    row_size = np.abs(M).max(axis=2)                          # (p, k)
    big = np.maximum(row_size.max(axis=1, keepdims=True), 1e-300)
    diagonal = M.reshape(p, k * k)[:, ::k + 1]                  # a view of M's diagonals
    diagonal += np.where(row_size > 1e-13 * big, 1e-13 * big, 1.0)
    with np.errstate(invalid="ignore", over="ignore"):
        try:
            sol = np.linalg.solve(M, rhs[..., None])[..., 0]
        except np.linalg.LinAlgError:
            sol = np.einsum("pij,pj->pi", np.linalg.pinv(M, rcond=1e-13), rhs)
    d_ln_n = h_hat + sol[:, -1:] + sol[:, :m] @ C
    dn = np.where(is_gas, gas * d_ln_n, 0.0)
    if nc:
        dn[:, cond_idx] = np.where(present, sol[:, m:m + nc], 0.0)
    return dn * scale, np.where(is_gas, d_ln_n, 0.0)
