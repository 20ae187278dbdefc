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

    def reaction_quotient(self, mole_fractions: Mapping[str, float], P, *, normalise: bool = False,
                          database: SpeciesDatabase | None = None):
        """Reaction quotient Q of a gas composition at pressure P (ideal gas, 1 bar standard
        state); see the module function :func:`reaction_quotient` for the checks made."""
        return reaction_quotient(self, mole_fractions, P, normalise=normalise, database=database)


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
# Pressure and concentration units the conversions name in their unit strings [Pa], [mol/m³].
_PRESSURE_UNIT_NAMES = {1.0: "Pa", 1e3: "kPa", 1e5: "bar", 101325.0: "atm", 1e6: "MPa"}
_CONCENTRATION_UNIT_NAMES = {1.0: "mol/m³", 1e3: "mol/L"}


def _power_unit(base: str, delta_n: float) -> str:
    if delta_n == 0:
        return "1"
    exponent = f"{delta_n:g}"
    return f"{base}^{exponent}" if "/" not in base else f"({base})^{exponent}"


def Kp_unit(delta_n: float, pressure_unit: float = P_STANDARD) -> str:
    """Unit string of Kp for a reaction with gas-mole change Δn, e.g. ``"bar^-2"``.

    ``pressure_unit`` [Pa] is the pressure unit Kp is expressed in (``1e5`` bar, ``101325``
    atm, ``1`` Pa, ``1e3`` kPa, ``1e6`` MPa; other values give ``"(<value> Pa)^Δn"``).

    >>> Kp_unit(-2)
    'bar^-2'
    >>> Kp_unit(1, pressure_unit=101325.0)
    'atm^1'
    """
    name = _PRESSURE_UNIT_NAMES.get(float(pressure_unit), f"({float(pressure_unit):g} Pa)")
    return _power_unit(name, float(delta_n))


def Kc_unit(delta_n: float, concentration_unit: float = 1.0) -> str:
    """Unit string of Kc for a reaction with gas-mole change Δn, e.g. ``"(mol/m³)^-2"``.

    ``concentration_unit`` [mol/m³] is the concentration unit Kc is expressed in (``1``
    mol/m³, ``1e3`` mol/L; other values give ``"(<value> mol/m³)^Δn"``).

    >>> Kc_unit(-2)
    '(mol/m³)^-2'
    """
    name = _CONCENTRATION_UNIT_NAMES.get(float(concentration_unit),
                                         f"{float(concentration_unit):g} mol/m³")
    return _power_unit(name, float(delta_n))


def K_to_Kp(K, delta_n: float, pressure_unit: float = P_STANDARD):
    """Kp in (pressure_unit)^Δn from the dimensionless K on the 1 bar standard state.

    ``Kp = K (P° / unit)^Δn`` (ideal gas).  ``pressure_unit`` [Pa]: ``1e5`` (default) gives
    Kp in bar^Δn, ``101325`` in atm^Δn, ``1`` in Pa^Δn; :func:`Kp_unit` names it.

    >>> round(K_to_Kp(1.0, -2, pressure_unit=101325.0), 6)     # (1e5/101325)^-2
    1.026676
    """
    return K * (P_STANDARD / pressure_unit) ** delta_n


def Kp_to_K(Kp, delta_n: float, pressure_unit: float = P_STANDARD):
    """Dimensionless K (1 bar standard state) from Kp in (pressure_unit)^Δn: the inverse
    of :func:`K_to_Kp`, ``K = Kp (unit / P°)^Δn``.

    >>> Kp_to_K(K_to_Kp(3.0, 1.5, pressure_unit=101325.0), 1.5, pressure_unit=101325.0)
    3.0
    """
    return Kp / (P_STANDARD / pressure_unit) ** delta_n     # the same factor as K_to_Kp


def Kp_to_Kc(Kp, delta_n: float, T, pressure_unit: float = P_STANDARD, concentration_unit: float = 1.0):
    """Kc in (concentration_unit)^Δn from Kp in (pressure_unit)^Δn (ideal gas).

    ``Kc = Kp (p_unit / (R T c_unit))^Δn``: with the defaults Kp is in bar^Δn (what
    :func:`K_to_Kp` returns by default) and Kc in (mol/m³)^Δn; :func:`Kc_unit` names it.

    Parameters
    ----------
    Kp : float | ndarray   Kp [pressure_unit^Δn]
    delta_n : float        change in moles of gas Δn [-]
    T : float | str        temperature [K] or a quantity such as ``"450 degC"``
    pressure_unit : float  the pressure unit of Kp [Pa] (1e5: bar)
    concentration_unit : float  the concentration unit of Kc [mol/m³] (1e3: mol/L)
    """
    T = to_kelvin(T)
    return Kp * (pressure_unit / (R * T * concentration_unit)) ** delta_n


def Kc_to_Kp(Kc, delta_n: float, T, pressure_unit: float = P_STANDARD, concentration_unit: float = 1.0):
    """Kp in (pressure_unit)^Δn from Kc in (concentration_unit)^Δn: the exact inverse of
    :func:`Kp_to_Kc`, ``Kp = Kc (R T c_unit / p_unit)^Δn`` (defaults: bar, mol/m³)."""
    T = to_kelvin(T)
    return Kc / (pressure_unit / (R * T * concentration_unit)) ** delta_n    # the factor of Kp_to_Kc


def K_to_Kx(K, delta_n: float, P):
    """Kx (mole-fraction quotient at equilibrium, dimensionless) at pressure P [Pa or a
    quantity such as ``"30 bar"``]: ``Kx = K (P/P°)^-Δn`` (ideal gas)."""
    P = to_pascal(P)
    return K * (P / P_STANDARD) ** (-delta_n)


def Kx_to_K(Kx, delta_n: float, P):
    """Dimensionless K from Kx at pressure P: the inverse of :func:`K_to_Kx`."""
    P = to_pascal(P)
    return Kx / (P / P_STANDARD) ** (-delta_n)     # the factor of K_to_Kx


MOLE_FRACTION_SUM_TOLERANCE = 1e-6


def reaction_quotient(reaction, mole_fractions: Mapping[str, float], P, *, normalise: bool = False,
                      database: SpeciesDatabase | None = None):
    """Reaction quotient Q = Π a_i^ν_i of a gas mixture at pressure P (ideal gas, 1 bar
    standard state): a_i = y_i P / 1 bar for gases, 1 for pure condensed phases.

    Parameters
    ----------
    reaction : str | Reaction
    mole_fractions : mapping name -> float | ndarray
        Gas-phase mole fractions y_i [-] (names or aliases), one value or one array of
        states each.  Every gas species of the reaction must appear (0 where absent);
        other gases of the mixture (inerts) may appear too.  They must sum to 1 within
        1e-6 unless ``normalise=True``, which divides amounts (e.g. kmol/h) by their sum.
    P : float | ndarray | str
        Pressure [Pa] or a quantity such as ``"30 bar"``.
    normalise : bool
        Treat the values as amounts and divide by their sum.
    database : SpeciesDatabase, optional
        For parsing a reaction string and resolving names; the bundled one by default.

    Returns
    -------
    float | ndarray
        Q [-], a float for scalar input.

    >>> round(reaction_quotient("N2 + 3 H2 = 2 NH3", {"N2": 0.25, "hydrogen": 0.7, "NH3": 0.05}, 1e5), 6)
    0.029155
    """
    database = database or bundled_database()
    rxn = reaction if isinstance(reaction, Reaction) else Reaction.parse(reaction, database)
    y = {}
    for key, value in mole_fractions.items():
        try:
            name = database.resolve(str(key))
        except UnknownSpeciesError as exc:
            raise ReactionError(f"reaction quotient of {rxn.text!r}: {exc}") from None
        if name in y:
            raise ReactionError(f"reaction quotient of {rxn.text!r}: {key!r} and another entry are both "
                                f"{name}; give each species once")
        if not database[name].is_gas:
            raise ReactionError(f"reaction quotient of {rxn.text!r}: {name} is a condensed phase; give gas "
                                "mole fractions only (a pure condensed phase has activity 1)")
        arr = np.asarray(value, dtype=float)
        if np.any(arr < 0) or not np.all(np.isfinite(arr)):
            raise ReactionError(f"reaction quotient of {rxn.text!r}: the value for {key!r} must be finite "
                                "and not negative")
        y[name] = arr
    missing = [sp.name for sp in rxn.species if sp.is_gas and sp.name not in y]
    if missing:
        raise ReactionError(f"reaction quotient of {rxn.text!r}: no mole fraction given for "
                            f"{', '.join(missing)}; give every gas of the reaction (0 where absent)")
    total = sum(y.values())
    if normalise:
        if np.any(total <= 0):
            raise ReactionError(f"reaction quotient of {rxn.text!r}: the amounts sum to zero")
        y = {k: v / total for k, v in y.items()}
    elif np.any(np.abs(total - 1.0) > MOLE_FRACTION_SUM_TOLERANCE):
        worst = float(np.max(np.abs(np.asarray(total, dtype=float) - 1.0)) + 1.0)
        raise ReactionError(f"reaction quotient of {rxn.text!r}: mole fractions sum to {worst:.6g}, not 1; "
                            "give mole fractions, or pass normalise=True to divide amounts by their sum")
    P = np.asarray(to_pascal(P), dtype=float)
    lnQ = np.zeros(np.broadcast(P, *y.values()).shape)
    for sp, nu in zip(rxn.species, rxn.coefficients):
        if sp.is_gas:
            with np.errstate(divide="ignore"):
                lnQ = lnQ + nu * np.log(y[sp.name] * P / P_STANDARD)
    return _float_or_array(np.exp(lnQ))


def shift_direction(Q, K, rtol: float = 1e-6):
    """Which way a mixture will react: ``"forward"`` (Q < K), ``"reverse"`` (Q > K) or
    ``"at equilibrium"`` (Q = K within ``rtol``).

    Q and K may be floats or arrays (broadcast); an array gives an array of strings.
    NaN in either is refused (ValueError): no direction is given for an undefined quotient.

    >>> shift_direction(0.5, 2.0)
    'forward'
    >>> shift_direction([0.5, 2.0, 4.0], 2.0).tolist()
    ['forward', 'at equilibrium', 'reverse']
    """
    Q_arr, K_arr = np.asarray(Q, dtype=float), np.asarray(K, dtype=float)
    if np.any(np.isnan(Q_arr)) or np.any(np.isnan(K_arr)):
        raise ValueError("shift_direction: Q or K is NaN; no direction can be given")
    equal = np.abs(Q_arr - K_arr) <= rtol * np.maximum(np.abs(K_arr), 1e-300)
    out = np.where(equal, "at equilibrium", np.where(Q_arr < K_arr, "forward", "reverse"))
    return str(out) if out.ndim == 0 else out.astype(object)


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
