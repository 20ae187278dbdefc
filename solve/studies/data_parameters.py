"""The uncertain data of an equilibrium problem as a parameter map.

Which thermodynamic data carry an uncertainty (ΔfH° and S° per species, or ΔrH° and ΔrS° for
species defined by reaction data), their standard uncertainties (bundled defaults, the
database's own values or user overrides) and how a draw of them shifts each species'
standard Gibbs energy g°(T) = δH − T δS.
"""
from __future__ import annotations
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import numpy as np

from ...thermo.data_uncertainty import (REACTION_ENTHALPY, UncertainDatum, UncertaintyDefaults,
                                        UncertaintyInputError, bundled_defaults, kinds_of,
                                        normalise_overrides, species_uncertainty)
from ...thermo.database import SpeciesDatabase
from ...thermo.reactions import bundled_database
from ...thermo.species import Species


# =========================================================================== parameter map
@dataclass(frozen=True)
class ParameterMap:
    """How the uncertain data move the standard Gibbs energies of a system's species.

    ``δg°_j(T) = Σ_k θ_k coefficients[k, j] × (1 for enthalpies, −T for entropies)``, where
    θ_k is the error of datum k.  A species defined by reaction-level data takes
    ``(δΔrH° − T δΔrS°)/ν_X − Σ_i (ν_i/ν_X) δg°_i`` (Hess's law over its partners).

    Attributes
    ----------
    species : tuple[str, ...]
        The system's species, in the column order of ``coefficients``.
    data : tuple[UncertainDatum, ...]
        The uncertain data, in the row order of ``coefficients``.
    coefficients : ndarray, shape (n_data, n_species)
    """

    species: tuple
    data: tuple
    coefficients: np.ndarray = field(repr=False)

    @property
    def u(self) -> np.ndarray:
        """Standard uncertainties, shape (n_data,) [J/mol or J/(mol K)]."""
        return np.array([d.u for d in self.data], dtype=float)

    @property
    def is_entropy(self) -> np.ndarray:
        return np.array([d.is_entropy for d in self.data], dtype=bool)

    def shift_parts(self, theta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(A, B) with ``δg° = A + T B`` [J/mol], both shape (..., n_species), for data errors
        ``theta`` of shape (..., n_data)."""
        theta = np.asarray(theta, dtype=float)
        e = self.is_entropy
        A = (theta * ~e) @ self.coefficients
        B = -(theta * e) @ self.coefficients
        return A, B

    def chain_factors(self, T) -> np.ndarray:
        """∂g°_j/∂θ_k at temperatures T [K]: shape (*shape(T), n_data, n_species)."""
        T = np.asarray(T, dtype=float)
        f = np.where(self.is_entropy, -T[..., None], 1.0)          # (..., n_data)
        return f[..., None] * self.coefficients


def parameter_map(species: Sequence[str], *, database: SpeciesDatabase | None = None,
                  overrides: Mapping | None = None, defaults: UncertaintyDefaults | None = None) -> ParameterMap:
    """The uncertain data of a system of species and how they shift each species' g°.

    Parameters
    ----------
    species : sequence of str
        The system's species (database names or aliases).
    database : SpeciesDatabase, optional
        Defaults to the bundled database.
    overrides : mapping, optional
        The user's own standard uncertainties, ``{species: {kind: u}}`` with ``kind`` one of
        ``formation_enthalpy`` [J/mol], ``entropy`` [J/(mol K)] (``reaction_enthalpy``,
        ``reaction_entropy`` for a species defined by reaction-level data); numbers in SI or
        strings with units (``"0.4 kJ/mol"``).
    defaults : UncertaintyDefaults, optional
        Defaults to :meth:`UncertaintyDefaults.bundled`.

    Returns
    -------
    ParameterMap

    Examples
    --------
    >>> pm = parameter_map(["N2", "H2", "NH3"])
    >>> [(d.label, d.u) for d in pm.data]
    [('ΔfH°(N2)', 0.0), ('S°(N2)', 0.004), ('ΔfH°(H2)', 0.0), ('S°(H2)', 0.003),
     ('ΔfH°(NH3)', 350.0), ('S°(NH3)', 0.05)]
    """
    db = database or bundled_database()
    names = []
    for n in species:
        r = db.resolve(n)
        if r not in names:
            names.append(r)
    user = normalise_overrides(overrides, db)
    defaults = defaults or bundled_defaults()
    order: list[tuple[str, str]] = []
    data: dict[tuple[str, str], UncertainDatum] = {}
    columns: list[dict] = []

    def expand(sp: Species, coef: float, acc: dict, depth: int = 0):
        if depth > 20:
            raise UncertaintyInputError(f"species {sp.name}: reaction-level definitions nest too deeply")
        kinds = kinds_of(sp)
        if (sp.name, kinds[0]) not in data:
            for k, d in species_uncertainty(sp, overrides=user.get(sp.name), defaults=defaults).items():
                data[(sp.name, k)] = d
                order.append((sp.name, k))
        scale = float(sp.model.nu) if kinds[0] == REACTION_ENTHALPY else 1.0
        for k in kinds:
            acc[(sp.name, k)] = acc.get((sp.name, k), 0.0) + coef / scale
        if kinds[0] == REACTION_ENTHALPY:
            for partner, nu_i in sp.model.partners:
                expand(partner, -coef * float(nu_i) / float(sp.model.nu), acc, depth + 1)

    for n in names:
        acc: dict = {}
        expand(db.species[n], 1.0, acc)
        columns.append(acc)
    C = np.zeros((len(order), len(names)))
    for j, acc in enumerate(columns):
        for key, c in acc.items():
            C[order.index(key), j] += c
    C.setflags(write=False)
    return ParameterMap(species=tuple(names), data=tuple(data[k] for k in order), coefficients=C)
