"""Result objects and warnings of the equilibrium solver.

:class:`EquilibriumResult` carries the composition at every state of a batch with how it
was reached (converged flag, iterations, residual, message); non-converged states hold NaN.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from ...thermo.models import P_STANDARD
from ...thermo.reactions import Reaction
from .problem import stoichiometric_matrix


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
        Newton iterations used (all phase-set rounds together, plus those of the restart
        from the linear-programming estimate where a state needed it).
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
    out_of_range_array : ndarray of bool or None, shape (*shape, n_species)
        True where a species was used outside its data range (``Species.valid_at``:
        [T_min - 2 K, T_max]) at a converged state: a gas in the mixture, a condensed
        species present.  Such a state is not ``trustworthy``.
    excluded_array : ndarray of bool or None, shape (*shape, n_species)
        True where a condensed species was left out of the minimisation because the state
        lies outside its data range (the default of :func:`equilibrium`).
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
    out_of_range_array: np.ndarray | None = field(default=None, repr=False)
    excluded_array: np.ndarray | None = field(default=None, repr=False)

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

    # ----------------------------------------------------------------- validity
    @property
    def out_of_range(self) -> dict:
        """Species name -> bool per state: used outside its data range (only species that are,
        somewhere)."""
        if self.out_of_range_array is None:
            return {}
        flags = np.asarray(self.out_of_range_array, dtype=bool)
        return {name: (bool(flags[..., k]) if flags[..., k].ndim == 0 else flags[..., k])
                for k, name in enumerate(self.species) if flags[..., k].any()}

    @property
    def trustworthy(self) -> np.ndarray:
        """Per state: converged, no species used outside its data range, and (Peng-Robinson)
        no more stable liquid-like root.  A bool for a single state."""
        ok = np.asarray(self.converged, dtype=bool).copy()
        if self.out_of_range_array is not None:
            ok &= ~np.asarray(self.out_of_range_array, dtype=bool).any(axis=-1)
        if self.condensation_possible is not None:
            ok &= ~np.asarray(self.condensation_possible, dtype=bool)
        return bool(ok) if ok.ndim == 0 else ok

    def state_flags(self) -> np.ndarray:
        """Per state, a short text of what makes it untrustworthy ("" where nothing does):
        "not converged", "outside data range: H2O(l)", "condensation possible",
        joined with "; ".  Array of str of ``shape`` (a str for a single state)."""
        conv = np.asarray(self.converged, dtype=bool).reshape(-1)
        p = conv.size
        oor = (np.zeros((p, len(self.species)), dtype=bool) if self.out_of_range_array is None
               else np.asarray(self.out_of_range_array, dtype=bool).reshape(p, -1))
        dense = (np.zeros(p, dtype=bool) if self.condensation_possible is None
                 else np.asarray(self.condensation_possible, dtype=bool).reshape(-1))
        texts = []
        for i in range(p):        # text for output tables, not a solve path
            parts = [] if conv[i] else ["not converged"]
            if oor[i].any():
                parts.append("outside data range: " + ", ".join(n for n, f in zip(self.species, oor[i]) if f))
            if dense[i]:
                parts.append("condensation possible")
            texts.append("; ".join(parts))
        out = np.array(texts, dtype=object).reshape(self.shape)
        return str(out) if out.ndim == 0 else out

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
        """Fractional conversion of a reactant, (n_in - n_out) / n_in [-].

        Refused (EquilibriumInputError) where the key is not fed: its conversion is undefined.
        """
        key = key or self.key
        if key is None:
            raise EquilibriumInputError("name the key reactant: conversion('N2')")
        if key not in self.species:
            raise EquilibriumInputError(f"key reactant {key!r} is not among the species {list(self.species)}")
        k = self.species.index(key)
        n0 = self.feed_array[..., k]
        if np.any(n0 <= 0):
            raise EquilibriumInputError(f"key reactant {key!r} is not in the feed (at {int(np.sum(n0 <= 0))} "
                                        "state(s)), so its conversion is undefined; feed it or choose another key")
        with np.errstate(invalid="ignore", divide="ignore"):
            x = (n0 - self.amount_array[..., k]) / n0
        return float(x) if np.ndim(x) == 0 else x

    @property
    def extents(self) -> dict:
        """Reaction text -> extent ξ [mol] (named-reactions mode; minimum-norm if the
        reactions are linearly dependent)."""
        if not self.reactions:
            return {}
        N = stoichiometric_matrix(self.reactions, self.species)           # (ns, nr)
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
