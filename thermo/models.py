"""Standard-state thermodynamic models of a single species, vectorised over temperature.

Two models:

* :class:`Nasa7Polynomial` -- the NASA 7-coefficient polynomials of
  B. J. McBride, S. Gordon, M. A. Reno, *Coefficients for Calculating Thermodynamic and
  Transport Properties of Individual Species*, NASA TM-4513 (1993), over any number of
  contiguous temperature ranges::

      cp/R  = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4
      h/RT  = a1 + a2 T/2 + a3 T^2/3 + a4 T^3/4 + a5 T^4/5 + a6/T
      s/R   = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7

* :class:`FormationDataModel` -- user data: standard enthalpy of formation and standard
  entropy at 298.15 K plus a heat-capacity polynomial
  ``cp = c0 + c1 T + c2 T^2 + c3 T^3 + c_2/T^2`` [J/(mol K)] (constant cp: only ``c0``),
  integrated exactly (Kirchhoff's law for h, ``\\int cp/T dT`` for s).

All functions take T [K] as float or ndarray and return the same shape.  Models know
their valid range; extrapolation is the caller's business (see
:meth:`eqdesign.thermo.species.Species.check_temperature`).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: Molar gas constant [J/(mol K)], exact in the 2019 SI (CODATA 2018).
R = 8.314462618
#: Reference temperature of formation data [K].
T_REF = 298.15
#: The standard-state pressure used throughout eqdesign [Pa] (1 bar, IUPAC).
P_STANDARD = 1.0e5


def nasa7_heat_capacity_enthalpy(a, T):
    """cp/R and h/RT from NASA 7-coefficient rows ``a`` (..., 7) at T [K] (broadcast with
    ``a[..., 0]``), in Horner form; the one place these polynomials are written.

    ``cp/R = a1 + a2 T + a3 T² + a4 T³ + a5 T⁴``;
    ``h/RT = a1 + a2 T/2 + a3 T²/3 + a4 T³/4 + a5 T⁴/5 + a6/T`` (NASA TM-4513, 1993).
    """
    a1, a2, a3, a4, a5, a6 = (a[..., k] for k in range(6))
    cp = a1 + T * (a2 + T * (a3 + T * (a4 + T * a5)))
    h = a1 + T * (a2 / 2 + T * (a3 / 3 + T * (a4 / 4 + T * a5 / 5))) + a6 / T
    return cp, h


def nasa7_entropy(a, T):
    """s/R = a1 ln T + a2 T + a3 T²/2 + a4 T³/3 + a5 T⁴/4 + a7 from rows ``a`` (..., 7) at T [K]."""
    a1, a2, a3, a4, a5, a7 = (a[..., k] for k in (0, 1, 2, 3, 4, 6))
    return a1 * np.log(T) + T * (a2 + T * (a3 / 2 + T * (a4 / 3 + T * a5 / 4))) + a7


def nasa7_gibbs_RT(a, T):
    """g°/RT = h/RT − s/R from rows ``a`` (..., 7) at T [K], evaluated directly (Horner form):
    ``a1 (1 − ln T) − a2 T/2 − a3 T²/6 − a4 T³/12 − a5 T⁴/20 + a6/T − a7``."""
    a1, a2, a3, a4, a5, a6, a7 = (a[..., k] for k in range(7))
    poly = (((-a5 / 20.0 * T - a4 / 12.0) * T - a3 / 6.0) * T - a2 / 2.0) * T
    return a1 * (1.0 - np.log(T)) + poly + a6 / T - a7


@dataclass(frozen=True)
class Nasa7Polynomial:
    """NASA 7-coefficient polynomial over contiguous temperature ranges.

    Parameters
    ----------
    T_bounds : tuple[float, ...]
        Range boundaries [K], ``n + 1`` increasing values for ``n`` ranges.
    coefficients : ndarray, shape (n, 7)
        ``a1..a7`` of each range, lowest range first (NASA TM-4513 form).

    Examples
    --------
    Nitrogen, NASA TM-4513 coefficients; S°(298.15 K) = 191.61 J/(mol K) in
    NIST-JANAF (Chase 1998):

    >>> n2 = Nasa7Polynomial((200.0, 1000.0, 6000.0), [
    ...     [3.53100528, -1.23660988e-04, -5.02999433e-07, 2.43530612e-09,
    ...      -1.40881235e-12, -1046.97628, 2.96747038],
    ...     [2.95257637, 1.3969004e-03, -4.92631603e-07, 7.86010195e-11,
    ...      -4.60755204e-15, -923.948688, 5.87188762]])
    >>> round(float(n2.entropy(298.15)), 2)
    191.61
    """

    T_bounds: tuple
    coefficients: np.ndarray = field(repr=False)

    def __post_init__(self):
        bounds = tuple(float(t) for t in self.T_bounds)
        coeffs = np.asarray(self.coefficients, dtype=float)
        if coeffs.ndim != 2 or coeffs.shape[1] != 7:
            raise ValueError("NASA 7-coefficient data need rows of exactly 7 coefficients")
        if len(bounds) != coeffs.shape[0] + 1:
            raise ValueError(f"{coeffs.shape[0]} coefficient rows need {coeffs.shape[0] + 1} "
                             f"temperature bounds, got {len(bounds)}")
        if any(b >= a for a, b in zip(bounds[1:], bounds[:-1])):
            raise ValueError(f"temperature bounds must increase: {bounds}")
        coeffs.setflags(write=False)
        object.__setattr__(self, "T_bounds", bounds)
        object.__setattr__(self, "coefficients", coeffs)

    @property
    def T_min(self) -> float:
        """Lowest temperature of the fit [K]."""
        return self.T_bounds[0]

    @property
    def T_max(self) -> float:
        """Highest temperature of the fit [K]."""
        return self.T_bounds[-1]

    def _rows(self, T: np.ndarray) -> np.ndarray:
        """Coefficient rows for each temperature (end ranges extend outwards)."""
        idx = np.searchsorted(np.asarray(self.T_bounds[1:-1]), T, side="left")
        return self.coefficients[idx]

    def dimensionless(self, T):
        """Return (cp/R, h/RT, s/R) at T [K]; each the shape of T."""
        T = np.asarray(T, dtype=float)
        a = self._rows(T)
        cp, h = nasa7_heat_capacity_enthalpy(a, T)
        return cp, h, nasa7_entropy(a, T)

    def heat_capacity(self, T):
        """Standard molar heat capacity cp° [J/(mol K)] at T [K]."""
        return R * self.dimensionless(T)[0]

    def enthalpy(self, T):
        """Standard molar enthalpy h° [J/mol] (formation basis, h°(298.15 K) = ΔfH°) at T [K]."""
        return R * np.asarray(T, dtype=float) * self.dimensionless(T)[1]

    def entropy(self, T):
        """Standard molar entropy s° [J/(mol K)] at T [K]."""
        return R * self.dimensionless(T)[2]

    def gibbs_RT(self, T):
        """Dimensionless standard Gibbs energy g°/RT = h°/RT - s°/R at T [K].

        Evaluated directly (Horner form) since the solver calls it for every state:
        g/RT = a1 (1 - ln T) - a2 T/2 - a3 T²/6 - a4 T³/12 - a5 T⁴/20 + a6/T - a7.
        """
        T = np.asarray(T, dtype=float)
        return nasa7_gibbs_RT(self.coefficients[0] if len(self.T_bounds) == 2 else self._rows(T), T)

    def shifted_entropy(self, delta_s_R: float) -> "Nasa7Polynomial":
        """Same polynomial with s/R shifted by ``delta_s_R`` (standard-pressure change)."""
        coeffs = np.array(self.coefficients)
        coeffs[:, 6] += delta_s_R
        return Nasa7Polynomial(self.T_bounds, coeffs)


@dataclass(frozen=True)
class Nasa7Table:
    """NASA 7-coefficient polynomials of several species packed into arrays, evaluated over
    species × states in one call: the one batched NASA-7 evaluator of the package.

    Attributes
    ----------
    coefficients : ndarray, shape (n_species, n_max, 7)
        ``a1..a7`` per range, lowest first; rows past a species' last range are zero.
    bounds : ndarray, shape (n_species, n_max + 1)
        Range boundaries [K]; +inf past a species' last boundary.
    n_ranges : ndarray of int64, shape (n_species,)
        Number of ranges per species.

    The arrays are the packed form the compiled fixed-enthalpy kernel takes.  Outside a
    species' range the end ranges extend outwards, as in :class:`Nasa7Polynomial`.

    Examples
    --------
    >>> n2 = Nasa7Polynomial((200.0, 1000.0, 6000.0), [
    ...     [3.53100528, -1.23660988e-04, -5.02999433e-07, 2.43530612e-09,
    ...      -1.40881235e-12, -1046.97628, 2.96747038],
    ...     [2.95257637, 1.3969004e-03, -4.92631603e-07, 7.86010195e-11,
    ...      -4.60755204e-15, -923.948688, 5.87188762]])
    >>> table = Nasa7Table.from_polynomials([n2, n2])
    >>> cp, h, s = table.dimensionless([298.15, 1500.0])
    >>> s.shape, round(float(R * s[0, 0]), 2)
    ((2, 2), 191.61)
    """

    coefficients: np.ndarray = field(repr=False)
    bounds: np.ndarray = field(repr=False)
    n_ranges: np.ndarray

    @classmethod
    def from_polynomials(cls, polynomials) -> "Nasa7Table":
        """Pack a sequence of :class:`Nasa7Polynomial` (one per species)."""
        n_ranges = np.array([p.coefficients.shape[0] for p in polynomials], dtype=np.int64)
        n_max = int(n_ranges.max()) if n_ranges.size else 1
        coeffs = np.zeros((len(polynomials), n_max, 7))
        bounds = np.full((len(polynomials), n_max + 1), np.inf)
        for j, p in enumerate(polynomials):
            coeffs[j, :n_ranges[j]] = p.coefficients
            bounds[j, :n_ranges[j] + 1] = p.T_bounds
        for a in (coeffs, bounds, n_ranges):
            a.setflags(write=False)
        return cls(coeffs, bounds, n_ranges)

    def rows(self, T) -> np.ndarray:
        """Coefficient rows, shape (*T.shape, n_species, 7), for temperatures T [K]."""
        T = np.asarray(T, dtype=float)
        inner = self.bounds[:, 1:-1]                                         # (ns, n_max - 1)
        valid = np.arange(inner.shape[1])[None, :] < (self.n_ranges - 1)[:, None]
        idx = ((T[..., None, None] > inner) & valid).sum(axis=-1)            # (*T.shape, ns)
        return self.coefficients[np.arange(self.n_ranges.size), idx]

    def dimensionless(self, T):
        """(cp/R, h/RT, s/R), each shape (*T.shape, n_species), at T [K]."""
        T = np.asarray(T, dtype=float)
        a, Tc = self.rows(T), T[..., None]
        cp, h = nasa7_heat_capacity_enthalpy(a, Tc)
        return cp, h, nasa7_entropy(a, Tc)

    def heat_capacity_enthalpy(self, T):
        """(cp/R, h/RT), each shape (*T.shape, n_species), at T [K]."""
        T = np.asarray(T, dtype=float)
        return nasa7_heat_capacity_enthalpy(self.rows(T), T[..., None])

    def gibbs_RT(self, T) -> np.ndarray:
        """g°/RT, shape (*T.shape, n_species), at T [K]."""
        T = np.asarray(T, dtype=float)
        return nasa7_gibbs_RT(self.rows(T), T[..., None])


class EnthalpyEntropyModel:
    """Shared part of models that define ``heat_capacity``, ``enthalpy`` and ``entropy``
    directly: the dimensionless forms and g°/RT = h°/RT - s°/R."""

    def dimensionless(self, T):
        """Return (cp/R, h/RT, s/R) at T [K]."""
        T = np.asarray(T, dtype=float)
        return self.heat_capacity(T) / R, self.enthalpy(T) / (R * T), self.entropy(T) / R

    def gibbs_RT(self, T):
        """g°/RT at T [K]."""
        T = np.asarray(T, dtype=float)
        return self.enthalpy(T) / (R * T) - self.entropy(T) / R


@dataclass(frozen=True)
class FormationDataModel(EnthalpyEntropyModel):
    """Species model from ΔfH°(298.15 K), S°(298.15 K) and a cp(T) polynomial.

    ``cp(T) = c0 + c1 T + c2 T^2 + c3 T^3 + cm2 / T^2`` [J/(mol K)], integrated
    exactly from 298.15 K:  h°(T) = ΔfH° + ∫cp dT,  s°(T) = S° + ∫cp/T dT.

    Parameters
    ----------
    formation_enthalpy : float
        ΔfH° at 298.15 K [J/mol].
    entropy_298 : float
        S° at 298.15 K and the standard pressure [J/(mol K)].
    cp_coefficients : tuple of up to 5 floats
        ``(c0, c1, c2, c3, cm2)`` in J/(mol K), J/(mol K^2), ..., J K/mol.  A single value
        means constant cp.
    T_bounds : tuple[float, float]
        Valid range [K].

    Examples
    --------
    Constant cp of 29.1 J/(mol K): h rises by 29.1 * 100 J/mol over 100 K.

    >>> m = FormationDataModel(0.0, 130.68, (29.1,), (298.15, 1000.0))
    >>> round(float(m.enthalpy(398.15)), 6)
    2910.0
    """

    formation_enthalpy: float
    entropy_298: float
    cp_coefficients: tuple
    T_bounds: tuple = (298.15, 1500.0)

    def __post_init__(self):
        c = tuple(float(x) for x in self.cp_coefficients)
        if not 1 <= len(c) <= 5:
            raise ValueError("cp needs 1 to 5 coefficients (c0, c1, c2, c3, c-2)")
        c = c + (0.0,) * (5 - len(c))
        object.__setattr__(self, "cp_coefficients", c)
        bounds = tuple(float(t) for t in self.T_bounds)
        if len(bounds) != 2 or bounds[1] <= bounds[0]:
            raise ValueError(f"T_bounds must be (T_min, T_max) with T_max > T_min, got {bounds}")
        object.__setattr__(self, "T_bounds", bounds)

    @property
    def T_min(self) -> float:
        return self.T_bounds[0]

    @property
    def T_max(self) -> float:
        return self.T_bounds[1]

    def heat_capacity(self, T):
        """cp° [J/(mol K)] at T [K]."""
        T = np.asarray(T, dtype=float)
        c0, c1, c2, c3, cm2 = self.cp_coefficients
        return c0 + c1 * T + c2 * T ** 2 + c3 * T ** 3 + cm2 / T ** 2

    @staticmethod
    def _cp_integral(c, T):
        c0, c1, c2, c3, cm2 = c
        return c0 * T + c1 * T ** 2 / 2 + c2 * T ** 3 / 3 + c3 * T ** 4 / 4 - cm2 / T

    @staticmethod
    def _cp_over_T_integral(c, T):
        c0, c1, c2, c3, cm2 = c
        return c0 * np.log(T) + c1 * T + c2 * T ** 2 / 2 + c3 * T ** 3 / 3 - cm2 / (2 * T ** 2)

    def enthalpy(self, T):
        """h° [J/mol] on the formation basis at T [K]."""
        T = np.asarray(T, dtype=float)
        c = self.cp_coefficients
        return self.formation_enthalpy + self._cp_integral(c, T) - self._cp_integral(c, T_REF)

    def entropy(self, T):
        """s° [J/(mol K)] at T [K]."""
        T = np.asarray(T, dtype=float)
        c = self.cp_coefficients
        return self.entropy_298 + self._cp_over_T_integral(c, T) - self._cp_over_T_integral(c, T_REF)

    def shifted_entropy(self, delta_s_R: float) -> "FormationDataModel":
        """Same model with S° shifted by ``delta_s_R * R`` (standard-pressure change)."""
        return FormationDataModel(self.formation_enthalpy, self.entropy_298 + delta_s_R * R,
                                  self.cp_coefficients, self.T_bounds)
