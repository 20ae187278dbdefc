"""Uncertainty of ln K(T) of a reaction from the uncertainty of its data (GUM law of
propagation, JCGM 100:2008): from the species' ΔfH° and S°, or from reaction-level
ΔrH° and ΔrS° with their correlation."""
from __future__ import annotations
from dataclasses import dataclass, field
from typing import Mapping

import numpy as np

from ...thermo.data_uncertainty import (REACTION_ENTHALPY, REACTION_ENTROPY, UncertainDatum,
                                        UncertaintyDefaults, UncertaintyInputError, read_u)
from ...thermo.database import SpeciesDatabase
from ...thermo.models import R
from ...thermo.reactions import Reaction, ReactionLevelData, bundled_database
from ...thermo.units import to_kelvin
from .data_parameters import parameter_map
from .uncertainty_statistics import coverage_factor, rank_data


# =========================================================================== K(T)
@dataclass(frozen=True)
class LnKUncertainty:
    """ln K(T) of a reaction with its standard uncertainty from the data.

    Attributes
    ----------
    T : float | ndarray
        Temperature [K].
    ln_K : float | ndarray
        ln K with the nominal data [-].
    standard_uncertainty : float | ndarray
        u(ln K) [-] (exact: ln K is linear in the data).
    K_lower, K_upper : float | ndarray
        exp(ln K ∓ z u) at coverage ``level`` [-].
    level : float
    sensitivity : ndarray, shape (*shape(T), n_data)
        ∂ ln K/∂datum [per J/mol or per J/(mol K)].
    data : tuple[UncertainDatum, ...]
    """

    T: object
    ln_K: object
    standard_uncertainty: object
    K_lower: object
    K_upper: object
    level: float
    sensitivity: np.ndarray = field(repr=False)
    data: tuple = field(repr=False)

    def ranking(self, *, at=None, by: str = "datum") -> tuple:
        """Data ranked by their share of Var ln K (averaged over T unless ``at`` is given)."""
        c = self.sensitivity if at is None else self.sensitivity[at]
        return rank_data(self.data, np.reshape(c, (-1, len(self.data))), np.array([d.u for d in self.data]), by)


def ln_K_uncertainty(reaction: str | Reaction, T, *, database: SpeciesDatabase | None = None,
                     overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None,
                     level: float = 0.95) -> LnKUncertainty:
    """Standard uncertainty of ln K(T) of a reaction from its species' data.

    ``δ ln K = −Σ_i ν_i δg°_i/(RT)`` with ``δg°_i = δΔfH°_i − T δS°_i``; for independent data
    ``u²(ln K) = Σ_i ν_i² (u²(ΔfH°_i)/(RT)² + u²(S°_i)/R²)`` (species defined by
    reaction-level data contribute through their ΔrH°, ΔrS° and partners).  Exact, since
    ln K is linear in the data.

    Parameters
    ----------
    reaction : str | Reaction
    T : float | array_like | str
        Temperature [K].
    database, overrides, defaults
        As for :func:`parameter_map`.
    level : float
        Coverage probability of the K interval [-].

    Returns
    -------
    LnKUncertainty

    Examples
    --------
    N2 + 3 H2 = 2 NH3 at 700 K: 2 × 350 J/mol (u(ΔfH°(NH3)), CODATA, from memory) over RT
    gives 0.1203; the entropies (2 × 0.05, 3 × 0.003, 0.004 J/(mol K)) over R add in quadrature:

    >>> r = ln_K_uncertainty("N2 + 3 H2 = 2 NH3", 700.0)
    >>> round(r.standard_uncertainty, 4)
    0.1209
    """
    db = database or bundled_database()
    rxn = reaction if isinstance(reaction, Reaction) else Reaction.parse(reaction, db)
    T = np.asarray(to_kelvin(T), dtype=float)
    pm = parameter_map(rxn.names, database=db, overrides=overrides, defaults=defaults)
    nu = np.array([rxn.stoichiometry[n] for n in pm.species])
    chain = pm.chain_factors(T)                                      # (..., nd, ns)
    sens = -(chain @ nu) / (R * T[..., None])                          # (..., nd)
    u = pm.u
    su = np.sqrt(((sens * u) ** 2).sum(axis=-1))
    lnK = np.asarray(rxn.ln_K(T), dtype=float)
    z = coverage_factor(level)
    f = (lambda a: float(a) if np.ndim(a) == 0 else a)   # noqa: E731
    return LnKUncertainty(T=f(T), ln_K=f(lnK), standard_uncertainty=f(su), K_lower=f(np.exp(lnK - z * su)),
                          K_upper=f(np.exp(lnK + z * su)), level=float(level), sensitivity=sens, data=pm.data)


def reaction_level_ln_K_uncertainty(data: ReactionLevelData, T, *, u_delta_h, u_delta_s, correlation: float = 0.0,
                                    level: float = 0.95) -> LnKUncertainty:
    """Standard uncertainty of ln K(T) from reaction-level data (van 't Hoff / Kirchhoff).

    ``ln K = −ΔrH°(T)/RT + ΔrS°(T)/R`` with ΔrCp taken as exact, so
    ``u²(ln K) = u²(ΔrH°)/(RT)² + u²(ΔrS°)/R² − 2 r u(ΔrH°) u(ΔrS°)/(R² T)`` (GUM, with
    correlation coefficient r between the two; fitted ΔrH° and ΔrS° are usually strongly
    positively correlated, r = 0 is then conservative).

    Parameters
    ----------
    data : ReactionLevelData
    T : float | array_like | str
        Temperature [K].
    u_delta_h : float | str
        u(ΔrH°) [J/mol] (or a quantity such as ``"2 kJ/mol"``).
    u_delta_s : float | str
        u(ΔrS°) [J/(mol K)].
    correlation : float
        Correlation coefficient of the ΔrH° and ΔrS° errors [-], from −1 to 1.
    level : float

    Returns
    -------
    LnKUncertainty
        ``data`` holds two :class:`UncertainDatum` entries (species ``data.text`` or
        ``"reaction"``); ``sensitivity`` their coefficients.

    Examples
    --------
    >>> d = ReactionLevelData.from_K(K_ref=2.0, T_ref=500.0, delta_h=-50e3)
    >>> r = reaction_level_ln_K_uncertainty(d, 500.0, u_delta_h=2000.0, u_delta_s=0.0)
    >>> round(r.standard_uncertainty, 4)                 # 2000 / (R × 500)
    0.4811
    """
    uh = read_u(u_delta_h, REACTION_ENTHALPY, "u_delta_h")
    us = read_u(u_delta_s, REACTION_ENTROPY, "u_delta_s")
    if not -1.0 <= correlation <= 1.0:
        raise UncertaintyInputError(f"correlation {correlation!r}: give a coefficient from -1 to 1")
    T = np.asarray(to_kelvin(T), dtype=float)
    cH = -1.0 / (R * T)
    cS = np.full_like(T, 1.0 / R)
    var = (cH * uh) ** 2 + (cS * us) ** 2 + 2.0 * correlation * cH * cS * uh * us
    su = np.sqrt(np.maximum(var, 0.0))
    lnK = np.asarray(data.ln_K(T), dtype=float)
    z = coverage_factor(level)
    label = data.text or "reaction"
    f = (lambda a: float(a) if np.ndim(a) == 0 else a)   # noqa: E731
    return LnKUncertainty(T=f(T), ln_K=f(lnK), standard_uncertainty=f(su), K_lower=f(np.exp(lnK - z * su)),
                          K_upper=f(np.exp(lnK + z * su)), level=float(level),
                          sensitivity=np.stack([cH, cS], axis=-1),
                          data=(UncertainDatum(label, REACTION_ENTHALPY, uh, "user"),
                                UncertainDatum(label, REACTION_ENTROPY, us, "user")))
