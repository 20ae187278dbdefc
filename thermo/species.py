"""Species records: identity, composition, phase, standard-state model, critical constants."""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Union

import numpy as np

from .models import R, FormationDataModel, Nasa7Polynomial, Nasa7Table

ThermoModel = Union[Nasa7Polynomial, FormationDataModel]

GAS = "gas"
CONDENSED_PHASES = ("solid", "liquid")


class ExtrapolationWarning(UserWarning):
    """A temperature lies outside the range over which a species' data were fitted."""


@dataclass(frozen=True)
class CriticalConstants:
    """Critical temperature Tc [K], critical pressure Pc [Pa], acentric factor omega [-]."""

    Tc: float
    Pc: float
    omega: float
    reference: str = ""


@dataclass(frozen=True)
class Species:
    """One chemical species in one phase, with its standard-state thermodynamics.

    Parameters
    ----------
    name : str
        Name used in reactions and feeds (``"NH3"``, ``"C(gr)"``).
    formula : str
        Chemical formula.
    elements : dict[str, float]
        Element counts per molecule.
    phase : str
        ``"gas"``, ``"solid"`` or ``"liquid"`` (condensed species are pure phases).
    molar_mass : float
        [g/mol].
    model : Nasa7Polynomial | FormationDataModel
        Standard-state model on a 1 bar standard state.
    critical : CriticalConstants | None
        Needed only for real-gas calculations.
    reference : str
        Full citation of the thermodynamic data.
    """

    name: str
    formula: str
    elements: dict
    phase: str
    molar_mass: float
    model: ThermoModel = field(repr=False)
    critical: CriticalConstants | None = None
    reference: str = ""
    common_name: str = ""
    aliases: tuple = ()
    data_note: str = ""
    uncertainty: dict | None = None

    @property
    def is_gas(self) -> bool:
        return self.phase == GAS

    @property
    def T_min(self) -> float:
        """Lowest temperature of the data [K]."""
        return self.model.T_min

    @property
    def T_max(self) -> float:
        """Highest temperature of the data [K]."""
        return self.model.T_max

    def valid_at(self, T):
        """True where T [K] lies inside the data range [T_min - 2 K, T_max] (the 2 K margin
        lets fits starting at 300 K serve the 298.15 K reference state).

        A condensed phase outside its range must not be reported as present: its record may
        describe a phase that does not exist there (FeO(s) below 843 K, see
        ``data/README.md``), so a solver excludes it, or flags the state, where this is False.

        Parameters
        ----------
        T : float | ndarray  temperature [K]

        Returns
        -------
        bool | ndarray of bool, the shape of T

        >>> from eqdesign.thermo import bundled_database
        >>> bundled_database()["wustite"].valid_at([800.0, 900.0]).tolist()
        [False, True]
        """
        T = np.asarray(T, dtype=float)
        inside = (T >= self.T_min - 2.0) & (T <= self.T_max + 1e-9)
        return bool(inside) if inside.ndim == 0 else inside

    def check_temperature(self, T) -> bool:
        """Warn (ExtrapolationWarning, once per species and side) when T leaves the data range.

        Returns True when every temperature lies inside the range.
        """
        T = np.asarray(T, dtype=float)
        inside = True
        lo, hi = self.T_min, self.T_max
        # Many NASA fits start at 300 K and are, by the fits' own construction, used at the
        # 298.15 K reference state; a 2 K margin keeps that silent.
        if np.any(T < lo - 2.0):
            inside = False
            warnings.warn(f"{self.name}: temperatures below {lo:g} K, the lower end of its data "
                          f"range ({lo:g}-{hi:g} K); values there are extrapolated",
                          ExtrapolationWarning, stacklevel=3)
        if np.any(T > hi + 1e-9):
            inside = False
            warnings.warn(f"{self.name}: temperatures above {hi:g} K, the upper end of its data "
                          f"range ({lo:g}-{hi:g} K); values there are extrapolated",
                          ExtrapolationWarning, stacklevel=3)
        return inside

    def heat_capacity(self, T):
        """Standard molar heat capacity cp° [J/(mol K)] at T [K]."""
        self.check_temperature(T)
        return self.model.heat_capacity(T)

    def enthalpy(self, T):
        """Standard molar enthalpy h° [J/mol] (h°(298.15 K) = ΔfH°) at T [K]."""
        self.check_temperature(T)
        return self.model.enthalpy(T)

    def entropy(self, T):
        """Standard molar entropy s° [J/(mol K)] at T [K] and 1 bar."""
        self.check_temperature(T)
        return self.model.entropy(T)

    def gibbs(self, T):
        """Standard molar Gibbs energy g° = h° - T s° [J/mol] at T [K]."""
        self.check_temperature(T)
        return R * np.asarray(T, dtype=float) * self.model.gibbs_RT(T)

    def gibbs_RT(self, T):
        """Dimensionless standard Gibbs energy g°/RT at T [K]."""
        self.check_temperature(T)
        return self.model.gibbs_RT(T)


def standard_gibbs_RT(species, T) -> np.ndarray:
    """g°/RT of several species at once, shape (len(T), len(species)).

    NASA polynomials are evaluated together (:class:`~eqdesign.thermo.models.Nasa7Table`);
    other models species by species.  Warns like
    :meth:`Species.check_temperature` for temperatures outside a species' range.

    Parameters
    ----------
    species : sequence of Species
    T : ndarray, shape (p,)
        Temperatures [K].
    """
    T = np.asarray(T, dtype=float).reshape(-1)
    if T.size > 64:
        # sweeps repeat temperatures (a T x P grid has few distinct ones): evaluate each once
        unique, inverse = np.unique(T, return_inverse=True)
        if unique.size <= T.size // 2:
            return standard_gibbs_RT(species, unique)[inverse.reshape(-1)]
    out = np.empty((T.size, len(species)))
    if T.size == 0:
        return out
    t_lo, t_hi = T.min(), T.max()
    nasa = []
    for j, sp in enumerate(species):
        if t_lo < sp.T_min - 2.0 or t_hi > sp.T_max + 1e-9:
            sp.check_temperature(T)
        if isinstance(sp.model, Nasa7Polynomial):
            nasa.append(j)
        else:
            out[:, j] = sp.model.gibbs_RT(T)
    if nasa:
        out[:, nasa] = Nasa7Table.from_polynomials([species[j].model for j in nasa]).gibbs_RT(T)
    return out
