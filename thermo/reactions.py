"""Reactions written as text, their standard thermodynamics and the equilibrium constant K(T).

From species data (Gibbs route)::

    ΔrG°(T) = Σ ν_i g°_i(T),   K(T) = exp(-ΔrG°(T) / RT)

on the 1 bar standard state (gases: activity p_i / 1 bar; pure condensed phases: 1).

From reaction-level data (:class:`ReactionLevelData`) the integrated van 't Hoff relation
``d ln K / dT = ΔrH° / RT²`` with ΔrH° either constant or corrected with ΔrCp by Kirchhoff's
law ``dΔrH°/dT = ΔrCp``.
"""
from __future__ import annotations

import functools
import re
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Mapping

import numpy as np

from .database import SpeciesDatabase, UnknownSpeciesError
from .models import P_STANDARD, R, T_REF, EnthalpyEntropyModel, FormationDataModel
from .units import to_kelvin, to_pascal


class ReactionError(ValueError):
    """A reaction string cannot be read, or its elements do not balance."""


def absolute_temperature(T) -> np.ndarray:
    """T [K] as a float array, refused (ReactionError) unless finite and above 0 K.

    K(T) = exp(-ΔrG°/RT) has no meaning at or below absolute zero, and a NaN temperature
    would silently give a NaN constant.

    Examples
    --------
    >>> absolute_temperature("25 degC")
    array(298.15)
    >>> absolute_temperature(0.0)
    Traceback (most recent call last):
    ...
    eqdesign.thermo.reactions.ReactionError: T must be finite and above 0 K for an equilibrium constant, got 0.0
    """
    arr = np.asarray(to_kelvin(T), dtype=float)
    if np.any(~np.isfinite(arr)) or np.any(arr <= 0):
        raise ReactionError(f"T must be finite and above 0 K for an equilibrium constant, got {T!r}")
    return arr


@functools.lru_cache(maxsize=1)
def bundled_database() -> SpeciesDatabase:
    """The bundled species database, read once per process (it is immutable)."""
    return SpeciesDatabase.bundled()


_ARROW = re.compile(r"\s*(?:<=>|<->|⇌|=)\s*")
_TERM_SPLIT = re.compile(r"\s+\+\s+")
_COEFF_SPACED = re.compile(r"^(\d+(?:\.\d+)?(?:/\d+)?)\s+(\S.*)$")
_COEFF_JOINED = re.compile(r"^(\d+(?:\.\d+)?(?:/\d+)?)([A-Z(].*)$")


def _number(text: str) -> float:
    return float(Fraction(text)) if "/" in text else float(text)


def parse_side(side: str, database: SpeciesDatabase | None, text: str) -> dict[str, float]:
    """Species name -> coefficient for one side of a reaction string."""
    terms = {}
    for term in _TERM_SPLIT.split(side.strip()):
        term = term.strip()
        if not term:
            raise ReactionError(f"reaction {text!r}: empty term (a stray '+'?)")
        coeff, name = 1.0, term
        m = _COEFF_SPACED.match(term)
        if m:
            coeff, name = _number(m.group(1)), m.group(2).strip()
        elif database is None or term not in database:
            m = _COEFF_JOINED.match(term)
            if m:
                coeff, name = _number(m.group(1)), m.group(2)
        if coeff <= 0:
            raise ReactionError(f"reaction {text!r}: coefficient of {name} must be positive")
        terms[name] = terms.get(name, 0.0) + coeff
    return terms


def reaction_terms(text: str, database: SpeciesDatabase | None = None) -> dict[str, float]:
    """Signed coefficients of a reaction text, names as written (not resolved).

    Reactants are negative, products positive; ``=``, ``<=>``, ``<->`` and ``⇌`` separate
    the sides.  Names are not looked up, so a species not yet in ``database`` may appear.

    >>> reaction_terms("N2 + 3 H2 ⇌ 2 NH3")
    {'N2': -1.0, 'H2': -3.0, 'NH3': 2.0}
    """
    parts = _ARROW.split(text.strip())
    if len(parts) != 2 or not parts[0].strip() or not parts[1].strip():
        raise ReactionError(f"reaction {text!r}: write it as 'reactants = products', "
                            "e.g. 'N2 + 3 H2 = 2 NH3'")
    terms: dict[str, float] = {}
    for sign, side in ((-1.0, parts[0]), (1.0, parts[1])):
        for name, coeff in parse_side(side, database, text).items():
            terms[name] = terms.get(name, 0.0) + sign * coeff
    return terms


@dataclass(frozen=True)
class Reaction:
    """A balanced reaction between database species.

    Attributes
    ----------
    text : str
        The reaction as written by the user.
    species : tuple[Species, ...]
        Species taking part, in order of appearance.
    coefficients : ndarray, shape (n_species,)
        Stoichiometric coefficients ν_i (negative for reactants).

    Examples
    --------
    >>> rxn = Reaction.parse("N2 + 3 H2 = 2 NH3")
    >>> rxn.delta_n_gas
    -2.0
    """

    text: str
    species: tuple
    coefficients: np.ndarray = field(repr=False)

    @classmethod
    def parse(cls, text: str, database: SpeciesDatabase | None = None) -> "Reaction":
        """Read ``"N2 + 3 H2 = 2 NH3"`` (also ``<=>``), resolve names, check the element balance."""
        database = database or bundled_database()
        stoich: dict[str, float] = {}
        for name, coeff in reaction_terms(text, database).items():
            try:
                resolved = database.resolve(name)
            except UnknownSpeciesError as exc:
                raise ReactionError(f"reaction {text!r}: {exc}") from None
            stoich[resolved] = stoich.get(resolved, 0.0) + coeff
        stoich = {k: v for k, v in stoich.items() if v != 0.0}
        species = tuple(database[name] for name in stoich)
        coefficients = np.array(list(stoich.values()), dtype=float)
        check_balance(text, species, coefficients)
        coefficients.setflags(write=False)
        return cls(text=text.strip(), species=species, coefficients=coefficients)

    # ------------------------------------------------------------ bookkeeping
    @property
    def names(self) -> list[str]:
        return [sp.name for sp in self.species]

    @property
    def stoichiometry(self) -> dict[str, float]:
        """Species name -> ν (products positive, reactants negative)."""
        return dict(zip(self.names, self.coefficients.tolist()))

    @property
    def delta_n_gas(self) -> float:
        """Change in moles of gas Δn = Σ ν_i over gaseous species."""
        return float(sum(nu for sp, nu in zip(self.species, self.coefficients) if sp.is_gas))

    @property
    def T_range(self) -> tuple[float, float]:
        """Temperature range [K] covered by the data of every species."""
        return max(sp.T_min for sp in self.species), min(sp.T_max for sp in self.species)

    # ------------------------------------------------------------ thermodynamics
    def _sum(self, prop: str, T):
        T = np.asarray(to_kelvin(T), dtype=float)
        total = np.zeros_like(T)
        for sp, nu in zip(self.species, self.coefficients):
            total = total + nu * getattr(sp, prop)(T)
        return total

    def delta_cp(self, T):
        """ΔrCp°(T) [J/(mol K)] per mole of reaction as written."""
        return _float_or_array(self._sum("heat_capacity", T))

    def delta_h(self, T):
        """ΔrH°(T) [J/mol]."""
        return _float_or_array(self._sum("enthalpy", T))

    def delta_s(self, T):
        """ΔrS°(T) [J/(mol K)] on the 1 bar standard state."""
        return _float_or_array(self._sum("entropy", T))

    def delta_g(self, T):
        """ΔrG°(T) [J/mol] on the 1 bar standard state."""
        return _float_or_array(self._sum("gibbs", T))

    def ln_K(self, T):
        """Natural logarithm of the dimensionless equilibrium constant at T [K] (finite, > 0)."""
        T = absolute_temperature(T)
        return _float_or_array(-self._sum("gibbs_RT", T))

    def equilibrium_constant(self, T):
        """Dimensionless K(T) on the 1 bar standard state."""
        return _float_or_array(np.exp(np.asarray(self.ln_K(T))))

    def reaction_quotient(self, mole_fractions: Mapping[str, float], P):
        """Reaction quotient Q of a gas composition at pressure P (ideal gas, 1 bar standard state).

        Gas activities are y_i P / 1 bar; pure condensed species have activity 1.
        """
        return reaction_quotient(self, mole_fractions, P)


def check_balance(text: str, species, coefficients) -> None:
    """Raise :class:`ReactionError` naming each element that does not balance."""
    totals: dict[str, float] = {}
    for sp, nu in zip(species, coefficients):
        for el, n in sp.elements.items():
            totals[el] = totals.get(el, 0.0) + nu * n
    bad = {el: v for el, v in totals.items() if abs(v) > 1e-9}
    if bad:
        detail = ", ".join(f"{el} {'+' if v > 0 else ''}{v:g}" for el, v in sorted(bad.items()))
        raise ReactionError(f"reaction {text!r} does not balance: products minus reactants = {detail}")


def _float_or_array(x):
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


@dataclass(frozen=True)
class ReactionLevelData:
    """K(T) of a reaction known only by reaction-level data (van 't Hoff / Kirchhoff).

    ``ln K(T) = -ΔrH°(T)/RT + ΔrS°(T)/R`` with
    ``ΔrH°(T) = ΔrH°(T_ref) + ∫ΔrCp dT`` and ``ΔrS°(T) = ΔrS°(T_ref) + ∫ΔrCp/T dT``.
    With ΔrCp = 0 this is the integrated van 't Hoff equation
    ``ln K(T) = ln K(T_ref) - ΔrH°/R (1/T - 1/T_ref)``.

    Parameters
    ----------
    delta_h : float
        ΔrH° at T_ref [J/mol].
    delta_s : float
        ΔrS° at T_ref [J/(mol K)] on the 1 bar standard state.
    T_ref : float
        Reference temperature [K].
    delta_cp : tuple
        ΔrCp polynomial ``(c0, c1, c2, c3, c_2)`` as in :class:`FormationDataModel`
        [J/(mol K)]; ``(0,)`` for constant ΔrH°.
    T_bounds : tuple
        Range over which the data are trusted [K].
    delta_n_gas : float
        Δn of gas, for Kp/Kc/Kx conversions.

    Examples
    --------
    >>> data = ReactionLevelData.from_K(K_ref=2.0, T_ref=500.0, delta_h=-50e3)
    >>> round(data.equilibrium_constant(500.0), 12)
    2.0
    """

    delta_h: float
    delta_s: float
    T_ref: float = T_REF
    delta_cp: tuple = (0.0,)
    T_bounds: tuple = (200.0, 3000.0)
    delta_n_gas: float = 0.0
    text: str = ""

    @classmethod
    def from_K(cls, K_ref: float, T_ref: float, delta_h: float, delta_cp=(0.0,), **kw):
        """Build from K at T_ref and ΔrH° [J/mol] (ΔrS° = R ln K + ΔrH°/T_ref)."""
        delta_s = R * np.log(K_ref) + delta_h / T_ref
        return cls(delta_h=float(delta_h), delta_s=float(delta_s), T_ref=float(T_ref),
                   delta_cp=tuple(delta_cp), **kw)

    def _model(self) -> FormationDataModel:
        # A FormationDataModel integrates from 298.15 K; shift so T_ref is the anchor.
        return FormationDataModel(0.0, 0.0, self.delta_cp, (min(self.T_bounds[0], 1.0), max(self.T_bounds[1], 1e4)))

    def delta_h_at(self, T):
        """ΔrH°(T) [J/mol]."""
        T = np.asarray(to_kelvin(T), dtype=float)
        m = self._model()
        return _float_or_array(self.delta_h + m.enthalpy(T) - m.enthalpy(self.T_ref))

    def delta_s_at(self, T):
        """ΔrS°(T) [J/(mol K)]."""
        T = np.asarray(to_kelvin(T), dtype=float)
        m = self._model()
        return _float_or_array(self.delta_s + m.entropy(T) - m.entropy(self.T_ref))

    def delta_g_at(self, T):
        """ΔrG°(T) [J/mol]."""
        T = np.asarray(to_kelvin(T), dtype=float)
        return _float_or_array(np.asarray(self.delta_h_at(T)) - T * np.asarray(self.delta_s_at(T)))

    def ln_K(self, T):
        """Natural logarithm of the dimensionless equilibrium constant at T [K] (finite, > 0)."""
        T = absolute_temperature(T)
        return _float_or_array(-np.asarray(self.delta_g_at(T)) / (R * T))

    def equilibrium_constant(self, T):
        """Dimensionless K(T) on the 1 bar standard state."""
        return _float_or_array(np.exp(np.asarray(self.ln_K(T))))


@dataclass(frozen=True)
class ReactionDerivedModel(EnthalpyEntropyModel):
    """Standard-state model of a species known only through one reaction's data.

    For ``Σ ν_i A_i + ν_X X = 0`` with reaction-level data (``ReactionLevelData``:
    ΔrH°, ΔrS° and ΔrCp° about a reference temperature), the species' properties follow
    from Hess's law, ``h°_X = (ΔrH° - Σ ν_i h°_i) / ν_X`` and likewise for s° and cp°,
    so that the reaction's K(T) is reproduced exactly by the Gibbs route.

    Parameters
    ----------
    level_data : ReactionLevelData
    partners : tuple of (Species, float)
        The other species of the reaction and their coefficients ν_i.
    nu : float
        Coefficient ν_X of the species (positive for a product).
    """

    level_data: ReactionLevelData
    partners: tuple
    nu: float

    @property
    def T_bounds(self) -> tuple:
        lo = max([self.level_data.T_bounds[0]] + [sp.T_min for sp, _ in self.partners])
        hi = min([self.level_data.T_bounds[1]] + [sp.T_max for sp, _ in self.partners])
        return (lo, hi)

    @property
    def T_min(self) -> float:
        return self.T_bounds[0]

    @property
    def T_max(self) -> float:
        return self.T_bounds[1]

    def _combine(self, total, prop: str, T):
        others = sum(nu * getattr(sp.model, prop)(T) for sp, nu in self.partners)
        return (np.asarray(total, dtype=float) - others) / self.nu

    def heat_capacity(self, T):
        T = np.asarray(T, dtype=float)
        dcp = FormationDataModel(0.0, 0.0, self.level_data.delta_cp, (1.0, 1e4)).heat_capacity(T)
        return self._combine(dcp, "heat_capacity", T)

    def enthalpy(self, T):
        T = np.asarray(T, dtype=float)
        return self._combine(self.level_data.delta_h_at(T), "enthalpy", T)

    def entropy(self, T):
        T = np.asarray(T, dtype=float)
        return self._combine(self.level_data.delta_s_at(T), "entropy", T)

    def shifted_entropy(self, delta_s_R: float) -> "ReactionDerivedModel":
        ld = self.level_data
        shifted = ReactionLevelData(ld.delta_h, ld.delta_s + self.nu * delta_s_R * R, ld.T_ref, ld.delta_cp,
                                    ld.T_bounds, ld.delta_n_gas, ld.text)
        return ReactionDerivedModel(shifted, self.partners, self.nu)


# --------------------------------------------------------------- conversions
def K_to_Kp(K, delta_n: float, pressure_unit: float = P_STANDARD):
    """Kp in (pressure_unit)^Δn from the dimensionless K on the 1 bar standard state.

    ``Kp = K (P° / unit)^Δn``; e.g. ``pressure_unit=101325`` gives Kp in atm^Δn.

    >>> round(K_to_Kp(1.0, -2, pressure_unit=1e5), 12)
    1.0
    """
    return K * (P_STANDARD / pressure_unit) ** delta_n


def Kp_to_K(Kp, delta_n: float, pressure_unit: float = P_STANDARD):
    """Dimensionless K on the 1 bar standard state from Kp in (pressure_unit)^Δn; the inverse
    of :func:`K_to_Kp`: ``K = Kp (unit / P°)^Δn``.

    >>> round(Kp_to_K(K_to_Kp(3.0, -2, pressure_unit=101325.0), -2, pressure_unit=101325.0), 12)
    3.0
    """
    return Kp * (pressure_unit / P_STANDARD) ** delta_n


def Kp_to_Kc(Kp_pascal, delta_n: float, T):
    """Kc in (mol/m³)^Δn from Kp in Pa^Δn: ``Kc = Kp / (RT)^Δn`` (ideal gas)."""
    T = to_kelvin(T)
    return Kp_pascal / (R * T) ** delta_n


def Kc_to_Kp(Kc, delta_n: float, T):
    """Kp in Pa^Δn from Kc in (mol/m³)^Δn: ``Kp = Kc (RT)^Δn``."""
    T = to_kelvin(T)
    return Kc * (R * T) ** delta_n


def K_to_Kx(K, delta_n: float, P):
    """Kx (mole-fraction quotient at equilibrium) at pressure P: ``Kx = K (P/P°)^-Δn``."""
    P = to_pascal(P)
    return K * (P / P_STANDARD) ** (-delta_n)


def Kx_to_K(Kx, delta_n: float, P):
    """Dimensionless K from Kx at pressure P, the inverse of :func:`K_to_Kx`: ``K = Kx (P/P°)^Δn``."""
    P = to_pascal(P)
    return Kx * (P / P_STANDARD) ** delta_n


def reaction_quotient(reaction: Reaction, mole_fractions: Mapping[str, float], P):
    """Q = Π a_i^ν_i with a_i = y_i P / 1 bar for gases and 1 for pure condensed phases."""
    P = np.asarray(to_pascal(P), dtype=float)
    lnQ = np.zeros_like(P)
    for sp, nu in zip(reaction.species, reaction.coefficients):
        if not sp.is_gas:
            continue
        y = np.asarray(mole_fractions.get(sp.name, 0.0), dtype=float)
        with np.errstate(divide="ignore"):
            lnQ = lnQ + nu * np.log(y * P / P_STANDARD)
    return _float_or_array(np.exp(lnQ))


def shift_direction(Q, K, rtol: float = 1e-6) -> str:
    """Which way a mixture will react: ``"forward"`` (Q < K), ``"reverse"`` (Q > K) or
    ``"at equilibrium"`` (Q = K within ``rtol``).

    >>> shift_direction(0.5, 2.0)
    'forward'
    """
    if abs(Q - K) <= rtol * max(abs(K), 1e-300):
        return "at equilibrium"
    return "forward" if Q < K else "reverse"


def equilibrium_constant(reaction: str | Reaction, T, *, database: SpeciesDatabase | None = None):
    """Dimensionless equilibrium constant K(T) of a reaction on the 1 bar standard state.

    K = exp(-ΔrG°(T)/RT), ΔrG° = Σ ν_i g°_i(T) from the species database (NASA
    7-coefficient polynomials of McBride, Gordon and Reno, NASA TM-4513, 1993, unless the
    database says otherwise).

    Parameters
    ----------
    reaction : str | Reaction
        E.g. ``"N2 + 3 H2 = 2 NH3"``.
    T : float | array_like | str | pint.Quantity
        Temperature [K], or a quantity such as ``"450 degC"``; finite and above 0 K
        (ReactionError otherwise).
    database : SpeciesDatabase, optional
        Defaults to the bundled database.

    Returns
    -------
    float | ndarray
        K, a float for scalar T and an ndarray otherwise.

    Examples
    --------
    NIST-JANAF (Chase 1998) gives ΔfG°(NH3, 700 K) = 27.190 kJ/mol (from memory), so
    K = exp(-2 × 27190 / (R × 700)) = 8.74e-5 for ``N2 + 3 H2 = 2 NH3``; the TM-4513
    data give 0.4 % more:

    >>> f"{equilibrium_constant('N2 + 3 H2 = 2 NH3', 700):.3e}"
    '8.778e-05'
    """
    rxn = reaction if isinstance(reaction, Reaction) else Reaction.parse(reaction, database)
    return rxn.equilibrium_constant(absolute_temperature(T))
