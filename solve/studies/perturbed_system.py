"""One equilibrium system solved in batches with perturbed standard Gibbs energies.

The uncertainty studies solve the same species, feed and model at many states and many
draws of the data; this module holds that system, solves it in one batched
:func:`eqdesign.solve.equilibrium` call (chunked only above :data:`MAX_STATES_PER_CALL`
states) and gives the derivatives of its outputs with respect to each species' g° by
central differences."""
from __future__ import annotations
from dataclasses import dataclass
from typing import Mapping

import numpy as np

from ...thermo.database import SpeciesDatabase
from ...thermo.models import R
from ..core.equilibrium import equilibrium


#: Largest number of states handed to one call of :func:`equilibrium` (memory bound);
#: below it, every propagation is a single batched call.
MAX_STATES_PER_CALL = 200_000

#: Finite-difference step in g°/RT for the sensitivity coefficients [-].
G_STEP = 1e-3

# =========================================================================== batched solving
@dataclass(frozen=True)
class BatchedSystem:
    names: tuple
    feed: dict                 # name -> (p,) feed amounts per state
    gas_mask: np.ndarray
    key: str | None
    reactions: tuple
    gas_model: str
    database: SpeciesDatabase
    binary_interaction: Mapping | None

    def solve(self, T, P, state, shift=None):
        """Amounts (n, ns), converged (n,) at flat T, P (n,), feed row ``state`` (n,) and
        g° shifts ``shift`` (n, ns) [J/mol]; one equilibrium call per MAX_STATES_PER_CALL."""
        T = np.asarray(T, dtype=float).reshape(-1)
        P = np.broadcast_to(np.asarray(P, dtype=float).reshape(-1), T.shape)
        n, ns = T.size, len(self.names)
        amounts = np.full((n, ns), np.nan)
        feed_out = np.zeros((n, ns))
        conv = np.zeros(n, dtype=bool)
        for s in range(0, n, MAX_STATES_PER_CALL):
            sl = slice(s, min(n, s + MAX_STATES_PER_CALL))
            feed = {k: v[state[sl]] for k, v in self.feed.items()}
            g0_shift = None
            if shift is not None:
                g0_shift = {name: shift[sl, j] for j, name in enumerate(self.names) if np.any(shift[sl, j] != 0)}
            res = equilibrium(list(self.names), feed, T[sl], P[sl], reactions=self.reactions or None,
                              gas_model=self.gas_model, database=self.database,
                              binary_interaction=self.binary_interaction, g0_shift=g0_shift or None, warn=False)
            if tuple(res.species) != self.names:
                raise RuntimeError("species order changed between solver calls")   # pragma: no cover
            amounts[sl] = res.amount_array
            feed_out[sl] = res.feed_array
            conv[sl] = res.converged
        return amounts, feed_out, conv

    def conversion(self, amounts, feed):
        k = self.names.index(self.key)
        with np.errstate(invalid="ignore", divide="ignore"):
            return (feed[..., k] - amounts[..., k]) / feed[..., k]

    def quantities(self, amounts, feed) -> np.ndarray:
        """(..., n_quantities): conversion of the key (if any), then gas mole fractions."""
        gas = np.where(self.gas_mask, amounts, 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            y = gas / gas.sum(axis=-1, keepdims=True)
        cols = [y[..., j] for j in np.flatnonzero(self.gas_mask)]
        if self.key is not None:
            cols.insert(0, self.conversion(amounts, feed))
        return np.stack(cols, axis=-1)

    def quantity_names(self) -> list[str]:
        names = [f"y {self.names[j]}" for j in np.flatnonzero(self.gas_mask)]
        if self.key is not None:
            names.insert(0, f"conversion {self.key}")
        return names


def batched_system(feed_by_state: np.ndarray, names, gas_mask, *, key, reactions, gas_model, database,
                   binary_interaction) -> BatchedSystem:
    """The system of ``names`` with one feed row per state (feed_by_state (p, n_species)
    [mol]; species never fed are left out of the feed mapping)."""
    fa = feed_by_state.reshape(-1, len(names))
    feed = {names[j]: fa[:, j].copy() for j in range(len(names)) if np.any(fa[:, j] > 0)}
    return BatchedSystem(tuple(names), feed, gas_mask, key, tuple(reactions or ()), gas_model, database, binary_interaction)


def g_steps(T: np.ndarray) -> np.ndarray:
    return G_STEP * R * np.asarray(T, dtype=float)


def output_gibbs_derivatives(system: BatchedSystem, T, P) -> np.ndarray:
    """Central differences ∂Y/∂g°_j at flat states T, P (p,): shape (p, n_q, ns) [per J/mol]."""
    T = np.asarray(T, dtype=float)
    p, ns = T.size, len(system.names)
    h = g_steps(T)                                       # (p,)
    sign = np.array([1.0, -1.0])
    # rows: (species j, sign, state)
    shift = np.zeros((ns, 2, p, ns))
    for j in range(ns):
        shift[j, :, :, j] = sign[:, None] * h[None, :]
    state = np.broadcast_to(np.arange(p), (ns, 2, p)).reshape(-1)
    amounts, feed, _ = system.solve(np.broadcast_to(T, (ns, 2, p)).reshape(-1),
                                    np.broadcast_to(P, (ns, 2, p)).reshape(-1), state,
                                    shift.reshape(-1, ns))
    Y = system.quantities(amounts, feed).reshape(ns, 2, p, -1)
    d = (Y[:, 0] - Y[:, 1]) / (2.0 * h[None, :, None])    # (ns, p, nq)
    return np.moveaxis(d, 0, -1)                           # (p, nq, ns)
